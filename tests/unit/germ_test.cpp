// SPDX-License-Identifier: MIT
#include "sigmatube/germ/germ.h"

#include <gtest/gtest.h>

#include <boost/math/distributions/beta.hpp>
#include <boost/math/distributions/gamma.hpp>
#include <boost/math/distributions/lognormal.hpp>
#include <boost/math/distributions/normal.hpp>
#include <boost/math/distributions/triangular.hpp>
#include <boost/math/distributions/uniform.hpp>
#include <cmath>
#include <cstdio>
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "sigmatube/core/counter_rng.h"
#include "sigmatube/core/error.h"
#include "sigmatube/germ/karhunen_loeve.h"

namespace sigmatube::germ {
namespace {
using casefile::DistributionKind;
using casefile::KernelKind;
using casefile::UncertainOptions;

// A hand-made target space: three states, two inputs, six parameters and a
// non-uniform disturbance grid (invented).
TargetSpace test_space() {
  TargetSpace space;
  space.states = {"x", "y", "vx"};
  space.inputs = {"ax", "ay"};
  space.parameters = {"k", "m", "drag", "mass", "gain", "lag"};
  space.disturbance_times = {0.0, 1.0, 3.0, 6.0};
  return space;
}

model::Perturbation nominal_perturbation() {
  model::Perturbation p;
  p.initial_offset = Eigen::Vector3d(0.1, 0.2, 0.3);
  p.parameters.resize(6);
  p.parameters << 10, 20, 30, 40, 50, 60;
  p.input_scale = Eigen::Vector2d(1.0, 1.0);
  p.input_bias = Eigen::Vector2d(0.001, 0.0);
  return p;
}

UncertainOptions entry(std::string name, std::string target, DistributionKind kind) {
  UncertainOptions u;
  u.name = std::move(name);
  u.applies_to = {std::move(target)};
  u.distribution = kind;
  u.where = {"case.toml", 12, "uncertain[0]"};
  return u;
}

// ---------------------------------------------------------------------------
// Sampled moments of every mapped distribution against closed forms.

constexpr std::uint64_t kSeed = 20261201;
constexpr int kSamples = 200000;
// Sample means and variances are asymptotically normal (CLT); five standard
// errors is a two-sided false-alarm rate of about 6e-7 per check (common practice).
constexpr double kStandardErrors = 5.0;

struct Moments {
  double mean, variance;
};

// Mean and variance of x over kSamples CounterRng points of a one-input germ,
// checked against the reference with CLT standard errors estimated from the
// sample itself (the variance's standard error needs the fourth central moment).
void expect_moments(const UncertainOptions& input, Moments expected) {
  const Germ germ = Germ::build({input}, test_space());
  ASSERT_EQ(germ.dimension(), 1);
  std::vector<double> x(kSamples);
  double z = 0.0, xi = 0.0;
  for (int s = 0; s < kSamples; ++s) {
    germ.sample_standard_normal(kSeed, s, &z);
    germ.from_standard_normal(&z, &xi);
    x[s] = germ.physical_values(&xi).at(0).value;
  }
  double mean = 0.0;
  for (double v : x) mean += v;
  mean /= kSamples;
  double m2 = 0.0, m4 = 0.0;
  for (double v : x) {
    const double d = (v - mean) * (v - mean);
    m2 += d;
    m4 += d * d;
  }
  m2 /= kSamples;
  m4 /= kSamples;
  const double variance = m2 * kSamples / (kSamples - 1.0);
  const double mean_error = std::sqrt(expected.variance / kSamples);
  const double variance_error = std::sqrt((m4 - m2 * m2) / kSamples);
  std::printf("%-18s mean %.6g (exact %.6g, %.2f SE, rel %.1e)  variance %.6g (exact %.6g, %.2f SE, rel %.1e)\n",
              input.name.c_str(), mean, expected.mean, (mean - expected.mean) / mean_error,
              std::abs(mean - expected.mean) / std::abs(expected.mean), variance, expected.variance,
              (variance - expected.variance) / variance_error,
              std::abs(variance - expected.variance) / expected.variance);
  EXPECT_NEAR(mean, expected.mean, kStandardErrors * mean_error) << input.name;
  EXPECT_NEAR(variance, expected.variance, kStandardErrors * variance_error) << input.name;
}

template <class Distribution>
Moments boost_moments(const Distribution& d) {
  return {boost::math::mean(d), boost::math::variance(d)};
}

// Runs SciPy (Debian's python3-scipy) and reads two numbers it prints.
Moments scipy_moments(const std::string& expression) {
  const std::string command = std::string(SIGMATUBE_PYTHON) +
                              " -c \"from scipy import stats; m, v = " + expression +
                              "; print(repr(float(m)), repr(float(v)))\"";
  std::unique_ptr<FILE, int (*)(FILE*)> pipe(popen(command.c_str(), "r"), pclose);
  if (!pipe) throw std::runtime_error("cannot run " + command);
  Moments m{};
  if (std::fscanf(pipe.get(), "%lf %lf", &m.mean, &m.variance) != 2)
    throw std::runtime_error("no numbers from " + command);
  return m;
}

TEST(GermMoments, ScalarNormalMatchesBoostNormal) {
  auto u = entry("normal", "parameter.k", DistributionKind::normal);
  u.mean = {3.0};
  u.std = {0.4};
  expect_moments(u, boost_moments(boost::math::normal_distribution<double>(3.0, 0.4)));
}

TEST(GermMoments, UniformMatchesBoostUniform) {
  auto u = entry("uniform", "input_scale.ax", DistributionKind::uniform);
  u.low = 0.97;
  u.high = 1.03;
  expect_moments(u, boost_moments(boost::math::uniform_distribution<double>(0.97, 1.03)));
}

TEST(GermMoments, BetaOnAnIntervalMatchesBoostBeta) {
  // x = low + (high − low)·B, B ~ Beta(α, β): mean and variance scale accordingly.
  auto u = entry("beta", "parameter.k", DistributionKind::beta);
  u.alpha = 2.0;
  u.beta = 5.0;
  u.low = -1.0;
  u.high = 3.0;
  const boost::math::beta_distribution<double> b(2.0, 5.0);
  expect_moments(u, {-1.0 + 4.0 * boost::math::mean(b), 16.0 * boost::math::variance(b)});
}

TEST(GermMoments, GammaMatchesBoostGamma) {
  auto u = entry("gamma", "parameter.k", DistributionKind::gamma);
  u.shape = 2.5;
  u.scale = 0.3;
  expect_moments(u, boost_moments(boost::math::gamma_distribution<double>(2.5, 0.3)));
}

TEST(GermMoments, LognormalMatchesBoostLognormal) {
  auto u = entry("lognormal", "parameter.k", DistributionKind::lognormal);
  u.mu = 0.5;
  u.sigma = 0.25;
  expect_moments(u, boost_moments(boost::math::lognormal_distribution<double>(0.5, 0.25)));
}

TEST(GermMoments, TriangularMatchesBoostTriangular) {
  auto u = entry("triangular", "parameter.k", DistributionKind::triangular);
  u.low = 1.0;
  u.mode = 1.5;
  u.high = 4.0;
  expect_moments(u, boost_moments(boost::math::triangular_distribution<double>(1.0, 1.5, 4.0)));
}

TEST(GermMoments, TruncatedNormalMatchesScipyTruncnorm) {
  // Reference: scipy.stats.truncnorm (bounds in standard deviations from the mean).
  auto u = entry("truncnorm-mid", "parameter.k", DistributionKind::truncated_normal);
  u.mean = {2.0};
  u.std = {0.5};
  u.low = 1.2;
  u.high = 3.5;
  expect_moments(u, scipy_moments("stats.truncnorm.stats(-1.6, 3.0, loc=2.0, scale=0.5, moments='mv')"));
}

TEST(GermMoments, TruncatedNormalFarInTheUpperTailMatchesScipyTruncnorm) {
  // Window 6 to 8 standard deviations above the mean: Φ(α) rounds to 1 there, so
  // only the tail-safe formulas keep the map inside the window with the right shape.
  auto u = entry("truncnorm-tail", "parameter.k", DistributionKind::truncated_normal);
  u.mean = {0.0};
  u.std = {1.0};
  u.low = 6.0;
  u.high = 8.0;
  expect_moments(u, scipy_moments("stats.truncnorm.stats(6.0, 8.0, moments='mv')"));
}

TEST(GermMoments, TruncatedNormalFarInTheLowerTailMatchesScipyTruncnorm) {
  auto u = entry("truncnorm-lower", "parameter.k", DistributionKind::truncated_normal);
  u.mean = {1.0};
  u.std = {2.0};
  u.low = -15.0;
  u.high = -11.0;
  expect_moments(u, scipy_moments("stats.truncnorm.stats(-8.0, -6.0, loc=1.0, scale=2.0, moments='mv')"));
}

TEST(GermMoments, NarrowTruncatedNormalTakesAUniformGermAndMatchesScipyTruncnorm) {
  // Density ratio over [−1, 1.5] standard deviations: exp(−(1.5² − 0)/2) ≈ 0.32 ≥ 0.2.
  auto u = entry("truncnorm-flat", "parameter.k", DistributionKind::truncated_normal);
  u.mean = {10.0};
  u.std = {3.0};
  u.low = 7.0;
  u.high = 14.5;
  EXPECT_EQ(Germ::build({u}, test_space()).specs()[0].family, Family::legendre);
  expect_moments(u, scipy_moments("stats.truncnorm.stats(-1.0, 1.5, loc=10.0, scale=3.0, moments='mv')"));
}

TEST(GermMoments, NarrowTruncatedNormalFarInTheTailMatchesScipyTruncnorm) {
  // [6, 6.2] standard deviations: ratio exp(−(6.2² − 6²)/2) ≈ 0.30, a uniform germ in the far tail.
  auto u = entry("truncnorm-flat-tail", "parameter.k", DistributionKind::truncated_normal);
  u.mean = {0.0};
  u.std = {1.0};
  u.low = 6.0;
  u.high = 6.2;
  EXPECT_EQ(Germ::build({u}, test_space()).specs()[0].family, Family::legendre);
  expect_moments(u, scipy_moments("stats.truncnorm.stats(6.0, 6.2, moments='mv')"));
}

// ---------------------------------------------------------------------------
// Vector normal.

UncertainOptions position_entry() {
  UncertainOptions u;
  u.name = "nav-position";
  u.applies_to = {"initial.x", "initial.y", "initial.vx"};
  u.distribution = DistributionKind::normal;
  u.mean = {1.0, -2.0, 0.5};
  u.covariance = {{0.25, 0.06, -0.01}, {0.06, 0.16, 0.02}, {-0.01, 0.02, 0.04}};
  u.where = {"case.toml", 30, "uncertain[1]"};
  return u;
}

TEST(GermVectorNormal, CholeskyFactorReproducesTheCovariance) {
  const UncertainOptions u = position_entry();
  const Germ germ = Germ::build({u}, test_space());
  ASSERT_EQ(germ.dimension(), 3);
  EXPECT_EQ(germ.names(), (std::vector<std::string>{"nav-position[0]", "nav-position[1]", "nav-position[2]"}));
  // Column k of L is the response to the unit germ point e_k, less the mean.
  Eigen::Matrix3d factor;
  for (int k = 0; k < 3; ++k) {
    double xi[3] = {0, 0, 0};
    xi[k] = 1.0;
    const auto values = germ.physical_values(xi);
    for (int i = 0; i < 3; ++i) factor(i, k) = values[i].value - u.mean[i];
  }
  // Closed form: L Lᵀ = Σ; round-off of a 3x3 Cholesky is a few ulps of max|Σ| = 0.25.
  for (int i = 0; i < 3; ++i)
    for (int j = 0; j < 3; ++j) EXPECT_NEAR((factor * factor.transpose())(i, j), u.covariance[i][j], 1e-12);
  EXPECT_EQ(factor(0, 1), 0.0);  // lower triangular: component 0 depends on ξ_0 only
}

TEST(GermVectorNormal, SampleCovarianceMatchesTheGivenCovariance) {
  const UncertainOptions u = position_entry();
  const Germ germ = Germ::build({u}, test_space());
  Eigen::Vector3d sum = Eigen::Vector3d::Zero();
  Eigen::Matrix3d cross = Eigen::Matrix3d::Zero();
  double z[3], xi[3];
  for (int s = 0; s < kSamples; ++s) {
    germ.sample_standard_normal(kSeed, s, z);
    germ.from_standard_normal(z, xi);
    const auto values = germ.physical_values(xi);
    const Eigen::Vector3d x(values[0].value, values[1].value, values[2].value);
    sum += x;
    cross += x * x.transpose();
  }
  const Eigen::Vector3d mean = sum / kSamples;
  const Eigen::Matrix3d covariance = (cross - kSamples * mean * mean.transpose()) / (kSamples - 1.0);
  for (int i = 0; i < 3; ++i) {
    EXPECT_NEAR(mean(i), u.mean[i], kStandardErrors * std::sqrt(u.covariance[i][i] / kSamples));
    for (int j = 0; j < 3; ++j) {
      // Var of a Gaussian sample covariance: (Σ_ii Σ_jj + Σ_ij²)/N (Anderson, "An
      // Introduction to Multivariate Statistical Analysis", 1958, §3.3).
      const double se = std::sqrt((u.covariance[i][i] * u.covariance[j][j] + u.covariance[i][j] * u.covariance[i][j]) /
                                  kSamples);
      std::printf("covariance[%d][%d] sample %.6f given %.6f (%.2f SE)\n", i, j, covariance(i, j), u.covariance[i][j],
                  (covariance(i, j) - u.covariance[i][j]) / se);
      EXPECT_NEAR(covariance(i, j), u.covariance[i][j], kStandardErrors * se);
    }
  }
}

// ---------------------------------------------------------------------------
// apply(): every target kind lands in its slot with the hand-computed value.

TEST(GermApply, EveryTargetKindLandsInItsSlot) {
  std::vector<UncertainOptions> inputs;
  auto pos = entry("pos", "initial.x", DistributionKind::normal);
  pos.mean = {1.0};
  pos.std = {2.0};
  inputs.push_back(pos);
  auto gain = entry("gain", "parameter.k", DistributionKind::uniform);
  gain.low = 2.0;
  gain.high = 4.0;
  inputs.push_back(gain);
  auto scale = entry("scale", "input_scale.ay", DistributionKind::uniform);
  scale.low = 0.97;
  scale.high = 1.03;
  inputs.push_back(scale);
  auto bias = entry("bias", "input_bias.ax", DistributionKind::normal);
  bias.mean = {0.01};
  bias.std = {0.002};
  inputs.push_back(bias);
  auto step = entry("step", "disturbance.y", DistributionKind::normal);
  step.mean = {0.0};
  step.std = {1e-3};
  inputs.push_back(step);
  auto drift = entry("drift", "disturbance.vx", DistributionKind::gaussian_process);
  drift.kernel = KernelKind::exponential;
  drift.std = {0.5};
  drift.correlation_time_in_seconds = 2.0;
  drift.modes = 4;  // every mode of the 4-point grid
  inputs.push_back(drift);
  auto pair = entry("pair", "initial.y", DistributionKind::normal);
  pair.applies_to = {"initial.y", "initial.vx"};
  pair.mean = {0.5, -0.5};
  pair.covariance = {{4.0, 2.0}, {2.0, 5.0}};  // L = [[2, 0], [1, 2]]
  inputs.push_back(pair);

  const TargetSpace space = test_space();
  const Germ germ = Germ::build(inputs, space);
  ASSERT_EQ(germ.dimension(), 11);
  EXPECT_EQ(germ.names(), (std::vector<std::string>{"pos", "gain", "scale", "bias", "step", "drift[0]", "drift[1]",
                                                    "drift[2]", "drift[3]", "pair[0]", "pair[1]"}));
  EXPECT_EQ(germ.specs()[1].family, Family::legendre);
  EXPECT_EQ(germ.specs()[0].family, Family::hermite);
  ASSERT_EQ(germ.karhunen_loeve().size(), 1u);
  EXPECT_EQ(germ.karhunen_loeve()[0].modes, 4);
  EXPECT_DOUBLE_EQ(germ.karhunen_loeve()[0].captured_variance_fraction, 1.0);

  const double xi[11] = {0.5, -0.5, 1.0, -1.0, 2.0, 0.3, -0.7, 1.1, 0.2, 1.0, 2.0};
  model::Perturbation p = nominal_perturbation();
  germ.apply(xi, p);

  // By hand: x = 1 + 2·0.5 = 2 added to 0.1; y: 0.5 + 2·1 = 2.5 added to 0.2;
  // vx: −0.5 + 1·1 + 2·2 = 4.5 added to 0.3.
  EXPECT_DOUBLE_EQ(p.initial_offset(0), 2.1);
  EXPECT_DOUBLE_EQ(p.initial_offset(1), 2.7);
  EXPECT_DOUBLE_EQ(p.initial_offset(2), 4.8);
  // k replaced by 3 + 1·(−0.5) = 2.5; the others untouched.
  EXPECT_DOUBLE_EQ(p.parameters(0), 2.5);
  EXPECT_DOUBLE_EQ(p.parameters(1), 20.0);
  // ay scale replaced by 1 + 0.03·1; ax scale untouched.
  EXPECT_DOUBLE_EQ(p.input_scale(1), 1.03);
  EXPECT_DOUBLE_EQ(p.input_scale(0), 1.0);
  // ax bias: 0.001 + (0.01 − 0.002) = 0.009.
  EXPECT_DOUBLE_EQ(p.input_bias(0), 0.009);
  EXPECT_DOUBLE_EQ(p.input_bias(1), 0.0);
  // Disturbance allocated [4 times, 3 states]; y gets the constant 2e-3; x none.
  ASSERT_EQ(p.disturbance.rows(), 4);
  ASSERT_EQ(p.disturbance.cols(), 3);
  const auto modes = karhunen_loeve_modes(KernelKind::exponential, 0.5, 2.0, space.disturbance_times);
  for (int i = 0; i < 4; ++i) {
    EXPECT_EQ(p.disturbance(i, 0), 0.0);
    EXPECT_DOUBLE_EQ(p.disturbance(i, 1), 2e-3);
    double expected = 0.0;
    for (int k = 0; k < 4; ++k) expected += std::sqrt(modes.eigenvalues(k)) * modes.eigenfunctions(i, k) * xi[5 + k];
    EXPECT_NEAR(p.disturbance(i, 2), expected, 1e-14);
  }

  // With every mode kept the basis B (column k = √λ_k φ_k) gives Cov[w] = B Bᵀ = the
  // kernel matrix σ² exp(−|t_i − t_j|/ℓ) written out here from its definition.
  const Eigen::MatrixXd& basis = germ.karhunen_loeve_basis(0);
  const Eigen::MatrixXd covariance = basis * basis.transpose();
  for (int i = 0; i < 4; ++i)
    for (int j = 0; j < 4; ++j)
      EXPECT_NEAR(covariance(i, j),
                  0.25 * std::exp(-std::abs(space.disturbance_times[i] - space.disturbance_times[j]) / 2.0), 1e-14);

  // A second application to a reset perturbation reuses the storage (no reallocation).
  const double* storage = p.disturbance.data();
  p.disturbance.setZero();
  germ.apply(xi, p);
  EXPECT_EQ(p.disturbance.data(), storage);
  EXPECT_DOUBLE_EQ(p.disturbance(3, 1), 2e-3);
}

TEST(GermApply, MappedScalarsAtChosenGermPoints) {
  // Values at germ points where the maps have closed forms.
  auto beta = entry("beta", "parameter.k", DistributionKind::beta);
  beta.alpha = 3.0;
  beta.beta = 3.0;  // symmetric: the median ξ = 0 maps to the midpoint
  beta.low = 2.0;
  beta.high = 6.0;
  auto gamma = entry("gamma", "parameter.m", DistributionKind::gamma);
  gamma.shape = 2.0;
  gamma.scale = 0.5;
  auto lognormal = entry("lognormal", "parameter.drag", DistributionKind::lognormal);
  lognormal.mu = 0.1;
  lognormal.sigma = 0.2;
  auto truncated = entry("truncated", "parameter.mass", DistributionKind::truncated_normal);
  truncated.mean = {5.0};
  truncated.std = {1.0};
  truncated.low = 3.0;
  truncated.high = 7.0;  // symmetric window: the median ξ = 0 maps to the mean
  auto triangle = entry("triangle", "parameter.gain", DistributionKind::triangular);
  triangle.low = 0.0;
  triangle.mode = 1.0;
  triangle.high = 1.0;
  const Germ germ = Germ::build({beta, gamma, lognormal, truncated, triangle}, test_space());
  EXPECT_EQ(germ.specs()[0], (FamilySpec{Family::jacobi, 2.0, 2.0}));
  EXPECT_EQ(germ.specs()[1], (FamilySpec{Family::laguerre, 1.0, 0.0}));
  const double xi[5] = {0.0, 2.0, 1.0, 0.0, 0.0};
  model::Perturbation p = nominal_perturbation();
  germ.apply(xi, p);
  EXPECT_DOUBLE_EQ(p.parameters(0), 4.0);
  EXPECT_DOUBLE_EQ(p.parameters(1), 1.0);                  // scale·ξ = 0.5·2
  EXPECT_DOUBLE_EQ(p.parameters(2), std::exp(0.1 + 0.2));  // exp(mu + sigma·ξ)
  EXPECT_NEAR(p.parameters(3), 5.0, 1e-14);
  // Triangular (0, 1, 1) has F(x) = x², so the median is √½.
  EXPECT_NEAR(p.parameters(4), std::sqrt(0.5), 1e-14);
  EXPECT_DOUBLE_EQ(p.parameters(5), 60.0);
}

TEST(GermApply, GaussianProcessTruncatedByEnergyKeepsTheFewestModes) {
  auto drift = entry("drift", "disturbance.vx", DistributionKind::gaussian_process);
  drift.kernel = KernelKind::squared_exponential;
  drift.std = {0.1};
  drift.correlation_time_in_seconds = 1.5;
  drift.energy = 0.95;
  TargetSpace space = test_space();
  space.disturbance_times.clear();
  for (int i = 0; i <= 60; ++i) space.disturbance_times.push_back(0.2 * i);
  const Germ germ = Germ::build({drift}, space);
  const auto modes = karhunen_loeve_modes(KernelKind::squared_exponential, 0.1, 1.5, space.disturbance_times);
  const int kept = germ.karhunen_loeve()[0].modes;
  EXPECT_EQ(germ.dimension(), kept);
  EXPECT_GE(germ.karhunen_loeve()[0].captured_variance_fraction, 0.95);
  ASSERT_GE(kept, 2);
  EXPECT_LT(modes.cumulative_fraction(kept - 2), 0.95);
  EXPECT_EQ(germ.names().back(), "drift[" + std::to_string(kept - 1) + "]");
}

TEST(GermApply, TruncatedNormalStaysInItsWindowAtExtremeGermPoints) {
  // Windows whose end probabilities underflow in double (Φ(−45) ≈ 1e-442): the
  // map must still return a point of the closed window, never NaN or a throw.
  for (const auto& [low, high] : std::vector<std::pair<double, double>>{{-45.0, -37.0}, {37.0, 45.0}, {-1.0, 1.0},
                                                                          {37.0, 37.1}, {-3.0, 50.0}}) {
    auto u = entry("window", "parameter.k", DistributionKind::truncated_normal);
    u.mean = {0.0};
    u.std = {1.0};
    u.low = low;
    u.high = high;
    const Germ germ = Germ::build({u}, test_space());
    const bool uniform = germ.specs()[0].family == Family::legendre;
    for (double xi : uniform ? std::vector<double>{-1.0, -0.999, 0.0, 0.999, 1.0}
                             : std::vector<double>{-60.0, -8.0, 0.0, 8.0, 60.0}) {
      const double x = germ.physical_values(&xi).at(0).value;
      EXPECT_GE(x, low) << "window [" << low << ", " << high << "] xi " << xi;
      EXPECT_LE(x, high) << "window [" << low << ", " << high << "] xi " << xi;
    }
  }
}

// ---------------------------------------------------------------------------
// Bad input.

template <class F>
std::string input_error_of(F&& f) {
  try {
    f();
  } catch (const InputError& e) {
    return e.what();
  }
  return "(no InputError)";
}

TEST(GermBadInput, CovarianceNotPositiveDefiniteNamesTheInputAndWhere) {
  auto u = position_entry();
  u.covariance = {{1.0, 2.0, 0.0}, {2.0, 1.0, 0.0}, {0.0, 0.0, 1.0}};  // eigenvalues 3, −1, 1
  const std::string message = input_error_of([&] { Germ::build({u}, test_space()); });
  EXPECT_NE(message.find("case.toml:30"), std::string::npos) << message;
  EXPECT_NE(message.find("uncertain[1].covariance"), std::string::npos) << message;
  EXPECT_NE(message.find("nav-position"), std::string::npos) << message;
  EXPECT_NE(message.find("positive definite"), std::string::npos) << message;
}

TEST(GermBadInput, AsymmetricCovarianceIsRejected) {
  auto u = position_entry();
  u.covariance[0][1] = 0.07;
  const std::string message = input_error_of([&] { Germ::build({u}, test_space()); });
  EXPECT_NE(message.find("not symmetric"), std::string::npos) << message;
}

TEST(GermBadInput, NumbersInMessagesArePrintedAsWritten) {
  // 0.07 has no exact binary form; with 17 significant digits it would print
  // 0.070000000000000007. The message shows the shortest digits that read back
  // to the same double, i.e. the value as written in the case file.
  auto u = position_entry();
  u.covariance[0][1] = 0.07;
  const std::string message = input_error_of([&] { Germ::build({u}, test_space()); });
  EXPECT_NE(message.find("[1][0] = 0.06 but [0][1] = 0.07"), std::string::npos) << message;
  EXPECT_EQ(message.find("00000"), std::string::npos) << message;
}

TEST(GermBadInput, UnknownTargetSuggestsTheNearestName) {
  auto u = entry("pos", "initial.vz", DistributionKind::normal);
  u.mean = {0.0};
  u.std = {1.0};
  std::string message = input_error_of([&] { Germ::build({u}, test_space()); });
  EXPECT_NE(message.find("did you mean 'vx'"), std::string::npos) << message;
  EXPECT_NE(message.find("case.toml:12: uncertain[0].applies_to"), std::string::npos) << message;

  u.applies_to = {"paramter.k"};
  message = input_error_of([&] { Germ::build({u}, test_space()); });
  EXPECT_NE(message.find("did you mean 'parameter'"), std::string::npos) << message;

  u.applies_to = {"input_bias.throttle"};
  message = input_error_of([&] { Germ::build({u}, test_space()); });
  EXPECT_NE(message.find("known: ax, ay"), std::string::npos) << message;
}

TEST(GermBadInput, GaussianProcessOnANonDisturbanceTargetIsRejected) {
  auto u = entry("drift", "parameter.k", DistributionKind::gaussian_process);
  u.std = {1.0};
  u.correlation_time_in_seconds = 1.0;
  u.modes = 2;
  const std::string message = input_error_of([&] { Germ::build({u}, test_space()); });
  EXPECT_NE(message.find("disturbance.<state>"), std::string::npos) << message;
}

TEST(GermBadInput, ScalarInputWithSeveralTargetsAndDoubleReplacementAreRejected) {
  auto u = entry("gain", "parameter.k", DistributionKind::uniform);
  u.low = 1.0;
  u.high = 2.0;
  u.applies_to = {"parameter.k", "parameter.m"};
  EXPECT_NE(input_error_of([&] { Germ::build({u}, test_space()); }).find("exactly one target"), std::string::npos);
  u.applies_to = {"parameter.k"};
  auto v = u;
  v.name = "gain2";
  EXPECT_NE(input_error_of([&] { Germ::build({u, v}, test_space()); }).find("already set"), std::string::npos);
}

TEST(GermBadInput, MoreModesThanGridPointsIsRejected) {
  auto u = entry("drift", "disturbance.x", DistributionKind::gaussian_process);
  u.std = {1.0};
  u.correlation_time_in_seconds = 1.0;
  u.modes = 5;
  EXPECT_NE(input_error_of([&] { Germ::build({u}, test_space()); }).find("only 4 points"), std::string::npos);
}

// ---------------------------------------------------------------------------
// Determinism.

TEST(GermSampling, SameSeedAndSampleGiveTheSameStandardNormalsInAnyOrder) {
  auto u = position_entry();
  const Germ germ = Germ::build({u}, test_space());
  const CounterRng rng(kSeed);
  std::vector<std::array<double, 3>> forward(50), backward(50);
  for (int s = 0; s < 50; ++s) germ.sample_standard_normal(kSeed, s, forward[s].data());
  for (int s = 49; s >= 0; --s) germ.sample_standard_normal(kSeed, s, backward[s].data());
  for (int s = 0; s < 50; ++s)
    for (int j = 0; j < 3; ++j) {
      EXPECT_EQ(forward[s][j], backward[s][j]);
      EXPECT_EQ(forward[s][j], rng.normal(s, j));
    }
  std::array<double, 3> other{};
  germ.sample_standard_normal(kSeed + 1, 0, other.data());
  EXPECT_NE(other[0], forward[0][0]);
}

}  // namespace
}  // namespace sigmatube::germ
