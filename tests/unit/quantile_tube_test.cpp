// SPDX-License-Identifier: MIT
#include "sigmatube/constraints/quantile_tube.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>

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

namespace {

// The reference for the selection: the whole column sorted by std::sort, then
// x_(k), k = ⌊pN⌋ clamped to N − 1 (the rule of the header).
std::vector<double> sorted_quantiles(const Eigen::VectorXd& column, const std::vector<double>& levels) {
  std::vector<double> sorted(column.data(), column.data() + column.size());
  std::sort(sorted.begin(), sorted.end());
  const auto n = static_cast<long long>(sorted.size());
  std::vector<double> q;
  for (double p : levels)
    q.push_back(sorted[static_cast<std::size_t>(std::clamp(static_cast<long long>(p * static_cast<double>(n)), 0LL, n - 1))]);
  return q;
}

void expect_sorted_quantiles(const Eigen::MatrixXd& samples, const std::vector<double>& levels, const char* what) {
  const Eigen::MatrixXd q = constraints::column_quantiles(samples, levels);
  for (Eigen::Index c = 0; c < samples.cols(); ++c) {
    const std::vector<double> expected = sorted_quantiles(samples.col(c), levels);
    for (std::size_t l = 0; l < levels.size(); ++l)
      EXPECT_EQ(q(c, static_cast<Eigen::Index>(l)), expected[l])
          << what << ": N = " << samples.rows() << ", column " << c << ", level " << levels[l];
  }
}

}  // namespace

TEST(QuantileTube, SelectionEqualsTheSortedOrderStatistics) {
  // Exact order statistics, so equality: random (normal, heavy-tailed), tied
  // (few distinct values), constant columns, and sizes below and above the size
  // from which the selection brackets with a sample; levels at both extremes,
  // close pairs and the rule's clamp at p = 1.
  const std::vector<double> levels_list[] = {
      constraints::quantile_levels({1e-4, 1e-3}),
      {0.0, 1e-6, 0.3, 0.3 + 1e-9, 0.5, 0.51, 1.0 - 1e-7, 1.0},
  };
  const CounterRng rng(987654321ULL);
  std::uint64_t counter = 0;
  for (const Eigen::Index n : {Eigen::Index{1}, Eigen::Index{7}, Eigen::Index{4095}, Eigen::Index{4097},
                               Eigen::Index{10007}, Eigen::Index{50001}}) {
    Eigen::MatrixXd samples(n, 5);
    for (Eigen::Index i = 0; i < n; ++i) {
      const double z = rng.normal(counter, 0), u = rng.uniform(counter, 1);
      ++counter;
      samples(i, 0) = z;                        // normal
      samples(i, 1) = z / (u + 1e-3);           // heavy tails
      samples(i, 2) = std::floor(4.0 * u);      // four tied values
      samples(i, 3) = 2.5;                      // constant
      samples(i, 4) = i % 3 == 0 ? -0.0 : 0.0;  // ties of signed zeros
    }
    for (const auto& levels : levels_list) expect_sorted_quantiles(samples, levels, "mixed");
  }
}

TEST(QuantileTube, SelectionFallsBackWhenTheBracketsMiss) {
  // A column whose values at the strided sample positions (i·N/s, s = ⌊N^(2/3)⌋:
  // the sample the selection brackets from) are far above all others: every
  // bracket drawn from that sample misses, and the fallback must give the
  // sorted order statistics all the same. Also sorted and reversed columns.
  const Eigen::Index n = 20011;
  const auto s = static_cast<Eigen::Index>(std::cbrt(static_cast<double>(n) * static_cast<double>(n)));
  Eigen::MatrixXd samples(n, 3);
  for (Eigen::Index i = 0; i < n; ++i) {
    samples(i, 0) = static_cast<double>((i * 7919) % n) * 1e-3;
    samples(i, 1) = static_cast<double>(i);
    samples(i, 2) = static_cast<double>(n - i);
  }
  for (Eigen::Index i = 0; i < s; ++i) samples(i * n / s, 0) = 1e6 + static_cast<double>(i);
  expect_sorted_quantiles(samples, constraints::quantile_levels({1e-3, 0.01}), "adversarial");
}
