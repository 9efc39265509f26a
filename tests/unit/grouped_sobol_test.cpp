// SPDX-License-Identifier: MIT
#include "sigmatube/expansion/grouped_sobol.h"

#include <gtest/gtest.h>

#include <boost/math/distributions/normal.hpp>

#include "sigmatube/core/counter_rng.h"
#include "sigmatube/expansion/multi_index.h"
#include "sigmatube/expansion/polynomial_basis.h"
#include "sigmatube/expansion/regression.h"
#include "sigmatube/expansion/sobol_indices.h"

using namespace sigmatube;
using namespace sigmatube::expansion;

namespace {

constexpr double kRoundoff = 1e-14;  // sums of a handful of squared coefficients

int row_of(const MultiIndexSet& indices, std::initializer_list<int> alpha) {
  for (Eigen::Index r = 0; r < indices.rows(); ++r) {
    int k = 0;
    bool same = true;
    for (int a : alpha) same = same && indices(r, k++) == a;
    if (same) return static_cast<int>(r);
  }
  return -1;
}

}  // namespace

TEST(GroupedSobol, ProductOfTwoGroupedInputsPlusAThird) {
  // Closed form: y = x1·x2 + x3 with x_i independent standard normals. In the
  // orthonormal Hermite basis y = ψ_(1,1,0) + ψ_(0,0,1), D = 2. Grouping {x1, x2}
  // (one [[uncertain]] vector normal) and {x3}: closed and total shares ½ and ½,
  // while the per-dimension first-order indices of x1 and x2 are 0 and their
  // total indices ½ (Sobol' 2001, closed indices of a subset).
  const MultiIndexSet indices = total_degree_set(3, 2);
  Eigen::MatrixXd c = Eigen::MatrixXd::Zero(indices.rows(), 1);
  c(row_of(indices, {1, 1, 0}), 0) = 1.0;
  c(row_of(indices, {0, 0, 1}), 0) = 1.0;
  const GroupedSobol g = grouped_sobol(indices, c, {{0, 1}, {2}}, nullptr, 0.95);
  EXPECT_NEAR(g.first(0, 0), 0.5, kRoundoff);
  EXPECT_NEAR(g.first(0, 1), 0.5, kRoundoff);
  EXPECT_NEAR(g.total(0, 0), 0.5, kRoundoff);
  EXPECT_NEAR(g.total(0, 1), 0.5, kRoundoff);
  const Eigen::MatrixXd first = sobol_first_order(indices, c), total = sobol_total(indices, c);
  EXPECT_NEAR(first(0, 0), 0.0, kRoundoff);
  EXPECT_NEAR(first(0, 1), 0.0, kRoundoff);
  EXPECT_NEAR(total(0, 0), 0.5, kRoundoff);
  EXPECT_TRUE(std::isnan(g.first_lower(0, 0)));  // no covariance given
}

TEST(GroupedSobol, InteractionAcrossGroupsCountsInTotalsOnly) {
  // Closed form: y = x1 + x2 + x1·x3 (standard normals), D = 3, groups {x1}, {x2, x3}:
  // closed S_{1} = 1/3, S_{2,3} = 1/3; totals ST_{1} = 2/3, ST_{2,3} = 2/3.
  const MultiIndexSet indices = total_degree_set(3, 2);
  Eigen::MatrixXd c = Eigen::MatrixXd::Zero(indices.rows(), 1);
  c(row_of(indices, {1, 0, 0}), 0) = 1.0;
  c(row_of(indices, {0, 1, 0}), 0) = 1.0;
  c(row_of(indices, {1, 0, 1}), 0) = 1.0;
  const GroupedSobol g = grouped_sobol(indices, c, {{0}, {1, 2}}, nullptr, 0.95);
  EXPECT_NEAR(g.first(0, 0), 1.0 / 3, kRoundoff);
  EXPECT_NEAR(g.first(0, 1), 1.0 / 3, kRoundoff);
  EXPECT_NEAR(g.total(0, 0), 2.0 / 3, kRoundoff);
  EXPECT_NEAR(g.total(0, 1), 2.0 / 3, kRoundoff);
}

