// SPDX-License-Identifier: MIT
#include "sigmatube/result/compare.h"

#include <gtest/gtest.h>

#include <fstream>

#include "result_fixture.h"
#include "sigmatube/core/error.h"
#include "sigmatube/result/proportion_test.h"
#include "sigmatube/result/result_file.h"

namespace sigmatube::result {
namespace {

using testing::make_fixture_result;
using testing::run_python;
using testing::TemporaryFolder;

// SciPy and this library evaluate the same closed forms in double precision;
// agreement to 1e-10 leaves room for the different erfc/hypergeometric codes.
constexpr double kPValueTolerance = 1e-10;

// A result whose keep-out constraint had `violations` path violations in `runs` Monte Carlo runs.
AnalysisResult with_keep_out_count(long long violations, long long runs = 20000) {
  AnalysisResult r = make_fixture_result();
  r.montecarlo.runs = runs;
  for (auto& c : r.constraints) {
    c.max_probability = 1e-2;
    c.within_bound = true;
  }
  auto& ko = r.constraints[0];
  ko.montecarlo.path_violations = violations;
  ko.montecarlo.path_probability = double(violations) / double(runs);
  ko.path_probability = ko.montecarlo.path_probability;
  // The corridor is not under test here: make it identical and harmless in every result.
  r.constraints[1].scope = "path";
  r.constraints[1].montecarlo.path_violations = 3;
  r.constraints[1].montecarlo.path_probability = 3.0 / double(runs);
  r.constraints[1].path_probability = 3.0 / double(runs);
  return r;
}

const CompareRow& row(const CompareReport& report, const std::string& name) {
  for (const auto& r : report.rows)
    if (r.name == name) return r;
  throw std::logic_error("no row " + name);
}

TEST(Compare, ResultAgainstItselfIsNoRegression) {
  const AnalysisResult r = with_keep_out_count(5);
  const CompareReport report = compare_results(r, r, CompareOptions{});
  EXPECT_FALSE(report.regression);
  ASSERT_EQ(report.rows.size(), 2u);
  for (const auto& row : report.rows) {
    EXPECT_EQ(row.source, "monte-carlo");
    EXPECT_EQ(row.increase, 0.0);
    EXPECT_FALSE(row.regression);
  }
}

TEST(Compare, RiseFrom5To60Of20000IsARegressionNamingTheConstraint) {
  const CompareReport report = compare_results(with_keep_out_count(5), with_keep_out_count(60), CompareOptions{});
  EXPECT_TRUE(report.regression);
  const CompareRow& ko = row(report, "keep-out");
  EXPECT_TRUE(ko.regression);
  EXPECT_TRUE(ko.significant);
  EXPECT_EQ(ko.test, "pooled z");
  EXPECT_FALSE(row(report, "corridor").regression);
  const std::string text = compare_text(report);
  EXPECT_NE(text.find("REGRESSION keep-out:"), std::string::npos) << text;
  EXPECT_EQ(text.find("REGRESSION corridor"), std::string::npos) << text;
  EXPECT_NE(text.find("release gate: REGRESSION (1 constraint)"), std::string::npos) << text;
}

TEST(Compare, RiseFrom5To7Of20000IsWithinNoise) {
  const CompareReport report = compare_results(with_keep_out_count(5), with_keep_out_count(7), CompareOptions{});
  const CompareRow& ko = row(report, "keep-out");
  EXPECT_GT(ko.increase, ko.allowed_increase);  // the rise is larger than allowed ...
  EXPECT_FALSE(ko.significant);                 // ... but not distinguishable from noise
  EXPECT_FALSE(report.regression);
  EXPECT_NE(compare_text(report).find("release gate: pass"), std::string::npos);
}

TEST(ProportionTest, PooledZMatchesSciPyNormalTail) {
  TemporaryFolder folder;
  struct Case {
    long long xb, nb, xc, nc;
  };
  for (const Case c : {Case{5, 20000, 60, 20000}, Case{5, 20000, 7, 20000}, Case{40, 10000, 25, 12000},
                       Case{130, 20000, 170, 15000}}) {
    const ProportionTest t = pooled_z_test(c.xb, c.nb, c.xc, c.nc);
    // Reference: scipy.stats.norm.sf of the pooled z computed in Python.
    const std::string out = run_python(
        "from scipy.stats import norm\n"
        "import math\n"
        "xb, nb, xc, nc = " +
            std::to_string(c.xb) + ", " + std::to_string(c.nb) + ", " + std::to_string(c.xc) + ", " +
            std::to_string(c.nc) +
            "\n"
            "p = (xb + xc) / (nb + nc)\n"
            "z = (xc / nc - xb / nb) / math.sqrt(p * (1 - p) * (1 / nb + 1 / nc))\n"
            "print(repr(z), repr(norm.sf(z)))\n",
        folder.path);
    std::istringstream in(out);
    double z = 0, p = 0;
    in >> z >> p;
    EXPECT_NEAR(t.z, z, 1e-12 * std::max(1.0, std::fabs(z)));
    EXPECT_NEAR(t.p_value, p, kPValueTolerance) << c.xb << " " << c.xc;
    EXPECT_NEAR(t.p_value, p, 1e-9 * p);
  }
}

TEST(ProportionTest, FisherExactMatchesSciPyFisherExactGreater) {
  TemporaryFolder folder;
  struct Case {
    long long xb, nb, xc, nc;
  };
  for (const Case c : {Case{0, 1000, 3, 1000}, Case{1, 5000, 6, 5000}, Case{2, 200, 2, 300}, Case{0, 100, 0, 100},
                       Case{4, 20000, 1, 20000}}) {
    const ProportionTest t = fisher_exact_greater(c.xb, c.nb, c.xc, c.nc);
    // Reference: scipy.stats.fisher_exact([[x_c, n_c − x_c], [x_b, n_b − x_b]], alternative="greater").
    const std::string out = run_python(
        "from scipy.stats import fisher_exact\n"
        "xb, nb, xc, nc = " +
            std::to_string(c.xb) + ", " + std::to_string(c.nb) + ", " + std::to_string(c.xc) + ", " +
            std::to_string(c.nc) +
            "\n"
            "print(repr(fisher_exact([[xc, nc - xc], [xb, nb - xb]], alternative='greater')[1]))\n",
        folder.path);
    const double p = std::stod(out);
    EXPECT_NEAR(t.p_value, p, kPValueTolerance) << c.xb << "/" << c.nb << " vs " << c.xc << "/" << c.nc;
  }
}

TEST(ProportionTest, SmallExpectedCountsUseFisherLargeOnesTheZTest) {
  // Cochran's rule (common practice): exact test when an expected cell count is below 5.
  EXPECT_EQ(one_sided_increase_test(0, 1000, 3, 1000).method, "Fisher exact");
  EXPECT_EQ(one_sided_increase_test(5, 20000, 7, 20000).method, "pooled z");  // expected 6 per group
  EXPECT_THROW(pooled_z_test(3, 2, 0, 10), std::invalid_argument);
}

TEST(ProportionTest, NormalDifferenceMatchesSciPy) {
  TemporaryFolder folder;
  const ProportionTest t = normal_difference_test(2.0e-3, 1.4e-4, 2.5e-3, 1.6e-4);
  // Reference: scipy.stats.norm.sf((pc − pb)/hypot(se_b, se_c)).
  const double p =
      std::stod(run_python("from scipy.stats import norm\nimport math\n"
                           "print(repr(norm.sf((2.5e-3 - 2.0e-3) / math.hypot(1.4e-4, 1.6e-4))))\n",
                           folder.path));
  EXPECT_NEAR(t.p_value, p, kPValueTolerance);
}

TEST(Compare, WithoutMonteCarloUsesSurrogateStandardErrors) {
  AnalysisResult base = make_fixture_result(false), candidate = make_fixture_result(false);
  auto& b = base.constraints[0];
  auto& c = candidate.constraints[0];
  b.path_probability = 2.0e-3, b.path_standard_error = 1.4e-4;
  c.path_probability = 2.5e-3, c.path_standard_error = 1.6e-4;
  const CompareReport report = compare_results(base, candidate, CompareOptions{});
  const CompareRow& ko = row(report, "keep-out");
  EXPECT_EQ(ko.source, "surrogate");
  EXPECT_EQ(ko.test, "normal z");
  EXPECT_NEAR(ko.z, 0.5e-3 / std::hypot(1.4e-4, 1.6e-4), 1e-12);
  EXPECT_TRUE(ko.significant);  // z ≈ 2.35
  EXPECT_TRUE(ko.regression);   // and 5e-4 > max(1e-6, 0.1 · 2e-3)
}

TEST(Compare, CandidateAboveItsBoundOrBelowItsMarginRegresses) {
  const AnalysisResult r = with_keep_out_count(5);
  CompareOptions o;
  o.max_probability_override["keep-out"] = 1e-4;  // 5/20000 = 2.5e-4 > 1e-4
  EXPECT_TRUE(row(compare_results(r, r, o), "keep-out").regression);
  CompareOptions m;
  m.min_margin = r.constraints[0].margin + 1.0;
  const CompareReport report = compare_results(r, r, m);
  EXPECT_TRUE(row(report, "keep-out").regression);
  EXPECT_NE(row(report, "keep-out").reasons.at(0).find("margin"), std::string::npos);
}

TEST(Compare, ConstraintMissingInTheCandidateIsReportedAsRegression) {
  const AnalysisResult base = with_keep_out_count(5);
  AnalysisResult candidate = base;
  candidate.constraints.pop_back();
  const CompareReport report = compare_results(base, candidate, CompareOptions{});
  EXPECT_TRUE(report.regression);
  EXPECT_FALSE(row(report, "corridor").in_candidate);
  EXPECT_TRUE(row(report, "corridor").regression);
  // And the other way round: a new constraint is only checked against its own bound.
  const CompareReport reverse = compare_results(candidate, base, CompareOptions{});
  EXPECT_FALSE(row(reverse, "corridor").in_base);
  EXPECT_EQ(row(reverse, "corridor").source, "monte-carlo");
  EXPECT_FALSE(reverse.regression);
}

TEST(Compare, SurvivesARoundTripThroughResultFiles) {
  TemporaryFolder folder;
  const std::string a = (folder.path / "base.h5").string(), b = (folder.path / "cand.h5").string();
  write_result_file(with_keep_out_count(5), a, false);
  write_result_file(with_keep_out_count(60), b, false);
  const CompareReport report = compare_results(read_result_file(a), read_result_file(b), CompareOptions{});
  EXPECT_TRUE(row(report, "keep-out").regression);
  EXPECT_EQ(row(report, "keep-out").candidate_count, 60);
}

TEST(CompareJUnit, ParsesAndHasOneFailurePerRegressedConstraint) {
  TemporaryFolder folder;
  AnalysisResult candidate = with_keep_out_count(60);
  candidate.constraints[1].montecarlo.path_violations = 90;  // corridor regresses too
  candidate.title = "cand <&> \"quoted\"";
  const CompareReport report = compare_results(with_keep_out_count(5), candidate, CompareOptions{});
  const std::string xml = compare_junit(report, "release-gate & co");
  std::ofstream(folder.path / "junit.xml") << xml;
  // Reference parser: Python's xml.etree.ElementTree.
  const std::string out = run_python(
      "import xml.etree.ElementTree as ET\n"
      "root = ET.parse('" +
          (folder.path / "junit.xml").string() +
          "').getroot()\n"
          "cases = root.findall('.//testcase')\n"
          "failed = [c.get('name') for c in cases if c.find('failure') is not None]\n"
          "suite = root.find('testsuite')\n"
          "print(len(cases), ','.join(failed), suite.get('failures'), suite.get('name'), cases[0].get('classname'))\n",
      folder.path);
  EXPECT_EQ(out, "2 keep-out,corridor 2 release-gate & co cand <&> \"quoted\"\n");
}

TEST(CompareJson, ParsesWithPythonAndWritesNaNAsNull) {
  TemporaryFolder folder;
  AnalysisResult base = with_keep_out_count(5);
  base.constraints[0].margin = kNaN;
  const CompareReport report = compare_results(base, with_keep_out_count(60), CompareOptions{});
  std::ofstream(folder.path / "c.json") << compare_json(report);
  const std::string out = run_python(
      "import json\n"
      "d = json.load(open('" +
          (folder.path / "c.json").string() +
          "'))\n"
          "k = d['constraints'][0]\n"
          "print(d['regression'], d['exit_code'], k['name'], k['base_margin'] is None, k['candidate_count'])\n",
      folder.path);
  EXPECT_EQ(out, "True 1 keep-out True 60\n");
}

// ---------------------------------------------------------------- budget file

std::string write_budget(const TemporaryFolder& folder, const std::string& text) {
  const auto path = folder.path / "budget.toml";
  std::ofstream(path) << text;
  return path.string();
}

TEST(Budget, ReadsDefaultsAndPerConstraintLimits) {
  TemporaryFolder folder;
  const CompareOptions o = read_budget(write_budget(folder,
                                                    "[defaults]\n"
                                                    "max_increase = 1e-5\n"
                                                    "max_increase_ratio = 0.5\n"
                                                    "significance = 0.01\n"
                                                    "min_margin = 0.5\n"
                                                    "[constraint.keep-out]\n"
                                                    "max_probability = 1e-3\n"
                                                    "max_increase = 2e-4\n"
                                                    "min_margin = 2\n"));
  EXPECT_EQ(o.max_absolute_increase, 1e-5);
  EXPECT_EQ(o.max_increase_ratio, 0.5);
  EXPECT_EQ(o.significance, 0.01);
  EXPECT_EQ(o.min_margin, 0.5);
  EXPECT_EQ(o.max_probability_override.at("keep-out"), 1e-3);
  EXPECT_EQ(o.max_absolute_increase_override.at("keep-out"), 2e-4);
  EXPECT_EQ(o.min_margin_override.at("keep-out"), 2.0);
}

TEST(Budget, UnknownKeyIsAnInputErrorWithLineAndKey) {
  TemporaryFolder folder;
  const std::string path = write_budget(folder,
                                        "[defaults]\n"
                                        "significance = 0.05\n"
                                        "\n"
                                        "[constraint.keep-out]\n"
                                        "max_probabilty = 1e-3\n");
  try {
    read_budget(path);
    FAIL() << "no error";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, path);
    EXPECT_EQ(e.where().line, 5);
    EXPECT_EQ(e.where().key, "constraint.keep-out.max_probabilty");
  }
}

TEST(Budget, UnknownTableAndBadValuesAreInputErrors) {
  TemporaryFolder folder;
  try {
    read_budget(write_budget(folder, "# budget\n[limits]\nx = 1\n"));
    FAIL() << "no error";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().key, "limits");
    EXPECT_EQ(e.where().line, 2);
  }
  try {
    read_budget(write_budget(folder, "[defaults]\nsignificance = 1.5\n"));
    FAIL() << "no error";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().key, "defaults.significance");
    EXPECT_EQ(e.where().line, 2);
  }
  try {
    read_budget(write_budget(folder, "[defaults]\nmin_margin = \"big\"\n"));
    FAIL() << "no error";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().key, "defaults.min_margin");
  }
  try {
    read_budget(write_budget(folder, "[defaults\nmin_margin = 1\n"));
    FAIL() << "no error";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().line, 1);
  }
  EXPECT_THROW(read_budget((folder.path / "absent.toml").string()), InputError);
}

}  // namespace
}  // namespace sigmatube::result
