// SPDX-License-Identifier: MIT
// The agreement rules of agreement.h on hand-built paired tables. Expected verdicts
// follow from the exact McNemar p-value 2·P(X ≤ min(b, c)), X ~ Bin(b + c, ½)
// (closed form; SciPy-checked in paired_test.cpp) and the rules in the header.
#include "sigmatube/montecarlo/agreement.h"

#include <gtest/gtest.h>

#include <cmath>

namespace sigmatube::montecarlo {
namespace {

constraints::ConstraintStatistics stats(const std::string& name, double p, long long n, long long k, double epsilon) {
  constraints::ConstraintStatistics s;
  s.name = name;
  s.max_probability = epsilon;
  s.scope = casefile::ConstraintScope::path;
  s.in_window = {1};
  s.path_violations = k;
  s.path_probability = p;
  s.path_standard_error = std::sqrt(p * (1 - p) / static_cast<double>(n));
  s.pointwise_violations = {k};
  s.pointwise_probability = Eigen::VectorXd::Constant(1, p);
  s.pointwise_standard_error = Eigen::VectorXd::Constant(1, s.path_standard_error);
  return s;
}

struct Table {
  std::string name;
  long long both, surrogate_only, model_only;
  double epsilon;
};

struct Setup {
  constraints::ViolationResults surrogate;
  MonteCarloResult mc;
};

// n runs; per constraint its 2×2 table; validation RMSE/std r of 2 outputs.
Setup make(long long n, const std::vector<Table>& tables, double relative_rmse = 0.01) {
  Setup s;
  s.mc.runs = n;
  s.mc.successful_runs = n;
  s.mc.confidence = 0.95;
  s.mc.violations.samples = n;
  s.mc.validated = true;
  s.mc.validation_relative_rmse = Eigen::VectorXd::Constant(2, relative_rmse);
  s.mc.validation_rmse_by_time = (Eigen::MatrixXd(2, 2) << 0.1, 0.3, 0.2, 0.1).finished();
  s.surrogate.samples = 1000000;
  for (const auto& t : tables) {
    const long long k_s = t.both + t.surrogate_only, k_m = t.both + t.model_only;
    s.surrogate.constraints.push_back(stats(t.name, static_cast<double>(k_s) / n, 1000000, k_s, t.epsilon));
    s.mc.violations.constraints.push_back(stats(t.name, static_cast<double>(k_m) / n, n, k_m, t.epsilon));
    PairedCounts p;
    p.runs = n;
    p.both = t.both;
    p.surrogate_only = t.surrogate_only;
    p.model_only = t.model_only;
    p.both_t = {t.both};
    p.surrogate_only_t = {t.surrogate_only};
    p.model_only_t = {t.model_only};
    p.sum_e2 = static_cast<double>(n);
    p.sum_e4 = 3.0 * static_cast<double>(n);  // Gaussian-like errors: kurtosis 3
    s.mc.paired.push_back(p);
  }
  return s;
}

AgreementOptions options_for(std::size_t constraints) {
  AgreementOptions o;
  o.constraint_outputs.assign(constraints, std::vector<int>{0});
  o.output_names = {"x", "speed"};
  o.times = (Eigen::VectorXd(2) << 0.0, 10.0).finished();
  return o;
}

TEST(Agreement, BalancedDiscordanceAgrees) {
  // b = 12, c = 9 of 10000: McNemar p = 0.66, nothing to see.
  const auto s = make(10000, {{"keep-out", 90, 12, 9, 0.02}});
  const auto a = assess_agreement(s.surrogate, s.mc, options_for(1));
  EXPECT_EQ(a.overall, Verdict::agree) << a.summary;
  EXPECT_GT(a.constraints[0].mcnemar_p, 0.5);
  EXPECT_TRUE(a.constraints[0].cause.empty());
  EXPECT_TRUE(a.cause.empty());
}

TEST(Agreement, OneSidedSignificantAndRelevantDisagreesNamingTheCause) {
  // b = 30, c = 0: p = 2^−29 ≪ 1e-3; d = 0.003 > 0.2 · p_M = 0.2 · 0.01.
  const auto s = make(10000, {{"keep-out", 100, 30, 0, 0.02}});
  const auto a = assess_agreement(s.surrogate, s.mc, options_for(1));
  const auto& c = a.constraints[0];
  EXPECT_EQ(c.verdict, Verdict::disagree);
  EXPECT_NEAR(c.mcnemar_p, std::ldexp(1.0, -29), 1e-20);
  EXPECT_EQ(c.cause, "tail misfit (x at t = 10 s)");  // x's RMSE is largest at the second time
  EXPECT_EQ(a.overall, Verdict::disagree);
  EXPECT_EQ(a.cause.find('\n'), std::string::npos);  // one line, for the exit line
  EXPECT_NE(a.cause.find("keep-out: tail misfit"), std::string::npos) << a.cause;
}

TEST(Agreement, SignificantButIrrelevantDifferenceAgrees) {
  // b = 60, c = 20 of 100000 with p_M ≈ 0.5: d = 4e-4 ≪ 0.2 · 0.5, no flip at ε = 0.9.
  const auto s = make(100000, {{"wide", 50000, 60, 20, 0.9}});
  const auto a = assess_agreement(s.surrogate, s.mc, options_for(1));
  EXPECT_TRUE(a.constraints[0].significant);
  EXPECT_FALSE(a.constraints[0].relevant);
  EXPECT_EQ(a.constraints[0].verdict, Verdict::agree);
}

TEST(Agreement, HolmControlsTheFamilyOverConstraints) {
  // b = 11, c = 0 gives p = 2^−10 = 9.8e-4 ≤ 1e-3 alone, but with a second tested
  // constraint Holm needs 2·p ≤ 1e-3: not significant, and 11 discordant runs are
  // below the 12 that α/2 needs for this difference, so: too few runs to tell.
  const auto alone = make(2000, {{"a", 20, 11, 0, 0.02}});
  EXPECT_EQ(assess_agreement(alone.surrogate, alone.mc, options_for(1)).constraints[0].verdict, Verdict::disagree);
  const auto two = make(2000, {{"a", 20, 11, 0, 0.02}, {"b", 100, 3, 4, 0.2}});
  const auto a = assess_agreement(two.surrogate, two.mc, options_for(2));
  EXPECT_NEAR(a.constraints[0].holm_p, 2.0 * std::ldexp(1.0, -10), 1e-15);
  EXPECT_NE(a.constraints[0].verdict, Verdict::disagree);
}

TEST(Agreement, TooFewRunsToTellWhenARelevantDifferenceCannotBeSeen) {
  // ε = 1e-3, 0 of 1000 both ways: the smallest relevant difference is ~1e-3, i.e. one
  // run, far below the 11 one-sided discordant runs the test needs.
  const auto s = make(1000, {{"rare", 0, 0, 0, 1e-3}});
  const auto a = assess_agreement(s.surrogate, s.mc, options_for(1));
  EXPECT_EQ(a.constraints[0].verdict, Verdict::too_few_runs);
  EXPECT_EQ(a.overall, Verdict::too_few_runs);
  EXPECT_NE(a.cause.find("too few runs to tell for rare"), std::string::npos) << a.cause;
}

TEST(Agreement, ValidationOfUnusedOutputsOnlyWarns) {
  auto s = make(10000, {{"keep-out", 90, 12, 9, 0.02}});
  s.mc.validation_relative_rmse[1] = 0.4;  // "speed", read by no constraint
  auto a = assess_agreement(s.surrogate, s.mc, options_for(1));
  EXPECT_TRUE(a.validation_ok);
  EXPECT_EQ(a.overall, Verdict::agree);
  ASSERT_EQ(a.warnings.size(), 1u);
  EXPECT_NE(a.warnings[0].find("speed at t = 0 s"), std::string::npos) << a.warnings[0];
  s.mc.validation_relative_rmse[0] = 0.3;  // "x" is read: it decides
  a = assess_agreement(s.surrogate, s.mc, options_for(1));
  EXPECT_FALSE(a.validation_ok);
  EXPECT_EQ(a.overall, Verdict::disagree);
  EXPECT_NE(a.cause.find("degree too low"), std::string::npos) << a.cause;
}

TEST(Agreement, CausesFollowTheEvidence) {
  auto s = make(10000, {{"keep-out", 100, 30, 0, 0.02}});
  s.mc.paired[0].discordant_saturated = 20;  // most discordant runs saturated
  EXPECT_EQ(assess_agreement(s.surrogate, s.mc, options_for(1)).constraints[0].cause.rfind(
                "nonsmooth behaviour such as saturation", 0),
            0u);
  s.mc.paired[0].discordant_saturated = 0;
  s.mc.paired[0].sum_e4 = 50.0 * 10000.0;  // kurtosis 50: a few huge errors
  EXPECT_EQ(assess_agreement(s.surrogate, s.mc, options_for(1)).constraints[0].cause.rfind(
                "nonsmooth behaviour such as a kink", 0),
            0u);
  s.mc.paired[0].sum_e4 = 3.0 * 10000.0;
  s.mc.validation_relative_rmse[0] = 0.2;
  EXPECT_EQ(assess_agreement(s.surrogate, s.mc, options_for(1)).constraints[0].cause.rfind("degree too low", 0), 0u);
}

TEST(Agreement, PointwiseScopeComparesAtTheTimeWithMostMonteCarloViolations) {
  auto s = make(10000, {{"keep-out", 100, 0, 0, 0.05}});
  for (auto* c : {&s.surrogate.constraints[0], &s.mc.violations.constraints[0]}) {
    c->scope = casefile::ConstraintScope::pointwise;
    c->in_window = {1, 1, 0};
  }
  s.surrogate.constraints[0].pointwise_probability = Eigen::Vector3d(0.005, 0.01, 0.4);
  s.mc.violations.constraints[0].pointwise_violations = {40, 100, 4000};
  auto& p = s.mc.paired[0];
  p.both_t = {40, 100, 4000};
  p.surrogate_only_t = {0, 40, 0};  // one-sided at t1 only
  p.model_only_t = {0, 0, 0};
  const auto a = assess_agreement(s.surrogate, s.mc, options_for(1));
  EXPECT_EQ(a.constraints[0].time_index, 1);
  EXPECT_EQ(a.constraints[0].montecarlo_violations, 100);
  EXPECT_EQ(a.constraints[0].surrogate_only, 40);
  EXPECT_EQ(a.constraints[0].verdict, Verdict::disagree);
}

}  // namespace
}  // namespace sigmatube::montecarlo
