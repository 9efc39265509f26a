// SPDX-License-Identifier: MIT
#include "sigmatube/germ/karhunen_loeve.h"

#include <gtest/gtest.h>

#include <boost/math/tools/roots.hpp>
#include <cmath>
#include <cstdio>
#include <numbers>
#include <vector>

namespace sigmatube::germ {
namespace {
using casefile::KernelKind;

// Analytic eigenvalues of the exponential kernel C(s, t) = σ² exp(−c|s − t|) on an
// interval of half-length a (Ghanem & Spanos, "Stochastic Finite Elements: A
// Spectral Approach", Springer 1991, §2.3.3):
//   λ = 2cσ² / (ω² + c²), ω the roots of  c − ω tan(ωa) = 0  (even modes)
//                                   and  ω + c tan(ωa) = 0  (odd modes), interleaved.
// With u = ωa both equations are multiplied through by cos u so they have no
// poles; root k (k = 0, 1, …) lies in (kπ/2, (k+1)π/2): even k solves
// c·a·cos u − u·sin u = 0, odd k solves u·cos u + c·a·sin u = 0.
std::vector<double> exponential_kernel_eigenvalues(double std, double correlation_time, double length, int count) {
  const double c = 1.0 / correlation_time;
  const double a = 0.5 * length;
  std::vector<double> eigenvalues;
  for (int k = 0; k < count; ++k) {
    const auto f = [&](double u) {
      return k % 2 == 0 ? c * a * std::cos(u) - u * std::sin(u) : u * std::cos(u) + c * a * std::sin(u);
    };
    const double lo = k * std::numbers::pi / 2.0, hi = (k + 1) * std::numbers::pi / 2.0;
    std::uintmax_t iterations = 200;
    const auto bracket =
        boost::math::tools::toms748_solve(f, lo, hi, boost::math::tools::eps_tolerance<double>(50), iterations);
    const double omega = 0.5 * (bracket.first + bracket.second) / a;
    eigenvalues.push_back(2.0 * c * std * std / (omega * omega + c * c));
  }
  return eigenvalues;
}

std::vector<double> uniform_grid(double length, int points) {
  std::vector<double> t(points);
  for (int i = 0; i < points; ++i) t[i] = length * i / (points - 1);
  return t;
}

// Points crowded towards t = 0, as a report grid refined near an event might be.
std::vector<double> graded_grid(double length, int points) {
  std::vector<double> t(points);
  for (int i = 0; i < points; ++i) {
    const double s = static_cast<double>(i) / (points - 1);
    t[i] = length * s * s * (3.0 - 2.0 * s) * 0.5 + length * s * 0.5;
  }
  return t;
}

// Trapezoid Nyström converges as O(h²) (its quadrature error): with h = T/1000 the
// first five modes come out near 1e-5 relative, while a mistake of order h in the
// weights (e.g. a full weight at an end point) would show at about 1e-3.
constexpr double kEigenvalueRelativeTolerance = 1e-4;
// A symmetric eigendecomposition reproduces its matrix to a few hundred ulps
// of the largest entry (common practice).
constexpr double kReconstructionTolerance = 1e-11;

TEST(KarhunenLoeve, ExponentialKernelMatchesGhanemSpanosEigenvaluesOnUniformGrid) {
  const double length = 10.0, std = 1.5, correlation_time = 2.0;
  const auto exact = exponential_kernel_eigenvalues(std, correlation_time, length, 5);
  const auto modes = karhunen_loeve_modes(KernelKind::exponential, std, correlation_time, uniform_grid(length, 1001));
  for (int k = 0; k < 5; ++k) {
    const double relative = std::abs(modes.eigenvalues(k) - exact[k]) / exact[k];
    std::printf("uniform grid mode %d: Nystrom %.10g  analytic %.10g  relative error %.3e\n", k,
                modes.eigenvalues(k), exact[k], relative);
    EXPECT_LT(relative, kEigenvalueRelativeTolerance) << "mode " << k;
  }
}

TEST(KarhunenLoeve, ExponentialKernelMatchesGhanemSpanosEigenvaluesOnGradedGrid) {
  const double length = 10.0, std = 1.5, correlation_time = 2.0;
  const auto exact = exponential_kernel_eigenvalues(std, correlation_time, length, 5);
  const auto modes = karhunen_loeve_modes(KernelKind::exponential, std, correlation_time, graded_grid(length, 1001));
  for (int k = 0; k < 5; ++k) {
    const double relative = std::abs(modes.eigenvalues(k) - exact[k]) / exact[k];
    std::printf("graded grid mode %d: Nystrom %.10g  analytic %.10g  relative error %.3e\n", k,
                modes.eigenvalues(k), exact[k], relative);
    EXPECT_LT(relative, kEigenvalueRelativeTolerance) << "mode " << k;
  }
}

TEST(KarhunenLoeve, CapturedFractionIsMonotoneAndOneWithAllModes) {
  for (const KernelKind kernel : {KernelKind::exponential, KernelKind::squared_exponential}) {
    const auto modes = karhunen_loeve_modes(kernel, 0.3, 1.5, graded_grid(8.0, 201));
    const Eigen::Index n = modes.cumulative_fraction.size();
    ASSERT_EQ(n, 201);
    for (Eigen::Index k = 1; k < n; ++k) {
      EXPECT_GE(modes.cumulative_fraction(k), modes.cumulative_fraction(k - 1));
      EXPECT_GE(modes.eigenvalues(k - 1), modes.eigenvalues(k));
    }
    EXPECT_EQ(modes.cumulative_fraction(n - 1), 1.0);
    // The trace of W^{1/2} C W^{1/2} is σ² Σ w_i = σ² T: the eigenvalues must add up to it.
    EXPECT_NEAR(modes.eigenvalues.sum(), 0.09 * 8.0, 1e-12 * 0.09 * 8.0);
    const int kept = modes_for_energy(modes, 0.95);
    EXPECT_GE(modes.cumulative_fraction(kept - 1), 0.95);
    if (kept > 1) EXPECT_LT(modes.cumulative_fraction(kept - 2), 0.95);
    EXPECT_EQ(modes_for_energy(modes, modes.cumulative_fraction(0)), 1);
  }
}

TEST(KarhunenLoeve, AllModesReconstructTheKernelMatrixAndAreWeightedOrthonormal) {
  const std::vector<double> times = graded_grid(6.0, 150);
  const Eigen::VectorXd w = trapezoid_weights(times);
  for (const KernelKind kernel : {KernelKind::exponential, KernelKind::squared_exponential}) {
    const double std = 0.7, correlation_time = 0.8;
    const auto modes = karhunen_loeve_modes(kernel, std, correlation_time, times);
    const Eigen::MatrixXd& phi = modes.eigenfunctions;
    // Mercer's theorem on the grid: Σ_k λ_k φ_k(t_i) φ_k(t_j) = C(t_i, t_j).
    const Eigen::MatrixXd reconstructed = phi * modes.eigenvalues.asDiagonal() * phi.transpose();
    double worst = 0.0;
    for (std::size_t i = 0; i < times.size(); ++i)
      for (std::size_t j = 0; j < times.size(); ++j)
        worst = std::max(worst, std::abs(reconstructed(i, j) -
                                         covariance_kernel(kernel, std, correlation_time, times[i], times[j])));
    EXPECT_LT(worst, kReconstructionTolerance * std * std);
    // Discrete form of ∫ φ_j φ_k dt = δ_jk.
    const Eigen::MatrixXd gram = phi.transpose() * w.asDiagonal() * phi;
    EXPECT_LT((gram - Eigen::MatrixXd::Identity(gram.rows(), gram.cols())).cwiseAbs().maxCoeff(), 1e-10);
  }
}

TEST(KarhunenLoeve, TrapezoidWeightsSumToTheIntervalAndRejectBadGrids) {
  const std::vector<double> times = {0.0, 1.0, 3.0, 3.5};
  const Eigen::VectorXd w = trapezoid_weights(times);
  EXPECT_DOUBLE_EQ(w(0), 0.5);
  EXPECT_DOUBLE_EQ(w(1), 1.5);
  EXPECT_DOUBLE_EQ(w(2), 1.25);
  EXPECT_DOUBLE_EQ(w(3), 0.25);
  EXPECT_THROW(trapezoid_weights({}), std::logic_error);
  EXPECT_THROW(trapezoid_weights({0.0, 2.0, 2.0}), std::logic_error);
}

}  // namespace
}  // namespace sigmatube::germ