TEST(GroupedSobol, DeltaMethodIntervalsCoverAtTheirNominalRate) {
  // y = x1·x2 + x3 + noise, noise ~ N(0, 0.3²), fitted by least squares on 60
  // seeded standard-normal points with the total-degree-2 basis, 400 seeded
  // repetitions. The 90 % delta-method interval of the grouped closed index
  // (true value ½) must cover it in about 90 % of the repetitions: the
  // binomial(400, 0.9) count lies in [345, 375] with probability 0.99
  // (scipy.stats.binom(400, 0.9).cdf(344) = 0.0066, 1 − cdf(375) = 0.0031).
  const std::vector<germ::FamilySpec> families(3, germ::FamilySpec{});
  const MultiIndexSet indices = total_degree_set(3, 2);
  constexpr int kPoints = 60, kRepetitions = 400;
  constexpr double kNoise = 0.3, kConfidence = 0.9;
  const CounterRng rng(20261203ULL);
  int covered_first = 0, covered_total = 0;
  for (int rep = 0; rep < kRepetitions; ++rep) {
    Eigen::MatrixXd x(kPoints, 3);
    Eigen::MatrixXd y(kPoints, 1);
    for (int i = 0; i < kPoints; ++i) {
      const std::uint64_t sample = static_cast<std::uint64_t>(rep) * kPoints + static_cast<std::uint64_t>(i);
      for (int j = 0; j < 3; ++j) x(i, j) = rng.normal(sample, static_cast<std::uint64_t>(j));
      y(i, 0) = x(i, 0) * x(i, 1) + x(i, 2) + kNoise * rng.normal(sample, 3);
    }
    const RegressionProjection fit = regression_on_points(families, indices, x);
    const Eigen::MatrixXd coefficients = fit.matrix * y;
    const CoefficientCovariance cov = linear_fit_covariance(fit.matrix, fit.basis, y, coefficients);
    const GroupedSobol g = grouped_sobol(indices, coefficients, {{0, 1}, {2}}, &cov, kConfidence);
    if (g.first_lower(0, 0) <= 0.5 && 0.5 <= g.first_upper(0, 0)) ++covered_first;
    if (g.total_lower(0, 1) <= 0.5 && 0.5 <= g.total_upper(0, 1)) ++covered_total;
  }
  EXPECT_GE(covered_first, 345);
  EXPECT_LE(covered_first, 375);
  EXPECT_GE(covered_total, 345);
  EXPECT_LE(covered_total, 375);
}

TEST(GroupedSobol, NoiseFreeFitOfAnExactPolynomialHasZeroWidthIntervals) {
  // A polynomial inside the basis is reproduced exactly: residuals vanish, so
  // the delta-method interval collapses onto the closed-form value ½.
  const std::vector<germ::FamilySpec> families(3, germ::FamilySpec{});
  const MultiIndexSet indices = total_degree_set(3, 2);
  const CounterRng rng(7ULL);
  Eigen::MatrixXd x(40, 3), y(40, 1);
  for (int i = 0; i < 40; ++i) {
    for (int j = 0; j < 3; ++j) x(i, j) = rng.normal(static_cast<std::uint64_t>(i), static_cast<std::uint64_t>(j));
    y(i, 0) = x(i, 0) * x(i, 1) + x(i, 2);
  }
  const RegressionProjection fit = regression_on_points(families, indices, x);
  const Eigen::MatrixXd coefficients = fit.matrix * y;
  const CoefficientCovariance cov = linear_fit_covariance(fit.matrix, fit.basis, y, coefficients);
  const GroupedSobol g = grouped_sobol(indices, coefficients, {{0, 1}, {2}}, &cov, 0.95);
  constexpr double kFitRoundoff = 1e-10;  // least squares on 40 points, condition ~10
  EXPECT_NEAR(g.first(0, 0), 0.5, kFitRoundoff);
  EXPECT_NEAR(g.first_lower(0, 0), 0.5, kFitRoundoff);
  EXPECT_NEAR(g.first_upper(0, 0), 0.5, kFitRoundoff);
}
