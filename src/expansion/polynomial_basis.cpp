// SPDX-License-Identifier: MIT
#include "sigmatube/expansion/polynomial_basis.h"

#include <stdexcept>

#include "sigmatube/design/orthonormal_polynomials.h"

namespace sigmatube::expansion {

void basis_matrix_into(const std::vector<germ::FamilySpec>& families, const MultiIndexSet& indices,
                       const Eigen::Ref<const Eigen::MatrixXd>& points, Eigen::Ref<Eigen::MatrixXd> psi) {
  const int d = static_cast<int>(families.size());
  if (indices.cols() != d || points.cols() != d) throw std::logic_error("basis_matrix: dimensions differ");
  if (psi.rows() != points.rows() || psi.cols() != indices.rows())
    throw std::logic_error("basis_matrix: output has the wrong shape");
  psi.setOnes();
  Eigen::MatrixXd table;
  for (int k = 0; k < d; ++k) {
    const int max_degree = indices.rows() ? indices.col(k).maxCoeff() : 0;
    if (max_degree == 0) continue;
    const design::OrthonormalPolynomials polys(families[k], max_degree);
    table.resize(points.rows(), max_degree + 1);
    polys.evaluate(points.col(k), table);
    for (Eigen::Index r = 0; r < indices.rows(); ++r) {
      const int a = indices(r, k);
      if (a != 0) psi.col(r).array() *= table.col(a).array();
    }
  }
}

Eigen::MatrixXd basis_matrix(const std::vector<germ::FamilySpec>& families, const MultiIndexSet& indices,
                             const Eigen::MatrixXd& points) {
  Eigen::MatrixXd psi(points.rows(), indices.rows());
  basis_matrix_into(families, indices, points, psi);
  return psi;
}

}  // namespace sigmatube::expansion
