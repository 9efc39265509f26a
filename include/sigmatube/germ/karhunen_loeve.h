// SPDX-License-Identifier: MIT
#pragma once
// Karhunen–Loève expansion of a zero-mean stationary Gaussian process on a
// (possibly non-uniform) time grid t_0 < … < t_{n-1}:
//
//   w(t) = Σ_k √λ_k φ_k(t) ξ_k,   ξ_k ~ N(0, 1) independent,
//   ∫ C(s, t) φ_k(t) dt = λ_k φ_k(s),   ∫ φ_j φ_k dt = δ_jk
//
// (Ghanem & Spanos, "Stochastic Finite Elements: A Spectral Approach",
// Springer 1991, §2.3). The integral eigenproblem is discretized by the Nyström
// method with trapezoid weights w_i: with W = diag(w_i), the symmetric matrix
// A = W^{1/2} C W^{1/2} has eigenpairs (λ_k, v_k) and φ_k(t_i) = v_k,i / √w_i, so
// Σ_i w_i φ_j(t_i) φ_k(t_i) = δ_jk and Σ_k λ_k φ_k(t_i) φ_k(t_j) = C(t_i, t_j)
// exactly when every mode is kept.
//
// Kernels (ℓ = correlation time, σ = standard deviation):
//   exponential          C(s, t) = σ² exp(−|s − t| / ℓ)
//   squared-exponential  C(s, t) = σ² exp(−(s − t)² / (2ℓ²))
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/casefile/case_options.h"

// Layer germ/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::germ {

/// C(s, t) of the kernel; throws std::logic_error for std ≤ 0 or ℓ ≤ 0.
double covariance_kernel(casefile::KernelKind kernel, double std, double correlation_time_in_seconds, double s,
                         double t);

/// Trapezoid weights of a strictly increasing grid: w_0 = (t_1 − t_0)/2,
/// w_i = (t_{i+1} − t_{i−1})/2, w_{n−1} = (t_{n−1} − t_{n−2})/2; a single point gets 1.
/// Throws std::logic_error for an empty or non-increasing grid.
Eigen::VectorXd trapezoid_weights(const std::vector<double>& times);

/// Every discrete mode of the kernel on the grid, largest eigenvalue first.
struct KarhunenLoeveModes {
  Eigen::VectorXd eigenvalues;     // [n] λ_k, descending; round-off negatives clamped to 0
  Eigen::MatrixXd eigenfunctions;  // [n, n] column k = φ_k(t_i), Σ_i w_i φ_k(t_i)² = 1,
                                   // sign fixed so that the entry of largest magnitude is positive
  /// cumulative_fraction(k) = Σ_{j≤k} λ_j / Σ_j λ_j, nondecreasing, last entry 1.
  Eigen::VectorXd cumulative_fraction;
};

/// Nyström discretization of the kernel on `times` (method in the file comment).
/// Throws NumericalError if the eigensolver fails.
KarhunenLoeveModes karhunen_loeve_modes(casefile::KernelKind kernel, double std, double correlation_time_in_seconds,
                                        const std::vector<double>& times);

/// The fewest modes whose cumulative fraction reaches `energy` ∈ (0, 1], allowing
/// for round-off of kEnergyRoundoff in the cumulative sum.
int modes_for_energy(const KarhunenLoeveModes& modes, double energy);

/// Round-off allowed when comparing a cumulative variance fraction with the
/// requested energy: the sums carry a few ulps per term, far below 1e-12.
inline constexpr double kEnergyRoundoff = 1e-12;

}  // namespace sigmatube::germ
