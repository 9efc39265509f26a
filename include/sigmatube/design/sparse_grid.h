// SPDX-License-Identifier: MIT
#pragma once
// Smolyak sparse grid by the combination technique (Smolyak, Soviet Math. Dokl. 4,
// 1963; Gerstner & Griebel, "Numerical integration using sparse grids", Numer.
// Algorithms 18, 1998). With level L ≥ 1, dimension d and q = L + d − 1,
//   A(L, d) = Σ_{max(d, L) ≤ |i| ≤ q} (−1)^{q−|i|} C(d−1, q−|i|) · U^{i_1} ⊗ … ⊗ U^{i_d},
// i_k ≥ 1, where U^l is the level-l one-dimensional rule of dimension k:
//   Gauss (linear growth)  n(l) = l points, exact to degree 2l − 1;
//   nested Clenshaw–Curtis n(1) = 1, n(l) = 2^(l−1) + 1 (legendre dimensions only).
// A(L, d) integrates exactly every polynomial in Σ_{|i| = q} P_{m(i_1)} ⊗ … ⊗ P_{m(i_d)},
// m(l) the exactness degree of U^l (Novak & Ritter, Numer. Math. 75, 1996).
// Coincident points of different tensor rules are merged so that each model run
// happens once; every tensor term keeps the indices of its points in the merged
// list, for pseudo-spectral projection.
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/design/point_merger.h"
#include "sigmatube/design/quadrature_rule.h"
#include "sigmatube/germ/family.h"

// Layer design/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::design {

/// One tensor rule U^{i_1} ⊗ … ⊗ U^{i_d} of the combination.
struct TensorTerm {
  std::vector<int> levels;        // i_k ≥ 1
  std::vector<int> points_per_dimension;
  std::vector<int> exactness_degree;  // m(i_k) per dimension
  double coefficient = 0.0;       // (−1)^{q−|i|} C(d−1, q−|i|)
  std::vector<int> point_index;   // row in SparseGrid::points, dimension 0 varying fastest
  Eigen::VectorXd weights;        // product weights of the tensor rule, same order
};

struct SparseGrid {
  int level = 0;
  Eigen::MatrixXd points;   // [N, d], merged
  Eigen::VectorXd weights;  // [N], Σ over terms of coefficient × tensor weight
  std::vector<TensorTerm> terms;
};

/// The one-dimensional rule of level l for a family (Gauss linear growth, or
/// nested Clenshaw–Curtis when `nested`). Throws InputError (key
/// "surrogate.nested") when `nested` and the family is not legendre.
QuadratureRule sparse_grid_rule(const germ::FamilySpec& spec, int level, bool nested);

/// The Smolyak grid of level L ≥ 1 over the families. Throws InputError (key
/// "surrogate.nested") for a nested rule on a non-legendre family, and
/// std::logic_error for d = 0 or L < 1.
SparseGrid build_sparse_grid(const std::vector<germ::FamilySpec>& families, int level, bool nested);

/// Number of points of the grid without building weights (same merging); used
/// to check budgets cheaply.
int sparse_grid_size(const std::vector<germ::FamilySpec>& families, int level, bool nested);

}  // namespace sigmatube::design
