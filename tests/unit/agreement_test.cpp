// SPDX-License-Identifier: MIT
// The agreement rules of agreement.h on hand-built statistics; interval limits come
// from the closed form of the Clopper–Pearson bound for k = 0 and from SciPy-checked
// clopper_pearson().
#include "sigmatube/montecarlo/agreement.h"

#include <gtest/gtest.h>

#include <cmath>

namespace sigmatube::montecarlo {
namespace {

constraints::ConstraintStatistics stats(double p, long long n, long long k, double epsilon) {
  constraints::ConstraintStatistics s;
  s.name = "keep-out";
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

struct Setup {
  constraints::ViolationResults surrogate;
  MonteCarloResult mc;
};

// Surrogate: p_s from 1e6 samples; Monte Carlo: k of n runs; validation RMSE/std r.
Setup make(double p_s, long long k, long long n, double epsilon, double relative_rmse) {
  Setup s;
  const long long surrogate_samples = 1000000;
  s.surrogate.samples = surrogate_samples;
  s.surrogate.constraints = {stats(p_s, surrogate_samples, static_cast<long long>(p_s * surrogate_samples), epsilon)};
  s.mc.runs = n;
  s.mc.successful_runs = n;
  s.mc.confidence = 0.95;
  s.mc.violations.samples = n;
  s.mc.violations.constraints = {stats(static_cast<double>(k) / n, n, k, epsilon)};
  s.mc.validated = true;
  s.mc.validation_relative_rmse = Eigen::VectorXd::Constant(2, relative_rmse);
  return s;
}

TEST(Agreement, SurrogateInsideTheIntervalAgrees) {
  const auto s = make(0.0100, 95, 10000, 0.02, 0.01);
  const auto a = assess_agreement(s.surrogate, s.mc, 0.0);
  EXPECT_EQ(a.overall, Verdict::agree);
  EXPECT_TRUE(a.constraints[0].montecarlo_interval.contains(0.0100));
  EXPECT_TRUE(a.constraints[0].cause.empty());
}

TEST(Agreement, ZeroMonteCarloViolationsAgreeWhenSurrogateIsBelowTheResolution) {
  // k = 0 of n = 1000: upper = 1 − 0.025^{1/1000} ≈ 3.68e-3 (closed form).
  const auto below = make(1e-4, 0, 1000, 1e-3, 0.01);
  const auto a = assess_agreement(below.surrogate, below.mc, 0.0);
  EXPECT_NEAR(a.constraints[0].montecarlo_interval.upper, -std::expm1(std::log(0.025) / 1000.0), 1e-15);
  EXPECT_EQ(a.constraints[0].verdict, Verdict::agree);
  // Half-width 1.84e-3 > ε = 1e-3: the note says the runs cannot resolve the bound.
  EXPECT_NE(a.constraints[0].note.find("too few runs"), std::string::npos);
  const auto above = make(8e-3, 0, 1000, 1e-3, 0.01);
  EXPECT_EQ(assess_agreement(above.surrogate, above.mc, 0.0).constraints[0].verdict, Verdict::disagree);
}

TEST(Agreement, DisagreementCausesFollowTheDocumentedOrder) {
  const auto s = make(0.001, 300, 10000, 0.01, 0.01);  // MC ≈ 0.03, surrogate 0.001
  EXPECT_EQ(assess_agreement(s.surrogate, s.mc, 0.12).constraints[0].cause, "nonsmooth behaviour such as saturation");
  EXPECT_EQ(assess_agreement(s.surrogate, s.mc, 0.0).constraints[0].cause, "unexplained");
  const auto rough = make(0.001, 300, 10000, 0.01, 0.3);
  const auto a = assess_agreement(rough.surrogate, rough.mc, 0.0);
  EXPECT_EQ(a.constraints[0].cause, "degree too low");
  EXPECT_FALSE(a.validation_ok);
  EXPECT_EQ(a.overall, Verdict::disagree);
  const auto few = make(0.001, 10, 50, 0.001, 0.01);  // half-width ≈ 0.12 ≫ ε
  EXPECT_EQ(assess_agreement(few.surrogate, few.mc, 0.0).constraints[0].cause, "too few runs");
}

TEST(Agreement, LargeValidationErrorAloneMakesTheOverallVerdictDisagree) {
  const auto s = make(0.0100, 95, 10000, 0.02, 0.2);
  const auto a = assess_agreement(s.surrogate, s.mc, 0.0);
  EXPECT_EQ(a.constraints[0].verdict, Verdict::agree);
  EXPECT_EQ(a.overall, Verdict::disagree);
  EXPECT_NE(a.summary.find("degree too low"), std::string::npos) << a.summary;
}

TEST(Agreement, PointwiseScopeComparesAtTheTimeWithMostMonteCarloViolations) {
  auto s = make(0.01, 100, 10000, 0.05, 0.01);
  for (auto* c : {&s.surrogate.constraints[0], &s.mc.violations.constraints[0]}) {
    c->scope = casefile::ConstraintScope::pointwise;
    c->in_window = {1, 1, 0};
  }
  // Surrogate: 0.5% at t0, 1% at t1, 40% outside the window (ignored).
  s.surrogate.constraints[0].pointwise_probability = Eigen::Vector3d(0.005, 0.01, 0.4);
  s.surrogate.constraints[0].pointwise_standard_error = Eigen::Vector3d(7e-5, 1e-4, 5e-4);
  s.mc.violations.constraints[0].pointwise_violations = {40, 100, 4000};
  const auto a = assess_agreement(s.surrogate, s.mc, 0.0);
  EXPECT_EQ(a.constraints[0].time_index, 1);
  EXPECT_EQ(a.constraints[0].montecarlo_violations, 100);
  EXPECT_EQ(a.constraints[0].verdict, Verdict::agree);
  s.surrogate.constraints[0].pointwise_probability[1] = 0.02;  // outside [0.0081, 0.0122] + 2 se
  EXPECT_EQ(assess_agreement(s.surrogate, s.mc, 0.0).constraints[0].verdict, Verdict::disagree);
}

}  // namespace
}  // namespace sigmatube::montecarlo
