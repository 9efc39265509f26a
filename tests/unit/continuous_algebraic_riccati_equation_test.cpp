// SPDX-License-Identifier: MIT
// Tests of model/continuous_algebraic_riccati_equation.h.
#include "sigmatube/model/continuous_algebraic_riccati_equation.h"

#include <gtest/gtest.h>

#include <cmath>

#include "sigmatube/core/error.h"
#include "sigmatube/model/lqr.h"

namespace sigmatube::model {
namespace {

// Double precision leaves ~1e-15 relative; the sign iteration and least-squares
// step lose a few digits more (common practice: 1e-12 for well-conditioned n ≤ 6).
constexpr double kSolutionTolerance = 1e-12;

TEST(ContinuousAlgebraicRiccatiEquation, DoubleIntegratorMatchesClosedForm) {
  // A = [0 1; 0 0], B = [0; 1], Q = I, R = 1. With P = [a b; b c] the CARE
  // AᵀP + PA − PBBᵀP + Q = 0 reads, entry by entry (closed form, derived here):
  //   (1,1): −b² + 1 = 0            → b = 1 (b > 0 for a stabilizing gain)
  //   (1,2): a − b·c = 0            → a = c
  //   (2,2): 2b − c² + 1 = 0        → c = √3, so a = √3.
  // P = [√3 1; 1 √3], K = BᵀP = [1 √3], A − BK has eigenvalues (−√3 ± i)/2.
  Eigen::MatrixXd A(2, 2), B(2, 1), Q = Eigen::MatrixXd::Identity(2, 2), R = Eigen::MatrixXd::Identity(1, 1);
  A << 0, 1, 0, 0;
  B << 0, 1;
  const Eigen::MatrixXd P = continuous_algebraic_riccati_equation(A, B, Q, R);
  Eigen::MatrixXd expected(2, 2);
  expected << std::sqrt(3.0), 1, 1, std::sqrt(3.0);
  const double error = (P - expected).cwiseAbs().maxCoeff();
  std::cout << "CARE double integrator max error vs closed form: " << error << "\n";
  EXPECT_LT(error, kSolutionTolerance);

  const Eigen::MatrixXd K = lqr_gain(A, B, Q, R);
  const Eigen::VectorXcd eigenvalues = (A - B * K).eigenvalues();
  for (Eigen::Index i = 0; i < eigenvalues.size(); ++i) {
    EXPECT_LT(eigenvalues(i).real(), 0.0);
    EXPECT_NEAR(eigenvalues(i).real(), -std::sqrt(3.0) / 2.0, 1e-12);
  }
}

TEST(ContinuousAlgebraicRiccatiEquation, SolutionOfCoupledSystemIsSymmetricPositiveDefiniteWithSmallResidual) {
  // Hill–Clohessy–Wiltshire linear dynamics, mean motion 0.00113 rad/s: the
  // property checks (Xᵀ = X, X ≻ 0, residual at rounding level) need no reference.
  const double n = 0.00113;
  Eigen::MatrixXd A = Eigen::MatrixXd::Zero(6, 6), B = Eigen::MatrixXd::Zero(6, 3);
  A.topRightCorner(3, 3).setIdentity();
  A(3, 0) = 3 * n * n;
  A(3, 4) = 2 * n;
  A(4, 3) = -2 * n;
  A(5, 2) = -n * n;
  B.bottomRows(3).setIdentity();
  Eigen::VectorXd q(6);
  q << 1, 1, 1, 10, 10, 10;
  const Eigen::MatrixXd Q = q.asDiagonal(), R = 1e3 * Eigen::MatrixXd::Identity(3, 3);
  const Eigen::MatrixXd X = continuous_algebraic_riccati_equation(A, B, Q, R);
  EXPECT_LT((X - X.transpose()).norm(), 1e-12 * X.norm());
  EXPECT_GT(Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>(X).eigenvalues().minCoeff(), 0.0);
  const Eigen::MatrixXd residual = A.transpose() * X + X * A - X * B * R.inverse() * B.transpose() * X + Q;
  // 5·eps·‖X‖·(‖A‖+…) style bound, generously: relative 1e-10 of the largest term.
  EXPECT_LT(residual.norm(), 1e-10 * std::max(Q.norm(), (X * B * R.inverse() * B.transpose() * X).norm()));
}

TEST(ContinuousAlgebraicRiccatiEquation, UnstabilizablePairThrowsNumericalError) {
  // ẋ1 = x1 (unstable), ẋ2 = u: x1 cannot be influenced, so no stabilizing solution exists.
  Eigen::MatrixXd A(2, 2), B(2, 1);
  A << 1, 0, 0, 0;
  B << 0, 1;
  EXPECT_THROW(continuous_algebraic_riccati_equation(A, B, Eigen::MatrixXd::Identity(2, 2), Eigen::MatrixXd::Identity(1, 1)),
               NumericalError);
}

TEST(ContinuousAlgebraicRiccatiEquation, NonPositiveDefiniteRIsRejected) {
  Eigen::MatrixXd A = Eigen::MatrixXd::Zero(1, 1), B = Eigen::MatrixXd::Ones(1, 1);
  EXPECT_THROW(continuous_algebraic_riccati_equation(A, B, Eigen::MatrixXd::Ones(1, 1), -Eigen::MatrixXd::Ones(1, 1)),
               std::invalid_argument);
}

}  // namespace
}  // namespace sigmatube::model
