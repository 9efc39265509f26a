// SPDX-License-Identifier: MIT
// `sigmatube batch` through the library call app::run_batch: a suite of two good
// tiny cases (copies of the invented tests/cases/hcw_minimal.toml) and one broken
// case (an unknown key). The broken case is reported and does not stop the
// others; their result files read back; the JUnit XML and the JSON summary are
// parsed by an independent reader (Python's xml.etree and json, Debian's
// /usr/bin/python3).
#include "sigmatube/app/batch.h"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "python_reference.h"
#include "sigmatube/core/error.h"
#include "sigmatube/result/result_file.h"

namespace fs = std::filesystem;
using namespace sigmatube;

namespace {

const std::string kSource = SIGMATUBE_SOURCE_DIR;

std::string read_text(const fs::path& path) {
  std::ifstream in(path);
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

class Batch : public testing::Test {
 protected:
  void SetUp() override {
    dir_ = fs::path(testing::TempDir()) /
           ("batch_" + std::string(testing::UnitTest::GetInstance()->current_test_info()->name()));
    fs::remove_all(dir_);
    fs::create_directories(dir_ / "cases");
    fs::copy_file(kSource + "/tests/cases/hcw_minimal.toml", dir_ / "cases" / "hcw.toml");
    fs::copy_file(kSource + "/tests/cases/hcw_minimal_plan.csv", dir_ / "cases" / "hcw_minimal_plan.csv");
    // The broken case: the same file with one misspelt key.
    std::string broken = read_text(dir_ / "cases" / "hcw.toml");
    const std::size_t at = broken.find("radius = 20");
    ASSERT_NE(at, std::string::npos);
    broken.replace(at, 6, "radiuss");
    std::ofstream(dir_ / "cases" / "broken.toml") << broken;
    // Tiny sizes so the whole suite runs in seconds: Monte Carlo and surrogate
    // sampling only have to exist, not to resolve anything.
    std::ofstream(dir_ / "suite.toml") << "title = \"invented batch test suite\"\n"
                                          "[defaults]\n"
                                          "samples = 2000\n"
                                          "[[case]]\n"
                                          "file = \"cases/hcw.toml\"\n"
                                          "name = \"first\"\n"
                                          "mc_runs = 40\n"
                                          "[[case]]\n"
                                          "file = \"cases/broken.toml\"\n"
                                          "[[case]]\n"
                                          "file = \"cases/hcw.toml\"\n"
                                          "name = \"second\"\n"
                                          "mc_runs = 30\n"
                                          "max_probability = { keep-out = 1e-4 }\n";
    options_.directory = (dir_ / "out").string();
    options_.junit_path = (dir_ / "junit.xml").string();
    options_.json_path = (dir_ / "summary.json").string();
    options_.quiet = true;
    options_.analysis.threads = 2;
    options_.analysis.progress = false;
  }
  void TearDown() override { fs::remove_all(dir_); }

  std::string suite() const { return (dir_ / "suite.toml").string(); }
  fs::path dir_;
  app::BatchOptions options_;
};

TEST_F(Batch, BrokenCaseIsReportedAndTheOthersRun) {
  const int code = app::run_batch(suite(), options_);
  // Bad input is the worst class of batch.h (2 > 4 > 3 > 1 > 0).
  EXPECT_EQ(code, 2);

  EXPECT_FALSE(fs::exists(dir_ / "out" / "broken.h5"));
  const result::AnalysisResult first = result::read_result_file((dir_ / "out" / "first.h5").string());
  const result::AnalysisResult second = result::read_result_file((dir_ / "out" / "second.h5").string());
  // The per-case overrides of the suite reached the analysis.
  EXPECT_EQ(first.montecarlo.runs, 40);
  EXPECT_EQ(second.montecarlo.runs, 30);
  EXPECT_EQ(first.surrogate.samples, 2000);
  ASSERT_EQ(first.constraints.size(), 2u);
  ASSERT_EQ(second.constraints.size(), 2u);
  EXPECT_EQ(first.constraints[0].name, "keep-out");
  EXPECT_EQ(first.constraints[0].max_probability, 1e-3);
  EXPECT_EQ(second.constraints[0].max_probability, 1e-4);
  EXPECT_EQ(first.surrogate.coefficients.size(), first.time.size());

  // JUnit: 2 good cases × 2 constraints + one <error> test case for the broken
  // one; every attribute count must match the elements (checked by xml.etree).
  const std::vector<double> junit = test::python_numbers(
      "import xml.etree.ElementTree as ET\n"
      "root = ET.parse('" + (dir_ / "junit.xml").string() + "').getroot()\n"
      "suite = root.find('testsuite')\n"
      "cases = suite.findall('testcase')\n"
      "errors = [c for c in cases if c.find('error') is not None]\n"
      "print(len(cases), int(suite.get('tests')), len(errors), int(suite.get('errors')), int(root.get('errors')))\n"
      "print(1 if errors and errors[0].get('classname') == 'broken' else 0)\n"
      "print(1 if 'radiuss' in errors[0].find('error').text else 0)\n"
      "print(sum(1 for c in cases if c.get('classname') == 'first'), "
      "sum(1 for c in cases if c.get('classname') == 'second'))\n");
  ASSERT_EQ(junit.size(), 9u);
  EXPECT_EQ(junit[0], 5);
  EXPECT_EQ(junit[1], 5);
  EXPECT_EQ(junit[2], 1);
  EXPECT_EQ(junit[3], 1);
  EXPECT_EQ(junit[4], 1);
  EXPECT_EQ(junit[5], 1);  // the error names the broken case
  EXPECT_EQ(junit[6], 1);  // and carries the reader's message with the bad key
  EXPECT_EQ(junit[7], 2);
  EXPECT_EQ(junit[8], 2);

  // JSON: three cases in suite order, exit codes per case, the total.
  const std::vector<double> json = test::python_numbers(
      "import json\n"
      "d = json.load(open('" + (dir_ / "summary.json").string() + "'))\n"
      "c = d['cases']\n"
      "print(len(c), d['exit_code'], c[1]['exit_code'])\n"
      "print(1 if c[1]['error']['kind'] == 'bad input' and c[1]['result_path'] is None else 0)\n"
      "print(int(c[0]['exit_code'] == c[0]['summary']['exit_code']), c[2]['summary']['montecarlo']['runs'])\n");
  ASSERT_EQ(json.size(), 6u);
  EXPECT_EQ(json[0], 3);
  EXPECT_EQ(json[1], 2);
  EXPECT_EQ(json[2], 2);
  EXPECT_EQ(json[3], 1);
  EXPECT_EQ(json[4], 1);  // the embedded per-case summary agrees with the case's exit code
  EXPECT_EQ(json[5], 30);
}

TEST_F(Batch, ExistingResultsAreNeverReplacedWithoutForce) {
  options_.junit_path.clear();
  options_.json_path.clear();
  ASSERT_EQ(app::run_batch(suite(), options_), 2);
  const fs::path first = dir_ / "out" / "first.h5";
  const auto written = fs::last_write_time(first);
  const auto size = fs::file_size(first);
  // Without --force every good case is now a bad-input case (its result exists)
  // and is refused before any computation; the files are untouched.
  testing::internal::CaptureStdout();
  options_.quiet = false;
  EXPECT_EQ(app::run_batch(suite(), options_), 2);
  const std::string table = testing::internal::GetCapturedStdout();
  EXPECT_EQ(fs::last_write_time(first), written);
  EXPECT_EQ(fs::file_size(first), size);
  EXPECT_NE(table.find("3 bad input"), std::string::npos) << table;
  // With --force they are replaced by complete results again.
  options_.force = true;
  options_.quiet = true;
  EXPECT_EQ(app::run_batch(suite(), options_), 2);
  EXPECT_NO_THROW(result::read_result_file(first.string()));
}

TEST_F(Batch, DivergingCaseIsANumericalFailureAndDoesNotStopTheNext) {
  // dx/dt = k x^2 with x(0) = 1 blows up at t = 1/k (closed form x = 1/(1 - k t)),
  // inside the plan's 5 s: the nominal run must fail numerically.
  std::ofstream(dir_ / "cases" / "blowup_plan.csv") << "t,x\n0,1\n5,1\n";
  std::ofstream(dir_ / "cases" / "blowup.toml") << "title = \"invented diverging case\"\n"
                                                  "[model]\nstates = [\"x\"]\nparameters = { k = 1.0 }\n"
                                                  "rhs = { x = \"k*x^2\" }\n"
                                                  "[plan]\nfile = \"blowup_plan.csv\"\n"
                                                  "[[uncertain]]\nname = \"k\"\napplies_to = \"parameter.k\"\n"
                                                  "distribution = \"uniform\"\nlow = 0.9\nhigh = 1.1\n";
  std::ofstream(dir_ / "suite2.toml") << "[defaults]\nsamples = 2000\nmc_runs = 20\n"
                                         "[[case]]\nfile = \"cases/blowup.toml\"\n"
                                         "[[case]]\nfile = \"cases/hcw.toml\"\nname = \"after\"\nmc_runs = 20\n";
  const int code = app::run_batch((dir_ / "suite2.toml").string(), options_);
  EXPECT_EQ(code, 4);  // worst of {4, 0 or 1}
  EXPECT_FALSE(fs::exists(dir_ / "out" / "blowup.h5"));
  EXPECT_NO_THROW(result::read_result_file((dir_ / "out" / "after.h5").string()));
  const std::vector<double> json = test::python_numbers(
      "import json\n"
      "c = json.load(open('" + (dir_ / "summary.json").string() + "'))['cases']\n"
      "print(c[0]['exit_code'], int(c[0]['error']['kind'] == 'numerical failure'), int(c[1]['error'] is None))\n");
  ASSERT_EQ(json.size(), 3u);
  EXPECT_EQ(json[0], 4);
  EXPECT_EQ(json[1], 1);
  EXPECT_EQ(json[2], 1);
}

TEST_F(Batch, UnreadableSuiteRunsNothing) {
  std::ofstream(dir_ / "bad_suite.toml") << "[[case]]\nfile = \"cases/nope.toml\"\n";
  EXPECT_THROW(app::run_batch((dir_ / "bad_suite.toml").string(), options_), InputError);
  EXPECT_FALSE(fs::exists(dir_ / "junit.xml"));
  EXPECT_FALSE(fs::exists(dir_ / "out"));
}

}  // namespace
