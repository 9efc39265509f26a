// SPDX-License-Identifier: MIT
#include "sigmatube/design/gauss_rule.h"

#include <algorithm>
#include <cmath>
#include <stdexcept>

#include "sigmatube/core/error.h"
#include "sigmatube/design/orthonormal_polynomials.h"

namespace sigmatube::design {

QuadratureRule gauss_rule(const germ::FamilySpec& spec, int n) {
  if (n < 1) throw std::logic_error("gauss_rule: needs at least one point");
  const RecurrenceCoefficients r = recurrence_coefficients(spec, n);
  Eigen::MatrixXd jacobi = Eigen::MatrixXd::Zero(n, n);
  for (int k = 0; k < n; ++k) {
    jacobi(k, k) = r.alpha[k];
    if (k + 1 < n) jacobi(k, k + 1) = jacobi(k + 1, k) = std::sqrt(r.beta[k + 1]);
  }
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(jacobi, Eigen::EigenvaluesOnly);
  if (solver.info() != Eigen::Success) throw NumericalError("gauss_rule: eigenvalue solver failed for n = " + std::to_string(n));

  QuadratureRule rule;
  rule.nodes = solver.eigenvalues();
  const OrthonormalPolynomials polys(spec, n);
  // Newton on ψ_n: the eigenvalues are already within a few ulps·‖J‖; two or three
  // steps bring them to the root of ψ_n to working precision.
  for (int j = 0; j < n; ++j) {
    double x = rule.nodes[j];
    for (int it = 0; it < 3; ++it) {
      double value, derivative;
      polys.value_and_derivative(n, x, value, derivative);
      if (derivative == 0.0 || !std::isfinite(value / derivative)) break;
      const double step = value / derivative;
      x -= step;
      if (std::abs(step) <= 1e-17 * std::max(1.0, std::abs(x))) break;
    }
    rule.nodes[j] = x;
  }
  std::sort(rule.nodes.data(), rule.nodes.data() + n);
  // Symmetric measures (hermite, legendre, jacobi with a = b) get exactly mirrored
  // nodes and an exact 0 for odd n, so that rules of different sizes share the
  // point ξ = 0 bit for bit and a design runs it once.
  const bool symmetric = spec.family == germ::Family::hermite || spec.family == germ::Family::legendre ||
                         (spec.family == germ::Family::jacobi && spec.a == spec.b);
  if (symmetric) {
    for (int j = 0; j < n / 2; ++j) {
      const double x = 0.5 * (rule.nodes[n - 1 - j] - rule.nodes[j]);
      rule.nodes[j] = -x;
      rule.nodes[n - 1 - j] = x;
    }
    if (n % 2 == 1) rule.nodes[n / 2] = 0.0;
  }
  Eigen::MatrixXd psi(n, n + 1);
  polys.evaluate(rule.nodes, psi);
  rule.weights = psi.leftCols(n).rowwise().squaredNorm().cwiseInverse();
  // The Christoffel numbers sum to 1 analytically; dividing by the sum removes
  // the last-ulp drift without changing any weight by more than that.
  rule.weights /= rule.weights.sum();
  rule.exactness_degree = 2 * n - 1;
  return rule;
}

}  // namespace sigmatube::design
