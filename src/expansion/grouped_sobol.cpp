// SPDX-License-Identifier: MIT
#include "sigmatube/expansion/grouped_sobol.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>

#include <boost/math/distributions/normal.hpp>

namespace sigmatube::expansion {

CoefficientCovariance linear_fit_covariance(const Eigen::MatrixXd& W, const Eigen::MatrixXd& basis,
                                            const Eigen::MatrixXd& values, const Eigen::MatrixXd& coefficients) {
  if (W.cols() != basis.rows() || W.rows() != basis.cols() || values.rows() != basis.rows() ||
      coefficients.rows() != W.rows() || coefficients.cols() != values.cols())
    throw std::logic_error("linear_fit_covariance: shapes differ");
  CoefficientCovariance out;
  out.gram.noalias() = W * W.transpose();
  const Eigen::Index n = basis.rows(), p = basis.cols();
  out.residual_variance = Eigen::VectorXd::Constant(values.cols(), std::numeric_limits<double>::quiet_NaN());
  if (n > p) {
    const Eigen::MatrixXd residual = values - basis * coefficients;
    out.residual_variance = residual.colwise().squaredNorm().transpose() / static_cast<double>(n - p);
  }
  return out;
}

GroupedSobol grouped_sobol(const MultiIndexSet& indices, const Eigen::MatrixXd& coefficients,
                           const std::vector<std::vector<int>>& groups, const CoefficientCovariance* covariance,
                           double confidence) {
  if (indices.rows() != coefficients.rows()) throw std::logic_error("grouped_sobol: indices and coefficients differ");
  if (!(confidence > 0.0 && confidence < 1.0)) throw std::logic_error("grouped_sobol: confidence outside (0, 1)");
  const Eigen::Index P = indices.rows(), d = indices.cols(), n_columns = coefficients.cols();
  const Eigen::Index G = static_cast<Eigen::Index>(groups.size());
  std::vector<int> group_of(static_cast<std::size_t>(d), -1);
  for (Eigen::Index g = 0; g < G; ++g)
    for (int j : groups[static_cast<std::size_t>(g)]) {
      if (j < 0 || j >= d || group_of[static_cast<std::size_t>(j)] >= 0)
        throw std::logic_error("grouped_sobol: a dimension outside the germ or in two groups");
      group_of[static_cast<std::size_t>(j)] = static_cast<int>(g);
    }
  // in_closed(r, g): supp α_r ⊆ group g (α_r ≠ 0); in_total(r, g): supp α_r meets g.
  Eigen::MatrixXd in_closed = Eigen::MatrixXd::Zero(P, G), in_total = Eigen::MatrixXd::Zero(P, G);
  Eigen::VectorXd nonzero = Eigen::VectorXd::Zero(P);
  for (Eigen::Index r = 0; r < P; ++r) {
    std::vector<char> touches(static_cast<std::size_t>(G), 0);
    int touched = 0;
    bool outside = false;  // a dimension in no group
    for (Eigen::Index k = 0; k < d; ++k) {
      if (indices(r, k) <= 0) continue;
      const int g = group_of[static_cast<std::size_t>(k)];
      if (g < 0) { outside = true; continue; }
      if (!touches[static_cast<std::size_t>(g)]) touches[static_cast<std::size_t>(g)] = 1, ++touched;
    }
    if (touched == 0 && !outside) continue;  // the constant term
    nonzero[r] = 1.0;
    for (Eigen::Index g = 0; g < G; ++g) {
      if (!touches[static_cast<std::size_t>(g)]) continue;
      in_total(r, g) = 1.0;
      if (touched == 1 && !outside) in_closed(r, g) = 1.0;
    }
  }
  const Eigen::MatrixXd squared = coefficients.array().square();
  const Eigen::RowVectorXd variance = nonzero.transpose() * squared;           // [n_columns]
  const Eigen::MatrixXd closed_part = squared.transpose() * in_closed;         // [n_columns, G]
  const Eigen::MatrixXd total_part = squared.transpose() * in_total;
  GroupedSobol out;
  out.first = Eigen::MatrixXd::Zero(n_columns, G);
  out.total = Eigen::MatrixXd::Zero(n_columns, G);
  const double nan = std::numeric_limits<double>::quiet_NaN();
  out.first_lower = out.first_upper = out.total_lower = out.total_upper = Eigen::MatrixXd::Constant(n_columns, G, nan);
  const double z = boost::math::quantile(boost::math::normal(), 0.5 * (1.0 + confidence));
  const bool with_interval = covariance && covariance->gram.rows() == P &&
                             covariance->residual_variance.size() == n_columns;
  for (Eigen::Index c = 0; c < n_columns; ++c) {
    const double D = variance[c];
    if (!(D > 0.0)) {
      for (Eigen::Index g = 0; g < G; ++g)
        out.first_lower(c, g) = out.first_upper(c, g) = out.total_lower(c, g) = out.total_upper(c, g) = 0.0;
      continue;
    }
    for (Eigen::Index g = 0; g < G; ++g) {
      out.first(c, g) = closed_part(c, g) / D;
      out.total(c, g) = total_part(c, g) / D;
    }
    if (!with_interval || !std::isfinite(covariance->residual_variance[c])) continue;
    const double s2 = covariance->residual_variance[c];
    const auto interval = [&](const Eigen::MatrixXd& member, double S, double& lower, double& upper) {
      // g_α = 2 c_α (1[α ∈ set] − S) / D for α ≠ 0, 0 for the constant.
      const Eigen::VectorXd grad =
          (2.0 / D) * coefficients.col(c).cwiseProduct(nonzero).cwiseProduct((member.array() - S).matrix());
      const double var = s2 * grad.dot(covariance->gram * grad);
      const double half = z * std::sqrt(std::max(var, 0.0));
      lower = std::clamp(S - half, 0.0, 1.0);
      upper = std::clamp(S + half, 0.0, 1.0);
    };
    for (Eigen::Index g = 0; g < G; ++g) {
      interval(in_closed.col(g), out.first(c, g), out.first_lower(c, g), out.first_upper(c, g));
      interval(in_total.col(g), out.total(c, g), out.total_lower(c, g), out.total_upper(c, g));
    }
  }
  return out;
}

}  // namespace sigmatube::expansion
