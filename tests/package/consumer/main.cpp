// SPDX-License-Identifier: MIT
// Loads a case and runs the whole analysis through the installed library, then
// prints one line per constraint: name, path probability, margin (%.17g).
//   consumer CASE.toml
#include <cstdio>
#include <exception>

#include "sigmatube/app/analysis.h"
#include "sigmatube/app/case_loader.h"
#include "sigmatube/core/error.h"

int main(int argc, char** argv) {
  if (argc != 2) {
    std::fprintf(stderr, "usage: consumer CASE.toml\n");
    return 2;
  }
  try {
    const sigmatube::app::LoadedCase loaded = sigmatube::app::load_case(argv[1]);
    sigmatube::app::AnalysisOptions options;
    options.threads = 1;
    options.mc_runs = 0;
    options.progress = false;
    const sigmatube::result::AnalysisResult result = sigmatube::app::analyze_case(loaded, options);
    for (const auto& c : result.constraints)
      std::printf("%s %.17g %.17g\n", c.name.c_str(), c.path_probability, c.margin);
    return 0;
  } catch (const sigmatube::InputError& error) {
    std::fprintf(stderr, "%s\n", error.what());
    return 2;
  } catch (const std::exception& error) {
    std::fprintf(stderr, "%s\n", error.what());
    return 4;
  }
}
