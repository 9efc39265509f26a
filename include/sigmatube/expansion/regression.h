// SPDX-License-Identifier: MIT
#pragma once
// Least-squares polynomial chaos (Berveiller, Sudret & Lemaire, Eur. J. Comput.
// Mech. 15, 2006; Blatman & Sudret, J. Comput. Phys. 230, 2011). With the design
// matrix Ψ [N, P] on N ≥ 2P design points,
//   C = argmin ‖Ψ C − Y‖² = W Y,   W = (ΨᵀΨ)⁻¹Ψᵀ,
// computed by column-pivoting Householder QR of Ψ (rank checked). The hat matrix
// H = Ψ W gives the closed-form leave-one-out residuals
//   e_i = r_i / (1 − h_i),  r = Y − Ψ C,  h_i = H_ii,
// and the relative leave-one-out error per column
//   ε_LOO = mean_i(e_i²) / var(Y)   (var with N − 1 in the denominator).
#include <cstdint>
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/casefile/case_options.h"
#include "sigmatube/expansion/linear_projection.h"
#include "sigmatube/germ/family.h"

// Layer expansion/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::expansion {

struct RegressionProjection : LinearProjection {
  Eigen::VectorXd hat_diagonal;  // h_i, [N]
  Eigen::MatrixXd basis;         // Ψ, [N, P]
};

/// Number of runs: ceil(oversampling · P).
int regression_size(int basis_size, double oversampling);

/// The N-point design (Sobol: the first N points of the sequence; Latin
/// hypercube: seeded by `seed`) and W for the index set. Throws InputError (key
/// "surrogate.oversampling") for oversampling < 2, NumericalError when Ψ is rank
/// deficient (condition estimate above 1e12).
RegressionProjection regression_projection(const std::vector<germ::FamilySpec>& families, const MultiIndexSet& indices,
                                           double oversampling, casefile::RegressionDesign design,
                                           std::uint64_t seed = 20261201ULL);

/// Least squares on given points (no design choice); same checks.
RegressionProjection regression_on_points(const std::vector<germ::FamilySpec>& families, const MultiIndexSet& indices,
                                          const Eigen::MatrixXd& points);

/// Corrected leave-one-out mean squared error per column of Y, [n_columns]:
///   T(P, N) · mean_i (r_i / (1 − h_i))²,  T = N/(N − P) · (1 + tr((ΨᵀΨ)⁻¹))
/// (Chapelle, Vapnik & Bengio, Machine Learning 48, 2002; Blatman & Sudret,
/// J. Comput. Phys. 230, 2011): an estimate of E[(f − f̂)²] that corrects the
/// optimism of plain leave-one-out when P is not small against N.
Eigen::VectorXd corrected_leave_one_out_mse(const RegressionProjection& projection, const Eigen::MatrixXd& values,
                                            const Eigen::MatrixXd& coefficients);

/// ε_LOO per column of Y, [n_columns], given C = W·Y.
Eigen::VectorXd relative_leave_one_out_error(const RegressionProjection& projection, const Eigen::MatrixXd& values,
                                             const Eigen::MatrixXd& coefficients);

}  // namespace sigmatube::expansion
