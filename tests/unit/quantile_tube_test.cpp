// SPDX-License-Identifier: MIT
#include "sigmatube/constraints/quantile_tube.h"

#include <gtest/gtest.h>

#include "python_reference.h"
#include "sigmatube/core/counter_rng.h"
#include "sigmatube/expansion/multi_index.h"

using namespace sigmatube;

namespace {

// Sampling error of an order statistic: sd ≈ √(p(1−p)/N)/f(q_p) (asymptotic
// normality of sample quantiles, e.g. Serfling, Approximation Theorems of
// Mathematical Statistics, 1980, §2.3). Tolerances are five of those sds.
constexpr double kSigmas = 5.0;

expansion::Surrogate one_dimensional(germ::Family family, double c0, double c1) {
  expansion::Surrogate s;
  s.families = {germ::FamilySpec{family, 0.0, 0.0}};
  s.indices = expansion::total_degree_set(1, 1);
  s.coefficients.resize(2, 1);
  s.coefficients << c0, c1;
  s.n_times = 1;
  s.n_outputs = 1;
  return s;
}

}  // namespace

TEST(QuantileTube, LevelsHoldMedianBandAndEachEpsilonPair) {
  const std::vector<double> levels = constraints::quantile_levels({1e-3, 0.01, 1e-3});
  const std::vector<double> expected{1e-3, 0.01, 0.025, 0.5, 0.975, 0.99, 0.999};
  ASSERT_EQ(levels.size(), expected.size());
  for (std::size_t i = 0; i < levels.size(); ++i) EXPECT_NEAR(levels[i], expected[i], 1e-15);
}

TEST(QuantileTube, GaussianSurrogateMatchesNormalQuantilesFromSciPy) {
  // y = 2 + 3ξ, ξ standard normal (orthonormal Hermite ψ_1 = ξ): y ~ N(2, 3²),
  // quantiles scipy.stats.norm(2, 3).ppf(levels).
  const std::vector<double> levels = constraints::quantile_levels({0.01});
  const expansion::Surrogate s = one_dimensional(germ::Family::hermite, 2.0, 3.0);
  constexpr int kSamples = 200000;
  const CounterRng rng(20261203ULL);
  Eigen::MatrixXd points(kSamples, 1);
  for (int i = 0; i < kSamples; ++i) points(i, 0) = rng.normal(static_cast<std::uint64_t>(i), 0);
  const Eigen::MatrixXd q1 = constraints::surrogate_quantiles(s, points, levels, 1);
  const Eigen::MatrixXd q2 = constraints::surrogate_quantiles(s, points, levels, 2);
  EXPECT_EQ((q1 - q2).norm(), 0.0);  // thread count does not matter
  std::string list;
  for (double l : levels) list += (list.empty() ? "" : ",") + std::to_string(l);
  const std::vector<double> ref = test::python_numbers(
      "from scipy.stats import norm\nfor p in [" + list + "]:\n  print(norm(2, 3).ppf(p), norm(2, 3).pdf(norm(2, 3).ppf(p)))\n");
  ASSERT_EQ(ref.size(), 2 * levels.size());
  for (std::size_t l = 0; l < levels.size(); ++l) {
    const double p = levels[l];
    const double sd = std::sqrt(p * (1 - p) / kSamples) / ref[2 * l + 1];
    EXPECT_NEAR(q1(0, static_cast<Eigen::Index>(l)), ref[2 * l], kSigmas * sd) << "level " << p;
  }
}

TEST(QuantileTube, UniformSurrogateMatchesClosedFormQuantiles) {
  // y = 1 + (1/√3)·√3 ξ = 1 + ξ with ξ ~ U(−1, 1) (orthonormal Legendre ψ_1 = √3 ξ):
  // closed form q_p = 2p; density ½.
  const std::vector<double> levels = constraints::quantile_levels({0.05});
  const expansion::Surrogate s = one_dimensional(germ::Family::legendre, 1.0, 1.0 / std::sqrt(3.0));
  constexpr int kSamples = 100000;
  const CounterRng rng(11ULL);
  Eigen::MatrixXd points(kSamples, 1);
  for (int i = 0; i < kSamples; ++i) points(i, 0) = 2.0 * rng.uniform(static_cast<std::uint64_t>(i), 0) - 1.0;
  const Eigen::MatrixXd q = constraints::surrogate_quantiles(s, points, levels, 2);
  for (std::size_t l = 0; l < levels.size(); ++l) {
    const double p = levels[l];
    const double sd = std::sqrt(p * (1 - p) / kSamples) / 0.5;
    EXPECT_NEAR(q(0, static_cast<Eigen::Index>(l)), 2.0 * p, kSigmas * sd) << "level " << p;
  }
}

TEST(QuantileTube, OrderStatisticRuleOfViolationStatistics) {
  // Ten values 0…9: q_p = x_(⌊10p⌋): p = 0.05 → 0, 0.5 → 5, 0.975 → 9.
  Eigen::MatrixXd v(10, 1);
  for (int i = 0; i < 10; ++i) v(i, 0) = 9 - i;
  const Eigen::MatrixXd q = constraints::column_quantiles(v, {0.05, 0.5, 0.975});
  EXPECT_EQ(q(0, 0), 0.0);
  EXPECT_EQ(q(0, 1), 5.0);
  EXPECT_EQ(q(0, 2), 9.0);
}
