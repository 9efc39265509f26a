// SPDX-License-Identifier: MIT
// Margins of an outside-sphere constraint on a sample whose order statistics are
// known by construction.
#include "sigmatube/constraints/margins.h"

#include <gtest/gtest.h>

#include <cmath>

#include "sphere_constraint.h"

namespace sigmatube::constraints {
namespace {

// Distances 0.00, 0.01, …, 9.99 from the sphere's centre at two report times (the
// second shifted by +1), 1000 samples: every order statistic is known by construction.
constexpr int kSamples = 1000;
constexpr double kTolerance = 1e-12;  // a few roundings of i/100 and a subtraction
const std::vector<std::string> kOutputs = {"x", "y", "z"};
const Eigen::VectorXd kTimes = (Eigen::VectorXd(2) << 0.0, 10.0).finished();

Eigen::MatrixXd distances() {
  Eigen::MatrixXd Y = Eigen::MatrixXd::Zero(kSamples, 6);
  for (int i = 0; i < kSamples; ++i) {
    Y(i, 0) = i / 100.0;
    Y(i, 3) = i / 100.0 + 1.0;
  }
  return Y;
}

struct Evaluated {
  std::vector<Constraint> constraints;
  ViolationResults results;
};

Evaluated evaluate(double radius, double epsilon) {
  Evaluated e;
  e.constraints.emplace_back(test::keep_out_sphere(radius, epsilon), kOutputs);
  ViolationStatistics stats(e.constraints, kTimes, 3, kSamples);
  stats.add(distances());
  e.results = stats.results();
  return e;
}

TEST(Margins, SphereThatExceedsReportsTheInflationNeeded) {
  const auto e = evaluate(2.0, 0.01);
  const auto m = compute_margin(e.constraints[0], e.results.constraints[0], kTimes);
  // Path minimum = time 0 clearance = i/100 − 2; ⌊εN⌋ = 10 → q = 0.10 − 2 = −1.9.
  EXPECT_NEAR(m.path_margin, -1.9, kTolerance);
  EXPECT_EQ(m.worst_time_index, 0);
  EXPECT_NEAR(m.worst_quantile, -1.9, kTolerance);
  EXPECT_NEAR(*m.tolerable_radius, 0.1, kTolerance);
  EXPECT_NEAR(*m.required_inflation, 1.9, kTolerance);
  EXPECT_FALSE(m.meets);
  EXPECT_DOUBLE_EQ(m.governing_probability, 0.2);  // 200 of 1000 distances below 2
  EXPECT_EQ(m.verdict, "exceeds: p = 0.2 > 0.01 (short by 1.9 m)");
  // Back-off at time 1: mean clearance (4.995 + 1 − 2) minus q = (0.10 + 1 − 2).
  EXPECT_NEAR(m.backoff[1], 4.995 - 0.10, kTolerance);
}

TEST(Margins, TolerableRadiusIsExactlyTheLargestThatMeetsTheBound) {
  const double epsilon = 0.01;
  const auto e = evaluate(0.05, epsilon);
  const auto m = compute_margin(e.constraints[0], e.results.constraints[0], kTimes);
  EXPECT_TRUE(m.meets);
  EXPECT_NEAR(m.spare, 0.05, kTolerance);
  EXPECT_EQ(m.verdict, "meets 0.01 with 0.05 m to spare");
  // Re-evaluating at the tolerable radius meets ε; a hair more does not.
  EXPECT_LE(evaluate(*m.tolerable_radius, epsilon).results.constraints[0].path_probability, epsilon);
  EXPECT_GT(evaluate(*m.tolerable_radius + 1e-9, epsilon).results.constraints[0].path_probability, epsilon);
}

}  // namespace
}  // namespace sigmatube::constraints
