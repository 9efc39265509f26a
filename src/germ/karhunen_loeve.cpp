// SPDX-License-Identifier: MIT
#include "sigmatube/germ/karhunen_loeve.h"

#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <string>

#include "sigmatube/core/error.h"

namespace sigmatube::germ {

double covariance_kernel(casefile::KernelKind kernel, double std, double correlation_time_in_seconds, double s,
                         double t) {
  if (!(std > 0.0) || !(correlation_time_in_seconds > 0.0))
    throw std::logic_error("covariance_kernel: std and correlation time must be positive");
  const double variance = std * std;
  const double lag = s - t;
  switch (kernel) {
    case casefile::KernelKind::exponential: return variance * std::exp(-std::abs(lag) / correlation_time_in_seconds);
    case casefile::KernelKind::squared_exponential:
      return variance * std::exp(-lag * lag / (2.0 * correlation_time_in_seconds * correlation_time_in_seconds));
  }
  throw std::logic_error("covariance_kernel: unknown kernel");
}

Eigen::VectorXd trapezoid_weights(const std::vector<double>& times) {
  const Eigen::Index n = static_cast<Eigen::Index>(times.size());
  if (n == 0) throw std::logic_error("trapezoid_weights: empty grid");
  for (Eigen::Index i = 1; i < n; ++i)
    if (!(times[i] > times[i - 1])) throw std::logic_error("trapezoid_weights: grid is not strictly increasing");
  Eigen::VectorXd w(n);
  if (n == 1) {
    w(0) = 1.0;
    return w;
  }
  w(0) = 0.5 * (times[1] - times[0]);
  w(n - 1) = 0.5 * (times[n - 1] - times[n - 2]);
  for (Eigen::Index i = 1; i + 1 < n; ++i) w(i) = 0.5 * (times[i + 1] - times[i - 1]);
  return w;
}

KarhunenLoeveModes karhunen_loeve_modes(casefile::KernelKind kernel, double std, double correlation_time_in_seconds,
                                        const std::vector<double>& times) {
  const Eigen::VectorXd w = trapezoid_weights(times);
  const Eigen::Index n = w.size();
  const Eigen::VectorXd root_w = w.cwiseSqrt();

  // Symmetrized Nyström matrix: the plain C W is not symmetric on a non-uniform
  // grid, and a symmetric solver gives orthogonal eigenvectors and real eigenvalues.
  Eigen::MatrixXd a(n, n);
  for (Eigen::Index j = 0; j < n; ++j)
    for (Eigen::Index i = j; i < n; ++i) {
      const double value =
          root_w(i) * covariance_kernel(kernel, std, correlation_time_in_seconds, times[i], times[j]) * root_w(j);
      a(i, j) = value;
      a(j, i) = value;
    }

  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(a);
  if (solver.info() != Eigen::Success)
    throw NumericalError("Karhunen-Loeve: the eigensolver did not converge on a grid of " + std::to_string(n) +
                         " points");

  KarhunenLoeveModes modes;
  modes.eigenvalues.resize(n);
  modes.eigenfunctions.resize(n, n);
  modes.cumulative_fraction.resize(n);
  // Eigen returns ascending eigenvalues; the expansion wants the largest first.
  for (Eigen::Index k = 0; k < n; ++k) {
    const Eigen::Index source = n - 1 - k;
    // A covariance operator is positive semi-definite; negative values are round-off.
    modes.eigenvalues(k) = std::max(0.0, solver.eigenvalues()(source));
    Eigen::VectorXd phi = solver.eigenvectors().col(source).cwiseQuotient(root_w);
    Eigen::Index largest = 0;
    phi.cwiseAbs().maxCoeff(&largest);
    if (phi(largest) < 0.0) phi = -phi;  // eigenvector signs are arbitrary: fix them for reproducible names
    modes.eigenfunctions.col(k) = phi;
  }
  // Summing in the same (descending) order as the cumulative sum makes the last fraction exactly 1.
  double total = 0.0;
  for (Eigen::Index k = 0; k < n; ++k) total += modes.eigenvalues(k);
  if (!(total > 0.0)) throw NumericalError("Karhunen-Loeve: the discrete covariance operator has zero trace");
  double running = 0.0;
  for (Eigen::Index k = 0; k < n; ++k) {
    running += modes.eigenvalues(k);
    modes.cumulative_fraction(k) = running / total;
  }
  modes.cumulative_fraction(n - 1) = 1.0;
  return modes;
}

int modes_for_energy(const KarhunenLoeveModes& modes, double energy) {
  if (!(energy > 0.0) || energy > 1.0) throw std::logic_error("modes_for_energy: energy must be in (0, 1]");
  const Eigen::Index n = modes.cumulative_fraction.size();
  for (Eigen::Index k = 0; k < n; ++k)
    if (modes.cumulative_fraction(k) >= energy - kEnergyRoundoff) return static_cast<int>(k + 1);
  return static_cast<int>(n);
}

}  // namespace sigmatube::germ
