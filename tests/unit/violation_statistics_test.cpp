// SPDX-License-Identifier: MIT
// Violation statistics against the closed form for a Gaussian point and a sphere
// (noncentral chi-square, Boost.Math and SciPy), and against sorted-array order
// statistics.
#include "sigmatube/constraints/violation_statistics.h"

#include <gtest/gtest.h>

#include "python_reference.h"

#include <algorithm>
#include <boost/math/distributions/non_central_chi_squared.hpp>
#include <cmath>
#include <cstdio>
#include <memory>
#include <string>

#include "sigmatube/core/counter_rng.h"

namespace sigmatube::constraints {
namespace {
using casefile::ConstraintKind;

std::string run_python(const std::string& code) { return sigmatube::test::python_output(code); }

// Position p(t) = m(t) + σ z, z ~ N(0, I₃) from CounterRng, on T report times.
struct GaussianPoints {
  Eigen::VectorXd times;
  std::vector<Eigen::Vector3d> means;
  double sigma = 1.0;
  unsigned long long seed = 7;
  void fill(long long begin, long long end, Eigen::MatrixXd& Y) const {
    const CounterRng rng(seed);
    for (long long i = begin; i < end; ++i) {
      for (Eigen::Index t = 0; t < times.size(); ++t) {
        for (int d = 0; d < 3; ++d) {
          Y(i - begin, t * 3 + d) = means[static_cast<std::size_t>(t)][d] + sigma * rng.normal(static_cast<std::uint64_t>(i), static_cast<std::uint64_t>(t * 3 + d));
        }
      }
    }
  }
};

casefile::ConstraintOptions sphere(double radius, double epsilon) {
  casefile::ConstraintOptions o;
  o.name = "keep-out";
  o.type = ConstraintKind::outside_sphere;
  o.position = {"x", "y", "z"};
  o.center = {0, 0, 0};
  o.radius = radius;
  o.max_probability = epsilon;
  return o;
}

const std::vector<std::string> kOutputs = {"x", "y", "z"};

TEST(ViolationStatistics, GaussianPointInSphereMatchesNoncentralChiSquare) {
  // P(|p − c| < r) = F_ncx2(r²/σ²; k = 3, λ = |m − c|²/σ²) (closed form for a
  // Gaussian point); each time has its own mean distance.
  GaussianPoints g;
  g.times = Eigen::VectorXd::LinSpaced(4, 0.0, 30.0);
  g.means = {{3.0, 0.0, 0.0}, {2.0, 1.0, 0.5}, {1.0, 1.0, 1.0}, {0.0, 0.5, 0.0}};
  g.sigma = 1.0;
  const double radius = 1.5;
  std::vector<Constraint> constraints = {Constraint(sphere(radius, 1e-2), kOutputs)};
  constexpr long long kSamples = 200000;
  const auto results = stream_violation_statistics(constraints, g.times, 3, kSamples, 5000, 2,
                                                   [&](long long b, long long e, Eigen::MatrixXd& Y) { g.fill(b, e, Y); });
  ASSERT_EQ(results.samples, kSamples);
  const auto& s = results.constraints[0];
  std::string python = "from scipy.stats import ncx2; print(' '.join(repr(ncx2.cdf(";
  python += std::to_string(radius * radius) + ", 3, l)) for l in [";
  for (std::size_t t = 0; t < g.means.size(); ++t) python += (t ? "," : "") + std::to_string(g.means[t].squaredNorm());
  python += "]))";
  const std::string scipy = run_python(python);
  ASSERT_FALSE(scipy.empty()) << "SciPy not reachable through " << SIGMATUBE_PYTHON;
  std::istringstream scipy_values(scipy);
  for (Eigen::Index t = 0; t < g.times.size(); ++t) {
    const double lambda = g.means[static_cast<std::size_t>(t)].squaredNorm();
    const boost::math::non_central_chi_squared_distribution<double> ncx2(3.0, lambda);
    const double exact = boost::math::cdf(ncx2, radius * radius);
    double reference = 0;
    scipy_values >> reference;
    // Boost vs SciPy (scipy.stats.ncx2.cdf): two independent implementations agree to 1e-10.
    EXPECT_NEAR(exact, reference, 1e-10) << "t index " << t;
    // Sampled vs exact: within 4 binomial standard errors √(p(1−p)/N) (common practice).
    const double se = std::sqrt(exact * (1 - exact) / kSamples);
    EXPECT_NEAR(s.pointwise_probability[t], exact, 4 * se) << "t index " << t << " exact " << exact;
    EXPECT_NEAR(s.pointwise_standard_error[t], se, 0.05 * se + 1e-12);
    std::printf("t=%g exact=%.6g |boost-scipy|=%.2g sampled=%.6g (%.2f se)\n", g.times[t], exact,
                std::abs(exact - reference), s.pointwise_probability[t], (s.pointwise_probability[t] - exact) / se);
  }
  // The path probability is at least the largest pointwise probability and at most their sum.
  EXPECT_GE(s.path_probability, s.pointwise_probability.maxCoeff());
  EXPECT_LE(s.path_probability, s.pointwise_probability.sum() + 1e-15);
}

TEST(ViolationStatistics, StreamingQuantileEqualsSortedOrderStatistic) {
  GaussianPoints g;
  g.times = Eigen::VectorXd::LinSpaced(3, 0.0, 2.0);
  g.means = {{2.0, 0.0, 0.0}, {1.5, 0.0, 0.0}, {2.5, 0.0, 0.0}};
  constexpr long long kSamples = 12345;
  const double epsilon = 0.013;
  std::vector<Constraint> constraints = {Constraint(sphere(1.0, epsilon), kOutputs)};
  Eigen::MatrixXd Y(kSamples, 9);
  g.fill(0, kSamples, Y);
  const auto results = stream_violation_statistics(constraints, g.times, 3, kSamples, 1000, 2,
                                                   [&](long long b, long long e, Eigen::MatrixXd& out) { out = Y.middleRows(b, e - b); });
  const auto& s = results.constraints[0];
  // Order statistic index m = ⌊εN⌋ = 160 (0-based), computed here from the definition.
  const std::size_t m = static_cast<std::size_t>(std::floor(epsilon * kSamples));
  ASSERT_EQ(m, 160u);
  std::vector<double> path_min(kSamples, 1e300);
  for (Eigen::Index t = 0; t < 3; ++t) {
    Eigen::VectorXd c(kSamples);
    constraints[0].clearance(Y.middleCols(t * 3, 3), g.times[t], c);
    std::vector<double> sorted(c.data(), c.data() + kSamples);
    for (long long i = 0; i < kSamples; ++i) path_min[static_cast<std::size_t>(i)] = std::min(path_min[static_cast<std::size_t>(i)], c[i]);
    std::sort(sorted.begin(), sorted.end());
    EXPECT_EQ(s.clearance_quantile[t], sorted[m]);  // exact, bit for bit
    // q_ε ≥ 0 exactly when p̂ ≤ ε.
    EXPECT_EQ(s.clearance_quantile[t] >= 0.0, s.pointwise_probability[t] <= epsilon);
  }
  std::sort(path_min.begin(), path_min.end());
  EXPECT_EQ(s.path_margin, path_min[m]);
  EXPECT_EQ(s.path_margin >= 0.0, s.path_probability <= epsilon);
}

TEST(ViolationStatistics, PackedAccumulatorsMergeBitForBit) {
  // What MPI ranks exchange (core/distributed.h): an accumulator packed and
  // unpacked into a fresh one of the same shape merges exactly as the original.
  GaussianPoints g;
  g.times = Eigen::VectorXd::LinSpaced(3, 0.0, 2.0);
  g.means = {{1.5, 0, 0}, {1.2, 0.3, 0}, {1.8, 0, 0.2}};
  std::vector<Constraint> constraints = {Constraint(sphere(1.0, 0.05), kOutputs)};
  constexpr long long kSamples = 6000;
  ViolationStatistics first(constraints, g.times, 3, kSamples), second(constraints, g.times, 3, kSamples);
  Eigen::MatrixXd Y(kSamples / 2, 9);
  g.fill(0, kSamples / 2, Y);
  first.add(Y, 0);
  g.fill(kSamples / 2, kSamples, Y);
  second.add(Y, kSamples / 2);
  ViolationStatistics received(constraints, g.times, 3, kSamples);
  const std::vector<double> packed = second.pack();
  received.unpack(packed.data(), packed.size());
  ViolationStatistics direct = first, via_pack = first;
  direct.merge(second);
  via_pack.merge(received);
  const auto a = direct.results(), b = via_pack.results();
  EXPECT_EQ(a.samples, b.samples);
  EXPECT_EQ(a.joint_violations, b.joint_violations);
  EXPECT_EQ(a.constraints[0].pointwise_violations, b.constraints[0].pointwise_violations);
  EXPECT_EQ(a.constraints[0].clearance_mean, b.constraints[0].clearance_mean);
  EXPECT_EQ(a.constraints[0].clearance_std, b.constraints[0].clearance_std);
  EXPECT_EQ(a.constraints[0].clearance_quantile, b.constraints[0].clearance_quantile);
  EXPECT_EQ(a.constraints[0].path_margin, b.constraints[0].path_margin);
  EXPECT_EQ(a.constraints[0].path_minimum_mean, b.constraints[0].path_minimum_mean);
  // Data of another shape is refused, never read past its end.
  EXPECT_THROW(received.unpack(packed.data(), packed.size() - 1), std::logic_error);
  ViolationStatistics other(constraints, Eigen::VectorXd::LinSpaced(2, 0.0, 1.0), 3, kSamples);
  EXPECT_THROW(other.unpack(packed.data(), packed.size()), std::logic_error);
}

TEST(ViolationStatistics, ChunkingAndThreadsDoNotChangeResults) {
  GaussianPoints g;
  g.times = Eigen::VectorXd::LinSpaced(5, 0.0, 4.0);
  g.means = {{2, 0, 0}, {1.8, 0, 0}, {1.6, 0.2, 0}, {1.9, 0, 0.1}, {2.2, 0, 0}};
  auto window = sphere(1.0, 0.02);
  window.window_in_seconds = std::make_pair(1.0, 3.0);
  casefile::ConstraintOptions expression;  // same sphere written as an expression: exercises the parser pool
  expression.name = "expression";
  expression.type = ConstraintKind::expression;
  expression.clearance = "sqrt(x^2 + y^2 + z^2) - 1 + 0*t";
  expression.max_probability = 0.02;
  std::vector<Constraint> constraints = {Constraint(sphere(1.0, 0.02), kOutputs), Constraint(window, kOutputs),
                                         Constraint(expression, kOutputs)};
  constexpr long long kSamples = 20000;
  auto fill = [&](long long b, long long e, Eigen::MatrixXd& Y) { g.fill(b, e, Y); };
  const auto one_chunk = stream_violation_statistics(constraints, g.times, 3, kSamples, kSamples, 1, fill);
  const auto chunked_1 = stream_violation_statistics(constraints, g.times, 3, kSamples, 777, 1, fill);
  const auto chunked_2 = stream_violation_statistics(constraints, g.times, 3, kSamples, 777, 2, fill);
  EXPECT_EQ(one_chunk.joint_violations, chunked_1.joint_violations);
  for (std::size_t j = 0; j < constraints.size(); ++j) {
    const auto& a = one_chunk.constraints[j];
    const auto& b = chunked_1.constraints[j];
    const auto& c = chunked_2.constraints[j];
    EXPECT_EQ(a.pointwise_violations, b.pointwise_violations);
    EXPECT_EQ(a.path_violations, b.path_violations);
    EXPECT_EQ(a.clearance_quantile, b.clearance_quantile);  // exact order statistics
    EXPECT_EQ(a.path_margin, b.path_margin);
    // Means and stds are merged sums: equal to rounding for a different chunking.
    EXPECT_TRUE(a.clearance_mean.isApprox(b.clearance_mean, 1e-12));
    EXPECT_TRUE(a.clearance_std.isApprox(b.clearance_std, 1e-12));
    // Same chunking, different thread count: bitwise identical.
    EXPECT_EQ(b.clearance_mean, c.clearance_mean);
    EXPECT_EQ(b.clearance_std, c.clearance_std);
    EXPECT_EQ(b.path_minimum_mean, c.path_minimum_mean);
    EXPECT_EQ(b.pointwise_violations, c.pointwise_violations);
  }
  // Outside the window the pointwise probability is NaN.
  EXPECT_TRUE(std::isnan(one_chunk.constraints[1].pointwise_probability[0]));
  EXPECT_FALSE(std::isnan(one_chunk.constraints[1].pointwise_probability[1]));
  EXPECT_LE(one_chunk.constraints[1].path_violations, one_chunk.constraints[0].path_violations);
  EXPECT_GE(one_chunk.joint_violations, one_chunk.constraints[0].path_violations);
  // The expression and the built-in sphere see the same violations (the muparser sqrt and
  // Eigen's norm may differ in the last bit, which only matters exactly at c = 0).
  EXPECT_EQ(chunked_2.constraints[2].path_violations, chunked_2.constraints[0].path_violations);
  EXPECT_TRUE(chunked_2.constraints[2].clearance_mean.isApprox(chunked_2.constraints[0].clearance_mean, 1e-12));
}

TEST(ViolationStatistics, NaNClearanceIsANumericalErrorNamingSampleAndTime) {
  std::vector<Constraint> constraints = {Constraint(sphere(1.0, 0.01), kOutputs)};
  const Eigen::VectorXd times = Eigen::VectorXd::LinSpaced(2, 0, 5);
  ViolationStatistics stats(constraints, times, 3, 10);
  Eigen::MatrixXd Y = Eigen::MatrixXd::Constant(4, 6, 2.0);
  Y(2, 4) = std::nan("");  // sample 2 at t = 5 s
  try {
    stats.add(Y, 100);
    FAIL() << "expected NumericalError";
  } catch (const NumericalError& e) {
    EXPECT_EQ(e.sample(), 102);
    EXPECT_EQ(e.time_in_seconds(), 5.0);
  }
}

TEST(ViolationStatistics, WindowWithoutReportTimeIsAnInputError) {
  auto o = sphere(1.0, 0.01);
  o.window_in_seconds = std::make_pair(100.0, 200.0);
  std::vector<Constraint> constraints = {Constraint(o, kOutputs)};
  EXPECT_THROW(ViolationStatistics(constraints, Eigen::VectorXd::LinSpaced(3, 0, 2), 3, 10), InputError);
}

}  // namespace
}  // namespace sigmatube::constraints
