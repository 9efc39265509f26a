// SPDX-License-Identifier: MIT
#include "sigmatube/result/summary_text.h"

#include <gtest/gtest.h>

#include "result_fixture.h"
#include "sigmatube/result/number_format.h"
#include "sigmatube/result/result_file.h"

namespace sigmatube::result {
namespace {

using testing::make_fixture_result;

// Lines of `text` that start (after indentation) with `first_word`.
std::vector<std::string> lines_starting_with(const std::string& text, const std::string& first_word) {
  std::vector<std::string> out;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) {
    const auto start = line.find_first_not_of(' ');
    if (start != std::string::npos && line.compare(start, first_word.size() + 1, first_word + " ") == 0)
      out.push_back(line);
  }
  return out;
}

TEST(NumberFormat, PrintsProbabilitiesInScientificNotationAndNaNAsDash) {
  // The C library's %e always prints at least two exponent digits (ISO C 7.21.6.1).
  EXPECT_EQ(format_probability(3.2e-4), "3.2e-04");
  EXPECT_EQ(format_probability(0.0), "0");
  EXPECT_EQ(format_probability(kNaN), "\xE2\x80\x94");
  EXPECT_EQ(format_value(kNaN), "\xE2\x80\x94");
  EXPECT_EQ(format_value(-12.5), "-12.5");
}

TEST(SummaryText, HasOneTableRowPerConstraintWithBoundAndVerdict) {
  const AnalysisResult r = make_fixture_result();
  const std::string text = summary_text(r);
  const auto keep_out = lines_starting_with(text, "keep-out");
  const auto corridor = lines_starting_with(text, "corridor");
  ASSERT_GE(keep_out.size(), 1u) << text;
  ASSERT_GE(corridor.size(), 1u) << text;
  // The first such line is the table row: bound, surrogate and Monte Carlo numbers, verdict.
  EXPECT_NE(keep_out[0].find(format_probability(r.constraints[0].max_probability)), std::string::npos);
  EXPECT_NE(keep_out[0].find(format_probability(r.constraints[0].path_probability)), std::string::npos);
  EXPECT_NE(keep_out[0].find(format_probability(r.constraints[0].montecarlo.path_interval[1])), std::string::npos);
  EXPECT_NE(keep_out[0].find("within"), std::string::npos);
  EXPECT_NE(corridor[0].find(format_probability(r.constraints[1].worst_pointwise_probability)), std::string::npos);
  EXPECT_NE(corridor[0].find("EXCEEDED"), std::string::npos);
  EXPECT_NE(text.find("exit 1: bound exceeded by corridor"), std::string::npos);
  EXPECT_NE(text.find(cautions_text()), std::string::npos);
  EXPECT_NE(text.find(r.case_sha256), std::string::npos);
}

TEST(SummaryText, ShowsMissingNumbersAsDash) {
  AnalysisResult r = make_fixture_result();
  r.constraints[0].margin = kNaN;
  const std::string text = summary_text(r);
  const auto row = lines_starting_with(text, "keep-out").at(0);
  EXPECT_NE(row.find("\xE2\x80\x94"), std::string::npos) << row;
  EXPECT_EQ(text.find("nan"), std::string::npos);
}

TEST(SummaryText, CautionsNameTheModelTheSurrogateLimitsTheCrossCheckAndTheAuthority) {
  const std::string c = cautions_text();
  for (const char* phrase : {"model", "distributions", "saturation", "switching", "contact", "Monte Carlo", "safety",
                             "regulations", "authority", "not this"}) {
    // Words may wrap onto the next line; compare with newlines as spaces.
    std::string flat = c;
    std::replace(flat.begin(), flat.end(), '\n', ' ');
    EXPECT_NE(flat.find(phrase), std::string::npos) << phrase;
  }
  std::istringstream lines(c);
  for (std::string line; std::getline(lines, line);) EXPECT_LE(display_width(line), 78u) << line;
}

TEST(SummaryText, WarnsWhenTheSurrogateToleranceWasNotMet) {
  AnalysisResult r = make_fixture_result();
  EXPECT_EQ(summary_text(r).find("WARNING"), std::string::npos);
  r.surrogate.tolerance_met = false;
  EXPECT_NE(summary_text(r).find("WARNING"), std::string::npos);
}

TEST(SummaryText, ReportsDisagreementAsExitThreeWithItsCause) {
  AnalysisResult r = make_fixture_result();
  r.montecarlo.agreement = "disagree";
  r.montecarlo.agreement_cause = "keep-out probability outside the Monte Carlo interval";
  const std::string text = summary_text(r);
  EXPECT_NE(text.find("exit 3"), std::string::npos);
  EXPECT_NE(text.find(r.montecarlo.agreement_cause), std::string::npos);
}

TEST(SummaryText, ColourMarksVerdictsWithoutBreakingTheTable) {
  const std::string text = summary_text(make_fixture_result(), true);
  EXPECT_NE(text.find("\x1b[31mEXCEEDED\x1b[0m"), std::string::npos);
  EXPECT_NE(text.find("\x1b[32mwithin\x1b[0m"), std::string::npos);
}

TEST(SummaryText, NominalOnlyResultPrintsWhatItHas) {
  AnalysisResult r = make_fixture_result(false);
  r.surrogate = SurrogateResult{};
  r.constraints.clear();
  r.command = "simulate";
  const std::string text = summary_text(r);
  EXPECT_NE(text.find("Nominal run only"), std::string::npos);
  EXPECT_NE(text.find("y = 150"), std::string::npos) << text;  // final nominal y = −150 + 0.5·600
  EXPECT_NE(text.find("exit 0"), std::string::npos);
}

TEST(SummaryText, IsTheSameAfterARoundTripThroughTheResultFile) {
  testing::TemporaryFolder folder;
  const AnalysisResult r = make_fixture_result();
  const std::string path = (folder.path / "r.h5").string();
  write_result_file(r, path, false);
  const AnalysisResult back = read_result_file(path);
  EXPECT_EQ(summary_text(back), summary_text(r));
}

TEST(SummaryText, ImportanceSamplingAddsAColumnWithInterval) {
  AnalysisResult r = make_fixture_result();
  auto& is = r.constraints[0].importance_sampling;
  is.done = true;
  is.runs = 4000;
  is.probability = 2.1e-6;
  is.standard_error = 3e-7;
  is.interval[0] = 1.5e-6, is.interval[1] = 2.7e-6;
  is.effective_sample_size = 850;
  is.design_point_distance = 4.6;
  const std::string text = summary_text(r);
  EXPECT_NE(text.find("importance sampling"), std::string::npos);
  EXPECT_NE(lines_starting_with(text, "keep-out").at(0).find("2.1e-06 [1.5e-06, 2.7e-06] 850"), std::string::npos);
}

}  // namespace
}  // namespace sigmatube::result

