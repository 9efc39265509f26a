// SPDX-License-Identifier: MIT
#pragma once
// `sigmatube batch`: every case of a suite (casefile/suite_reader.h), one result
// file each, one summary table and JUnit XML. A failing case never stops the
// others; it is reported with its error.
#include <string>

#include "sigmatube/app/analysis.h"

namespace sigmatube::app {

struct BatchOptions {
  AnalysisOptions analysis;
  std::string directory;   // result files go here as <case name>.h5
  bool force = false;
  std::string junit_path;  // optional
  std::string json_path;   // optional
  bool quiet = false;
};

/// Runs the suite and returns the exit code: 0 all cases within bounds, 1 a
/// bound exceeded, 3 a disagreement, 4 a case failed numerically, 2 a case
/// had bad input (the worst of these, in the order 2 > 4 > 3 > 1 > 0).
int run_batch(const std::string& suite_path, const BatchOptions& options);

}  // namespace sigmatube::app
