// SPDX-License-Identifier: MIT
#pragma once
// Smolyak sparse pseudo-spectral projection (Constantine, Eldred & Phipps,
// "Sparse pseudospectral approximation method", Comput. Methods Appl. Mech.
// Engrg. 229–232, 2012; Conrad & Marzouk, "Adaptive Smolyak pseudospectral
// approximations", SIAM J. Sci. Comput. 35, 2013). Each tensor rule T_i of the
// Smolyak combination (design/sparse_grid.h) projects only onto the rectangle of
// indices whose products it integrates exactly,
//   K_i = { α : α_k ≤ ⌊m(i_k)/2⌋ }   (Gauss with n points: α_k ≤ n − 1),
//   P_i f = Σ_{α∈K_i} [Σ_j w_j ψ_α(x_j) f(x_j)] ψ_α,
// and the projections are combined with the Smolyak coefficients,
//   f ≈ Σ_i c_i P_i f,   on the index set K = ∪_i K_i (downward closed).
// For f ∈ span{ψ_α : α ∈ K} the result is f itself: no aliasing, unlike direct
// sparse quadrature of each coefficient c_α = Σ_j w_j^{Smolyak} ψ_α(x_j) f(x_j).
#include <vector>

#include "sigmatube/design/sparse_grid.h"
#include "sigmatube/expansion/linear_projection.h"
#include "sigmatube/germ/family.h"

// Layer expansion/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::expansion {

/// Points = grid.points, indices = K, matrix W with C = W·Y.
LinearProjection sparse_pseudo_spectral_projection(const std::vector<germ::FamilySpec>& families,
                                                   const design::SparseGrid& grid);

}  // namespace sigmatube::expansion
