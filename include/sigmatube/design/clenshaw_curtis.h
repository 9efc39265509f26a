// SPDX-License-Identifier: MIT
#pragma once
// Nested Clenshaw–Curtis rules for ξ ~ U(−1, 1) (Clenshaw & Curtis, "A method for
// numerical integration on an automatic computer", Numer. Math. 2, 1960; weights
// in the closed form of Waldvogel, BIT 46, 2006). Level l has
//   n(1) = 1 (the midpoint),  n(l) = 2^(l−1) + 1 for l ≥ 2,
// nodes x_j = −cos(π j/(n−1)), and, with N = n − 1 even and θ_j = π j/N,
//   w_j = (c_j / N) · [1 − Σ_{k=1}^{N/2} b_k cos(2kθ_j)/(4k²−1)] / 2,
//   c_j = 1 at the end points, 2 inside; b_k = 1 for k = N/2, 2 otherwise
// (the final /2 turns the Lebesgue weights into probability weights). The rule
// with n points (n odd) is exact to degree n; each level's nodes contain the
// previous level's.
#include "sigmatube/design/quadrature_rule.h"

// Layer design/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::design {

/// Points of the nested rule at level l ≥ 1.
int clenshaw_curtis_points(int level);

/// The Clenshaw–Curtis rule at level l ≥ 1 (std::logic_error otherwise).
QuadratureRule clenshaw_curtis_rule(int level);

}  // namespace sigmatube::design
