// SPDX-License-Identifier: MIT
#include "sigmatube/expansion/pseudo_spectral_projection.h"

#include <stdexcept>

#include "sigmatube/expansion/multi_index.h"
#include "sigmatube/expansion/polynomial_basis.h"

namespace sigmatube::expansion {

LinearProjection sparse_pseudo_spectral_projection(const std::vector<germ::FamilySpec>& families,
                                                   const design::SparseGrid& grid) {
  const int d = static_cast<int>(families.size());
  if (grid.points.cols() != d) throw std::logic_error("sparse_pseudo_spectral_projection: dimensions differ");

  // K = ∪ K_i, each K_i a rectangle [0, D_ik] per dimension.
  std::vector<std::vector<int>> bounds;
  std::vector<std::vector<int>> rows;
  for (const auto& term : grid.terms) {
    std::vector<int> bound(d);
    for (int k = 0; k < d; ++k) bound[k] = term.exactness_degree[k] / 2;
    std::vector<int> alpha(d, 0);
    while (true) {
      rows.push_back(alpha);
      int k = 0;
      for (; k < d; ++k) {
        if (++alpha[k] <= bound[k]) break;
        alpha[k] = 0;
      }
      if (k == d) break;
    }
    bounds.push_back(std::move(bound));
  }
  LinearProjection result;
  result.points = grid.points;
  result.indices = graded(rows, d);
  const Eigen::Index n_points = grid.points.rows(), n_basis = result.indices.rows();
  const Eigen::MatrixXd psi = basis_matrix(families, result.indices, grid.points);

  result.matrix = Eigen::MatrixXd::Zero(n_basis, n_points);
  std::vector<Eigen::Index> in_term;
  for (std::size_t t = 0; t < grid.terms.size(); ++t) {
    const auto& term = grid.terms[t];
    in_term.clear();
    for (Eigen::Index r = 0; r < n_basis; ++r) {
      bool inside = true;
      for (int k = 0; k < d && inside; ++k) inside = result.indices(r, k) <= bounds[t][k];
      if (inside) in_term.push_back(r);
    }
    for (Eigen::Index j = 0; j < term.weights.size(); ++j) {
      const int p = term.point_index[j];
      const double cw = term.coefficient * term.weights[j];
      for (Eigen::Index r : in_term) result.matrix(r, p) += cw * psi(p, r);
    }
  }
  return result;
}

}  // namespace sigmatube::expansion
