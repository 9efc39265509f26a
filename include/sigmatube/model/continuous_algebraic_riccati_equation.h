// SPDX-License-Identifier: MIT
#pragma once
#include <Eigen/Dense>

// Layer model/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::model {

/// The stabilizing solution X = Xᵀ ⪰ 0 of the continuous algebraic Riccati equation
///   AᵀX + XA − XBR⁻¹BᵀX + Q = 0,
/// i.e. the one that makes A − BR⁻¹BᵀX Hurwitz.
///
/// Method: matrix sign function of the Hamiltonian H = [A, −BR⁻¹Bᵀ; −Q, −Aᵀ] by
/// the Newton iteration Z ← (Z/c + c·Z⁻¹)/2 with determinant scaling
/// c = |det Z|^(1/2n) (Roberts, "Linear model reduction and solution of the
/// algebraic Riccati equation by use of the sign function", Int. J. Control 32,
/// 1980; Gardiner & Laub, "A generalization of the matrix-sign-function solution
/// for algebraic Riccati equations", Int. J. Control 44, 1986). With
/// W = sign(H), X solves the overdetermined [W12; W22 + I] X = −[W11 + I; W21]
/// (least squares), then is symmetrized and polished by Newton–Kleinman steps
/// (Kleinman, IEEE Trans. Automatic Control 13, 1968) while the residual drops.
///
/// @throws std::invalid_argument if the shapes do not match or R is not
///         symmetric positive definite.
/// @throws NumericalError if H has eigenvalues on or near the imaginary axis
///         (the sign iteration does not converge), if (A, B) is not stabilizable
///         or (Q, A) has unobservable modes on the imaginary axis so that no
///         stabilizing solution exists, or if the residual stays large.
Eigen::MatrixXd continuous_algebraic_riccati_equation(const Eigen::MatrixXd& A, const Eigen::MatrixXd& B,
                                                       const Eigen::MatrixXd& Q, const Eigen::MatrixXd& R);

}  // namespace sigmatube::model
