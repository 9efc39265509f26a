// SPDX-License-Identifier: MIT
#include "sigmatube/model/continuous_algebraic_riccati_equation.h"

#include <cmath>
#include <limits>
#include <sstream>
#include <stdexcept>

#include <Eigen/Eigenvalues>

#include "sigmatube/core/error.h"

namespace sigmatube::model {
namespace {

double residual_norm(const Eigen::MatrixXd& A, const Eigen::MatrixXd& G, const Eigen::MatrixXd& Q,
                     const Eigen::MatrixXd& X) {
  return (A.transpose() * X + X * A - X * G * X + Q).norm();
}

// Solves the Lyapunov equation Fᵀ Y + Y F + C = 0 by Kronecker vectorization,
// (I ⊗ Fᵀ + Fᵀ ⊗ I) vec(Y) = −vec(C); fine for the state sizes of this tool.
Eigen::MatrixXd lyapunov(const Eigen::MatrixXd& F, const Eigen::MatrixXd& C) {
  const Eigen::Index n = F.rows();
  Eigen::MatrixXd K = Eigen::MatrixXd::Zero(n * n, n * n);
  const Eigen::MatrixXd Ft = F.transpose();
  for (Eigen::Index j = 0; j < n; ++j)
    for (Eigen::Index i = 0; i < n; ++i) {
      // Row of vec index (i, j): Σ_k Ft(i,k) Y(k,j) + Σ_k Y(i,k) F(k,j).
      const Eigen::Index row = i + j * n;
      for (Eigen::Index k = 0; k < n; ++k) {
        K(row, k + j * n) += Ft(i, k);
        K(row, i + k * n) += F(k, j);
      }
    }
  const Eigen::VectorXd y = K.partialPivLu().solve(-Eigen::Map<const Eigen::VectorXd>(C.data(), n * n));
  return Eigen::Map<const Eigen::MatrixXd>(y.data(), n, n);
}

}  // namespace

Eigen::MatrixXd continuous_algebraic_riccati_equation(const Eigen::MatrixXd& A, const Eigen::MatrixXd& B,
                                                       const Eigen::MatrixXd& Q, const Eigen::MatrixXd& R) {
  const Eigen::Index n = A.rows(), m = B.cols();
  if (A.cols() != n || B.rows() != n || Q.rows() != n || Q.cols() != n || R.rows() != m || R.cols() != m)
    throw std::invalid_argument("continuous_algebraic_riccati_equation: inconsistent matrix shapes");
  if (!R.isApprox(R.transpose())) throw std::invalid_argument("continuous_algebraic_riccati_equation: R is not symmetric");
  const Eigen::LLT<Eigen::MatrixXd> r_factor(R);
  if (r_factor.info() != Eigen::Success)
    throw std::invalid_argument("continuous_algebraic_riccati_equation: R is not positive definite");

  const Eigen::MatrixXd G = B * r_factor.solve(B.transpose());
  Eigen::MatrixXd Z(2 * n, 2 * n);
  Z << A, -G, -Q, -A.transpose();

  constexpr int kMaxIterations = 100;
  // Converged when the update is at rounding level of Z (Gardiner & Laub 1986 use a relative test).
  const double tolerance = 1e2 * std::numeric_limits<double>::epsilon() * static_cast<double>(2 * n);
  bool converged = false;
  for (int iteration = 0; iteration < kMaxIterations; ++iteration) {
    Eigen::PartialPivLU<Eigen::MatrixXd> lu(Z);
    const double det = lu.determinant();
    if (!std::isfinite(det) || det == 0.0 || !Z.allFinite())
      throw NumericalError("algebraic Riccati equation: the Hamiltonian matrix has eigenvalues on the imaginary axis "
                           "(is (A, B) stabilizable?)");
    const Eigen::MatrixXd Zinv = lu.inverse();
    const double c = std::pow(std::abs(det), 1.0 / static_cast<double>(2 * n));
    const Eigen::MatrixXd next = 0.5 * (Z / c + c * Zinv);
    const double change = (next - Z).norm() / std::max(next.norm(), 1.0);
    Z = next;
    if (change < tolerance || (iteration > 4 && change < 1e-12)) {
      converged = true;
      break;
    }
  }
  if (!converged)
    throw NumericalError("algebraic Riccati equation: the sign-function iteration did not converge (eigenvalues "
                         "of the Hamiltonian near the imaginary axis; is (A, B) stabilizable?)");

  const Eigen::MatrixXd I = Eigen::MatrixXd::Identity(n, n);
  Eigen::MatrixXd lhs(2 * n, n), rhs(2 * n, n);
  lhs << Z.topRightCorner(n, n), Z.bottomRightCorner(n, n) + I;
  rhs << Z.topLeftCorner(n, n) + I, Z.bottomLeftCorner(n, n);
  Eigen::ColPivHouseholderQR<Eigen::MatrixXd> qr(lhs);
  if (qr.rank() < n)
    throw NumericalError("algebraic Riccati equation: no stabilizing solution ((A, B) not stabilizable or "
                         "(Q, A) with unobservable modes on the imaginary axis)");
  Eigen::MatrixXd X = qr.solve(-rhs);
  X = 0.5 * (X + X.transpose()).eval();

  // Newton–Kleinman polish: X ← solution of (A − GX)ᵀY + Y(A − GX) + Q + XGX = 0.
  const double reference = std::max({A.norm() * X.norm(), Q.norm(), X.norm() * G.norm() * X.norm(), 1e-300});
  double residual = residual_norm(A, G, Q, X);
  for (int step = 0; step < 3 && n <= 40; ++step) {
    const Eigen::MatrixXd F = A - G * X;
    Eigen::MatrixXd Y = lyapunov(F, Q + X * G * X);
    Y = 0.5 * (Y + Y.transpose()).eval();
    const double r = residual_norm(A, G, Q, Y);
    if (!(r < residual)) break;
    X = Y;
    residual = r;
  }

  const Eigen::VectorXcd closed_loop = (A - G * X).eigenvalues();
  for (Eigen::Index i = 0; i < closed_loop.size(); ++i)
    if (!(closed_loop(i).real() < 0.0))
      throw NumericalError("algebraic Riccati equation: the solution does not stabilize A - BK ((A, B) not "
                           "stabilizable?)");
  if (!X.allFinite() || residual > 1e-6 * reference) {
    std::ostringstream message;
    message << "algebraic Riccati equation: residual " << residual << " too large relative to " << reference;
    throw NumericalError(message.str());
  }
  return X;
}

}  // namespace sigmatube::model
