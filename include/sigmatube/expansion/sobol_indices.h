// SPDX-License-Identifier: MIT
#pragma once
// Sobol indices from an orthonormal polynomial chaos expansion (Sudret, "Global
// sensitivity analysis using polynomial chaos expansions", Reliab. Eng. Syst.
// Saf. 93, 2008): with D = Σ_{α≠0} c_α²,
//   first order  S_j  = Σ_{α ∈ A_j} c_α² / D,  A_j = {α : α_j > 0, α_k = 0 for k ≠ j}
//   total        S_Tj = Σ_{α : α_j > 0} c_α² / D.
// Columns with D = 0 get indices 0.
#include <Eigen/Dense>

#include "sigmatube/expansion/surrogate.h"

// Layer expansion/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::expansion {

/// [n_columns, d]: row c holds S_j of coefficient column c.
Eigen::MatrixXd sobol_first_order(const MultiIndexSet& indices, const Eigen::MatrixXd& coefficients);
/// [n_columns, d]: row c holds S_Tj of coefficient column c.
Eigen::MatrixXd sobol_total(const MultiIndexSet& indices, const Eigen::MatrixXd& coefficients);

}  // namespace sigmatube::expansion
