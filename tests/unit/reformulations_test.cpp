// SPDX-License-Identifier: MIT
// Moment reformulations: Cantelli's bound is attained by a two-point distribution
// (Cantelli 1928), the Gaussian one is exact for normal clearances.
#include "sigmatube/constraints/reformulations.h"

#include <gtest/gtest.h>

#include <boost/math/distributions/normal.hpp>
#include <cmath>

#include "sigmatube/constraints/violation_statistics.h"

namespace sigmatube::constraints {
namespace {

// Sample moments of a two-point sample of 1000 values reproduce μ and σ up to
// rounding in the sums (1000 terms of size ~10).
constexpr double kMomentTolerance = 1e-11;

// X = μ − σk with probability ε, μ + σ/k with probability 1 − ε, k = √((1−ε)/ε):
// E X = μ, sd X = σ, P(X ≤ μ − kσ) = ε (Cantelli 1928, the extremal distribution).
Eigen::VectorXd two_point_sample(double mu, double sigma, double epsilon, int n) {
  const double k = std::sqrt((1.0 - epsilon) / epsilon);
  const int low = static_cast<int>(std::lround(epsilon * n));
  Eigen::VectorXd x(n);
  for (int i = 0; i < n; ++i) x[i] = i < low ? mu - sigma * k : mu + sigma / k;
  return x;
}

TEST(Reformulations, CantelliIsAttainedByTheTwoPointDistribution) {
  const double epsilon = 0.01, sigma = 2.0;
  const double k = cantelli_backoff_factor(epsilon);
  EXPECT_DOUBLE_EQ(k, std::sqrt(99.0));
  // At the boundary μ = kσ: the low point sits exactly on c = 0.
  const double mu = k * sigma;
  const Eigen::VectorXd x = two_point_sample(mu, sigma, epsilon, 1000);
  const double mean = x.mean();
  const double sd = std::sqrt((x.array() - mean).square().sum() / x.size());  // population sd of the distribution
  EXPECT_NEAR(mean, mu, kMomentTolerance);
  EXPECT_NEAR(sd, sigma, kMomentTolerance);
  EXPECT_NEAR(x.minCoeff(), 0.0, kMomentTolerance);
  EXPECT_EQ((x.array() <= x.minCoeff()).count(), 10);  // P(X ≤ μ − kσ) = ε exactly
  // The flag flips exactly at the boundary.
  const Eigen::VectorXd s = Eigen::VectorXd::Constant(1, sigma);
  EXPECT_EQ(cantelli_check(Eigen::VectorXd::Constant(1, mu), s, epsilon)[0], 1);
  EXPECT_EQ(cantelli_check(Eigen::VectorXd::Constant(1, std::nextafter(mu, 0.0)), s, epsilon)[0], 0);
  // Just below the boundary the bound cannot be certified, and rightly so: the
  // two-point distribution with the same (μ, σ) and any ε' in (ε, 1/(1 + (μ/σ)²)) has its
  // low point μ − σ√((1−ε')/ε') below 0 with probability ε' > ε.
  const double mu_below = mu * (1.0 - 1e-6);
  const double epsilon_limit = 1.0 / (1.0 + (mu_below / sigma) * (mu_below / sigma));
  const double epsilon_prime = 0.5 * (epsilon + epsilon_limit);
  const double k_prime = std::sqrt((1.0 - epsilon_prime) / epsilon_prime);
  EXPECT_LT(mu_below - sigma * k_prime, 0.0);
  EXPECT_GT(epsilon_prime, epsilon);
  EXPECT_EQ(cantelli_check(Eigen::VectorXd::Constant(1, mu_below), s, epsilon)[0], 0);
}

TEST(Reformulations, GaussianFactorIsTheNormalQuantile) {
  // Φ⁻¹(1 − 1e-3) = 3.090232306167813 (standard normal table; Boost reproduces it).
  EXPECT_NEAR(gaussian_backoff_factor(1e-3), 3.090232306167813, 1e-12);
  // For normal c ~ N(μ, σ²) with μ = Φ⁻¹(1−ε)σ, P(c < 0) = ε exactly: flag 1 there, 0 just below.
  const double epsilon = 1e-3, sigma = 0.5;
  const double mu = gaussian_backoff_factor(epsilon) * sigma;
  const boost::math::normal_distribution<double> c(mu, sigma);
  EXPECT_NEAR(boost::math::cdf(c, 0.0), epsilon, 1e-15);
  const Eigen::VectorXd s = Eigen::VectorXd::Constant(1, sigma);
  EXPECT_EQ(gaussian_check(Eigen::VectorXd::Constant(1, mu), s, epsilon)[0], 1);
  EXPECT_EQ(gaussian_check(Eigen::VectorXd::Constant(1, std::nextafter(mu, 0.0)), s, epsilon)[0], 0);
}

TEST(Reformulations, DisagreementFlagsGaussianOptimismOnTheTwoPointDistribution) {
  // A two-point clearance with ε' = 0.02 > ε = 0.01: Gaussian check passes (μ/σ =
  // 7 > Φ⁻¹(0.99) = 2.33) while 2% of samples violate — the dangerous case.
  const double epsilon = 0.01, epsilon_prime = 0.02, sigma = 1.0;
  const double k_prime = std::sqrt((1.0 - epsilon_prime) / epsilon_prime);  // 7
  const double mu = k_prime * sigma * (1.0 - 1e-3);                         // low point just below 0
  const Eigen::VectorXd x = two_point_sample(mu, sigma, epsilon_prime, 1000);
  const Eigen::VectorXd m = Eigen::VectorXd::Constant(1, mu), s = Eigen::VectorXd::Constant(1, sigma);
  const auto gaussian = gaussian_check(m, s, epsilon);
  const auto cantelli = cantelli_check(m, s, epsilon);
  EXPECT_EQ(gaussian[0], 1);
  EXPECT_EQ(cantelli[0], 0);  // √99 ≈ 9.95 > 6.99
  const Eigen::VectorXd p = Eigen::VectorXd::Constant(1, static_cast<double>((x.array() < 0).count()) / x.size());
  EXPECT_DOUBLE_EQ(p[0], 0.02);
  const auto found = find_reformulation_disagreements(Eigen::VectorXd::Constant(1, 3.0), gaussian, cantelli, p, epsilon);
  ASSERT_EQ(found.size(), 1u);
  EXPECT_EQ(found[0].kind, ReformulationDisagreement::Kind::gaussian_optimistic);
  EXPECT_NE(found[0].describe().find("Gaussian"), std::string::npos);
  // NaN (outside the window) is never a disagreement.
  const Eigen::VectorXd nan = Eigen::VectorXd::Constant(1, std::nan(""));
  EXPECT_TRUE(find_reformulation_disagreements(Eigen::VectorXd::Constant(1, 3.0), gaussian, cantelli, nan, epsilon).empty());
}

}  // namespace
}  // namespace sigmatube::constraints
