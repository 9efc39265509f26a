// SPDX-License-Identifier: MIT
#include "sigmatube/expansion/regression.h"

#include <cmath>
#include <sstream>
#include <stdexcept>

#include "sigmatube/core/error.h"
#include "sigmatube/design/sampling_design.h"
#include "sigmatube/expansion/polynomial_basis.h"

#include "build_parts.h"

namespace sigmatube::expansion {
namespace {

// Ψ with condition number above this loses more than 4 of 16 digits in the
// coefficients; such a design says the basis is not identifiable from the points.
constexpr double kMaxConditionNumber = 1e12;
// A column whose sample variance is below this fraction of (1 + mean²) is
// constant to working precision; its relative error is measured against the floor.
constexpr double kVarianceFloorRelative = 1e-18;

}  // namespace

int regression_size(int basis_size, double oversampling) {
  return static_cast<int>(std::ceil(oversampling * basis_size - 1e-9));
}

RegressionProjection regression_on_points(const std::vector<germ::FamilySpec>& families, const MultiIndexSet& indices,
                                          const Eigen::MatrixXd& points) {
  RegressionProjection result;
  result.points = points;
  result.indices = indices;
  result.basis = basis_matrix(families, indices, points);
  const Eigen::Index n = points.rows(), p = indices.rows();
  if (n < p) throw std::logic_error("regression_on_points: fewer points than basis functions");
  Eigen::ColPivHouseholderQR<Eigen::MatrixXd> qr(result.basis);
  const Eigen::VectorXd r_diag = qr.matrixR().diagonal().cwiseAbs();
  const double condition = r_diag.size() ? r_diag.maxCoeff() / r_diag.minCoeff() : 1.0;
  if (!(condition <= kMaxConditionNumber)) {
    std::ostringstream message;
    message << "regression: design matrix is rank deficient (condition estimate " << condition << ", " << n
            << " points, " << p << " basis functions)";
    throw NumericalError(message.str());
  }
  result.matrix = qr.solve(Eigen::MatrixXd::Identity(n, n));
  result.hat_diagonal.resize(n);
  for (Eigen::Index i = 0; i < n; ++i) result.hat_diagonal[i] = result.basis.row(i).dot(result.matrix.col(i));
  return result;
}

RegressionProjection regression_projection(const std::vector<germ::FamilySpec>& families, const MultiIndexSet& indices,
                                           double oversampling, casefile::RegressionDesign design,
                                           std::uint64_t seed) {
  if (!(oversampling >= 2.0)) {
    std::ostringstream message;
    message << "oversampling must be at least 2 (runs per basis function), got " << oversampling;
    throw InputError(SourceLocation{"", 0, "surrogate.oversampling"}, message.str());
  }
  const int n = regression_size(static_cast<int>(indices.rows()), oversampling);
  const Eigen::MatrixXd points = design == casefile::RegressionDesign::sobol
                                     ? design::sobol_design(families, n)
                                     : design::latin_hypercube_design(families, n, seed);
  return regression_on_points(families, indices, points);
}

Eigen::VectorXd relative_leave_one_out_error(const RegressionProjection& projection, const Eigen::MatrixXd& values,
                                             const Eigen::MatrixXd& coefficients) {
  const Eigen::Index n = values.rows();
  const Eigen::MatrixXd residual = values - projection.basis * coefficients;
  const Eigen::ArrayXd one_minus_h = 1.0 - projection.hat_diagonal.array();
  Eigen::VectorXd result(values.cols());
  for (Eigen::Index c = 0; c < values.cols(); ++c) {
    const Eigen::ArrayXd e = residual.col(c).array() / one_minus_h;
    const double mean = values.col(c).mean();
    const double variance = (values.col(c).array() - mean).square().sum() / std::max<Eigen::Index>(n - 1, 1);
    const double floor = kVarianceFloorRelative * (1.0 + mean * mean);
    result[c] = e.square().mean() / std::max(variance, floor);
  }
  return result;
}

Eigen::VectorXd corrected_leave_one_out_mse(const RegressionProjection& projection, const Eigen::MatrixXd& values,
                                            const Eigen::MatrixXd& coefficients) {
  const Eigen::MatrixXd residual = values - projection.basis * coefficients;
  const Eigen::ArrayXd one_minus_h = 1.0 - projection.hat_diagonal.array();
  // tr((ΨᵀΨ)⁻¹) = ‖W‖_F², W = (ΨᵀΨ)⁻¹Ψᵀ.
  const double factor = detail::corrected_loo_factor(static_cast<int>(values.rows()),
                                                     static_cast<int>(projection.indices.rows()),
                                                     projection.matrix.squaredNorm());
  return factor * (residual.array().colwise() / one_minus_h).square().colwise().mean().transpose().matrix();
}

}  // namespace sigmatube::expansion
