// SPDX-License-Identifier: MIT
#pragma once
// Full-tensor Gauss projection (Xiu, "Numerical Methods for Stochastic
// Computations", Princeton 2010, §7.2): with n = p + 1 Gauss points per dimension
// (design/gauss_rule.h) the tensor rule integrates ψ_α ψ_β exactly whenever
// α_k, β_k ≤ p, so on the index set Λ (total degree p, or hyperbolic with
// ‖α‖_q ≤ p, which both lie inside [0, p]^d)
//   c_α = Σ_j w_j ψ_α(x_j) f(x_j),   W[α, j] = w_j ψ_α(x_j),
// reproduces every f ∈ span{ψ_α : α ∈ Λ} exactly. Runs: (p + 1)^d.
#include <vector>

#include "sigmatube/expansion/linear_projection.h"
#include "sigmatube/germ/family.h"

// Layer expansion/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::expansion {

/// Number of runs, (p + 1)^d, as a double so that huge designs do not overflow.
double tensor_grid_size(int dimension, int degree);

LinearProjection tensor_projection(const std::vector<germ::FamilySpec>& families, int degree, double q_norm);

}  // namespace sigmatube::expansion