namespace sigmatube::result {
namespace {

TEST(MonteCarloGateInterval, PointwiseScopeIsClopperPearsonLikeSciPyBeta) {
  testing::TemporaryFolder folder;
  const AnalysisResult r = make_fixture_result();
  const ConstraintResult& corridor = r.constraints[1];
  ASSERT_EQ(corridor.scope, "pointwise");
  double ci[2];
  montecarlo_gate_interval(r, corridor, ci);
  const long long n = r.montecarlo.runs;
  const long long k = std::llround(montecarlo_gate_probability(corridor) * double(n));
  // Reference: Clopper & Pearson (1934) via scipy.stats.beta.ppf(α/2, k, n−k+1)
  // and beta.ppf(1−α/2, k+1, n−k), α = 0.05.
  const std::string out = testing::run_python(
      "from scipy.stats import beta\n"
      "k, n = " + std::to_string(k) + ", " + std::to_string(n) + "\n"
      "print(repr(beta.ppf(0.025, k, n - k + 1)), repr(beta.ppf(0.975, k + 1, n - k)))\n",
      folder.path);
  std::istringstream in(out);
  double lo = 0, hi = 0;
  in >> lo >> hi;
  // Both sides invert the regularized incomplete beta function to near machine precision.
  constexpr double kRelativeTolerance = 1e-9;
  EXPECT_NEAR(ci[0], lo, kRelativeTolerance * lo);
  EXPECT_NEAR(ci[1], hi, kRelativeTolerance * hi);
  // Path scope returns the stored interval unchanged.
  montecarlo_gate_interval(r, r.constraints[0], ci);
  EXPECT_EQ(ci[0], r.constraints[0].montecarlo.path_interval[0]);
  EXPECT_EQ(ci[1], r.constraints[0].montecarlo.path_interval[1]);
}

}  // namespace
}  // namespace sigmatube::result
