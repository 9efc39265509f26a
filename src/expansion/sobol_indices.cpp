// SPDX-License-Identifier: MIT
#include "sigmatube/expansion/sobol_indices.h"

#include <stdexcept>

namespace sigmatube::expansion {
namespace {

Eigen::MatrixXd sobol(const MultiIndexSet& indices, const Eigen::MatrixXd& coefficients, bool total) {
  if (indices.rows() != coefficients.rows()) throw std::logic_error("sobol: indices and coefficients differ in size");
  const Eigen::Index d = indices.cols(), n_columns = coefficients.cols();
  Eigen::MatrixXd partial = Eigen::MatrixXd::Zero(d, n_columns);
  Eigen::RowVectorXd variance = Eigen::RowVectorXd::Zero(n_columns);
  for (Eigen::Index r = 0; r < indices.rows(); ++r) {
    int nonzero = 0, last = -1;
    for (Eigen::Index k = 0; k < d; ++k)
      if (indices(r, k) > 0) ++nonzero, last = static_cast<int>(k);
    if (nonzero == 0) continue;
    const Eigen::RowVectorXd squared = coefficients.row(r).array().square();
    variance += squared;
    if (total) {
      for (Eigen::Index k = 0; k < d; ++k)
        if (indices(r, k) > 0) partial.row(k) += squared;
    } else if (nonzero == 1) {
      partial.row(last) += squared;
    }
  }
  Eigen::MatrixXd result(n_columns, d);
  for (Eigen::Index c = 0; c < n_columns; ++c)
    for (Eigen::Index k = 0; k < d; ++k) result(c, k) = variance[c] > 0.0 ? partial(k, c) / variance[c] : 0.0;
  return result;
}

}  // namespace

Eigen::MatrixXd sobol_first_order(const MultiIndexSet& indices, const Eigen::MatrixXd& coefficients) {
  return sobol(indices, coefficients, false);
}

Eigen::MatrixXd sobol_total(const MultiIndexSet& indices, const Eigen::MatrixXd& coefficients) {
  return sobol(indices, coefficients, true);
}

}  // namespace sigmatube::expansion
