// SPDX-License-Identifier: MIT
// Suite files for `sigmatube batch`, written to a temporary folder beside a copy of
// the invented case tests/cases/hcw_minimal.toml.
#include "sigmatube/casefile/suite_reader.h"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <string>

#include "sigmatube/casefile/case_reader.h"

namespace fs = std::filesystem;
using namespace sigmatube;
using namespace sigmatube::casefile;

namespace {

const std::string kSource = SIGMATUBE_SOURCE_DIR;

class SuiteReader : public testing::Test {
 protected:
  void SetUp() override {
    dir_ = fs::path(testing::TempDir()) / ("suite_reader_" + std::string(
                                               testing::UnitTest::GetInstance()->current_test_info()->name()));
    fs::remove_all(dir_);
    fs::create_directories(dir_ / "cases");
    fs::copy_file(kSource + "/tests/cases/hcw_minimal.toml", dir_ / "cases" / "hcw.toml");
    fs::copy_file(kSource + "/tests/cases/hcw_minimal_plan.csv", dir_ / "cases" / "hcw_minimal_plan.csv");
    fs::copy_file(kSource + "/tests/cases/hcw_minimal_plan.csv", dir_ / "other_plan.csv");
  }
  std::string write(const std::string& text) {
    const fs::path path = dir_ / "suite.toml";
    std::ofstream(path) << text;
    return path.string();
  }
  // Expects read_suite to fail at `line` and `key` with `fragment` in the message.
  void expect_error(const std::string& text, int line, const std::string& key, const std::string& fragment) {
    const std::string path = write(text);
    try {
      read_suite(path);
      FAIL() << "no exception for:\n" << text;
    } catch (const InputError& error) {
      const std::string what = error.what();
      SCOPED_TRACE(what);
      EXPECT_EQ(what.find('\n'), std::string::npos);
      EXPECT_EQ(error.where().file, path);
      EXPECT_EQ(error.where().line, line);
      EXPECT_EQ(error.where().key, key);
      EXPECT_NE(what.find(fragment), std::string::npos);
    }
  }
  fs::path dir_;
};

TEST_F(SuiteReader, ReadsCasesWithOverridesAndDefaults) {
  const std::string path = write(
      "title = \"invented release suite\"\n"
      "[defaults]\n"
      "mc_runs = 100\n"
      "samples = 5000\n"
      "[[case]]\n"
      "file = \"cases/hcw.toml\"\n"
      "[[case]]\n"
      "file = \"cases/hcw.toml\"\n"
      "name = \"tight\"\n"
      "plan = \"other_plan.csv\"\n"
      "samples = 777\n"
      "max_probability = { keep-out = 1e-4, thrust-ay = 0.05 }\n");
  const SuiteOptions suite = read_suite(path);
  EXPECT_EQ(suite.title, "invented release suite");
  ASSERT_EQ(suite.cases.size(), 2u);
  EXPECT_EQ(suite.cases[0].name, "hcw");  // the case file's stem
  EXPECT_TRUE(fs::equivalent(suite.cases[0].path, dir_ / "cases" / "hcw.toml"));
  EXPECT_EQ(suite.cases[1].name, "tight");
  EXPECT_EQ(suite.cases[1].where.line, 7);
  ASSERT_EQ(suite.cases[1].max_probability.size(), 2u);
  EXPECT_EQ(suite.cases[1].max_probability[0].name, "keep-out");

  const CaseOptions first = read_suite_case(suite, 0);
  // The case file sets [montecarlo] runs = 500 itself, so the suite default does not
  // apply; it leaves [surrogate] samples out, so the suite default does.
  EXPECT_EQ(first.montecarlo.runs, 500);
  EXPECT_EQ(first.surrogate.samples, 5000);
  EXPECT_EQ(first.constraints[0].max_probability, 1e-3);
  EXPECT_TRUE(fs::equivalent(first.plan.path, dir_ / "cases" / "hcw_minimal_plan.csv"));

  const CaseOptions second = read_suite_case(suite, 1);
  EXPECT_EQ(second.surrogate.samples, 777);  // the entry beats [defaults]
  EXPECT_EQ(second.constraints[0].max_probability, 1e-4);
  EXPECT_EQ(second.constraints[1].max_probability, 0.05);
  EXPECT_EQ(second.plan.file, "other_plan.csv");
  EXPECT_TRUE(fs::equivalent(second.plan.path, dir_ / "other_plan.csv"));
}

TEST_F(SuiteReader, UnknownConstraintInOverrideNamesSuiteLineAndSuggests) {
  const std::string path = write("[[case]]\nfile = \"cases/hcw.toml\"\nmax_probability = { keep_out = 1e-4 }\n");
  const SuiteOptions suite = read_suite(path);
  try {
    read_suite_case(suite, 0);
    FAIL() << "no exception";
  } catch (const InputError& error) {
    EXPECT_EQ(error.where().file, path);
    EXPECT_EQ(error.where().line, 3);
    EXPECT_EQ(error.where().key, "case[1].max_probability.keep_out");
    EXPECT_NE(std::string(error.what()).find("did you mean 'keep-out'?"), std::string::npos);
  }
}

TEST_F(SuiteReader, RejectsUnknownKeyWithSuggestion) {
  expect_error("[[case]]\nfile = \"cases/hcw.toml\"\nplna = \"other_plan.csv\"\n", 3, "case[1].plna",
               "did you mean 'plan'?");
}

TEST_F(SuiteReader, RejectsUnknownDefaultsKey) {
  expect_error("[defaults]\nthreads = 4\n[[case]]\nfile = \"cases/hcw.toml\"\n", 2, "defaults.threads", "unknown key");
}

TEST_F(SuiteReader, RejectsMissingCaseFile) {
  expect_error("[[case]]\nfile = \"cases/nope.toml\"\n", 2, "case[1].file", "not found");
}

TEST_F(SuiteReader, RejectsMissingPlanOverride) {
  expect_error("[[case]]\nfile = \"cases/hcw.toml\"\nplan = \"nope.csv\"\n", 3, "case[1].plan", "not found");
}

TEST_F(SuiteReader, RejectsDuplicateNames) {
  expect_error("[[case]]\nfile = \"cases/hcw.toml\"\n[[case]]\nfile = \"cases/hcw.toml\"\n", 4, "case[2].file",
               "duplicate case name 'hcw'");
}

TEST_F(SuiteReader, RejectsProbabilityOutsideOpenUnitInterval) {
  expect_error("[[case]]\nfile = \"cases/hcw.toml\"\nmax_probability = { keep-out = 0 }\n", 3,
               "case[1].max_probability.keep-out", "must be in (0, 1)");
}

TEST_F(SuiteReader, RejectsNegativeRunsAndWrongTypes) {
  expect_error("[defaults]\nmc_runs = -1\n[[case]]\nfile = \"cases/hcw.toml\"\n", 2, "defaults.mc_runs", "must be ≥ 0");
  expect_error("[[case]]\nfile = \"cases/hcw.toml\"\nsamples = \"many\"\n", 3, "case[1].samples", "expected an integer");
}

TEST_F(SuiteReader, RejectsSuiteWithoutCases) {
  expect_error("title = \"empty\"\n", 0, "case", "at least one [[case]]");
}

TEST_F(SuiteReader, RejectsSyntaxErrorWithLine) {
  expect_error("[[case]]\nfile = cases/hcw.toml\n", 2, "", "TOML syntax error");
}

TEST_F(SuiteReader, RejectsNameThatCannotBeAFileName) {
  expect_error("[[case]]\nfile = \"cases/hcw.toml\"\nname = \"a/b\"\n", 3, "case[1].name", "cannot name a result file");
}

}  // namespace
