// SPDX-License-Identifier: MIT
// Provenance: inputs_sha256 covers the case file, the plan it references and the
// values a suite entry overrides; `compare` shows both fingerprints and warns when
// base and candidate have the same inputs. The reference digest is Python's hashlib
// (SHA-256, FIPS 180-4) over the manifest text.
#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <sstream>

#include "python_reference.h"
#include "result_fixture.h"
#include "sigmatube/app/case_loader.h"
#include "sigmatube/casefile/case_reader.h"
#include "sigmatube/result/compare.h"

namespace fs = std::filesystem;

namespace sigmatube {
namespace {

fs::path scratch_copy(const std::string& name) {
  const fs::path folder = fs::temp_directory_path() / ("sigmatube_provenance_" + std::to_string(::getpid()) + "_" + name);
  fs::remove_all(folder);
  fs::create_directories(folder);
  const fs::path source = fs::path(SIGMATUBE_SOURCE_DIR) / "tests" / "cases";
  fs::copy_file(source / "hcw_minimal.toml", folder / "hcw_minimal.toml");
  fs::copy_file(source / "hcw_minimal_plan.csv", folder / "hcw_minimal_plan.csv");
  return folder;
}

TEST(Provenance, InputsFingerprintIsTheSha256OfTheManifest) {
  const fs::path folder = scratch_copy("manifest");
  const auto options = casefile::read_case((folder / "hcw_minimal.toml").string());
  const std::string manifest = app::inputs_manifest(options);
  EXPECT_EQ(manifest.rfind("sigmatube inputs 1\ncase ", 0), 0u) << manifest;
  EXPECT_NE(manifest.find("\nplan "), std::string::npos);
  const fs::path text = folder / "manifest.txt";
  std::ofstream(text, std::ios::binary) << manifest;
  const std::string digest = test::python_output("import hashlib; print(hashlib.sha256(open('" + text.string() +
                                                 "','rb').read()).hexdigest())");
  const app::LoadedCase loaded = app::load_case((folder / "hcw_minimal.toml").string());
  EXPECT_EQ(loaded.inputs_sha256 + "\n", digest);
  fs::remove_all(folder);
}

TEST(Provenance, ChangingOnlyThePlanChangesInputsButNotTheCaseFingerprint) {
  const fs::path folder = scratch_copy("plan");
  const std::string case_path = (folder / "hcw_minimal.toml").string();
  auto options = casefile::read_case(case_path);
  const std::string before = app::inputs_manifest(options);
  {
    std::ofstream plan(folder / "hcw_minimal_plan.csv", std::ios::app);
    plan << "\n";  // one more byte in the plan (hashed, not parsed here), same case file
  }
  const std::string after = app::inputs_manifest(options);
  EXPECT_NE(before, after);
  // The case line (the case file's own SHA-256, = case_sha256) is the same.
  EXPECT_EQ(before.substr(0, before.find("\nplan ")), after.substr(0, after.find("\nplan ")));
  // An override (as a suite entry applies it) changes the inputs too.
  options.constraints.at(0).max_probability *= 0.5;
  EXPECT_NE(app::inputs_manifest(options), after);
  fs::remove_all(folder);
}

TEST(Provenance, CompareShowsBothFingerprintsAndWarnsOnSameInputs) {
  result::AnalysisResult base = result::testing::make_fixture_result();
  result::AnalysisResult candidate = base;
  base.inputs_sha256 = std::string(64, 'a');
  candidate.inputs_sha256 = std::string(64, 'a');
  auto report = result::compare_results(base, candidate, {});
  EXPECT_TRUE(report.same_inputs);
  std::string text = result::compare_text(report);
  EXPECT_NE(text.find("base inputs sha256"), std::string::npos) << text;
  EXPECT_NE(text.find("WARNING: base and candidate have the same inputs"), std::string::npos) << text;
  EXPECT_NE(result::compare_json(report).find("\"same_inputs\": true"), std::string::npos);
  candidate.inputs_sha256 = std::string(64, 'b');
  report = result::compare_results(base, candidate, {});
  EXPECT_FALSE(report.same_inputs);
  text = result::compare_text(report);
  EXPECT_EQ(text.find("WARNING: base and candidate have the same inputs"), std::string::npos) << text;
  EXPECT_NE(text.find(std::string(64, 'b')), std::string::npos);
}

}  // namespace
}  // namespace sigmatube
