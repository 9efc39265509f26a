// SPDX-License-Identifier: MIT
#pragma once
// Variance shares per uncertain input: the germ dimensions of one [[uncertain]]
// entry (the components of a vector normal, the Karhunen–Loève modes of a
// gaussian process) form one group u, and the closed and total Sobol indices of
// the group follow from the orthonormal coefficients (Sobol', Math. Comput.
// Simul. 55, 2001, closed/total indices of a subset; Sudret, Reliab. Eng. Syst.
// Saf. 93, 2008, their polynomial chaos form). With D = Σ_{α≠0} c_α²,
//   first (closed)  S_u  = Σ_{α≠0, supp α ⊆ u} c_α² / D
//   total           ST_u = Σ_{supp α ∩ u ≠ ∅} c_α² / D.
// Confidence intervals by the delta method on the coefficients' covariance of a
// linear fit C = W·Y (docs/methods.md, "Variance shares per input"):
//   Cov(c) = σ̂² W Wᵀ,  σ̂² = ‖Y − Ψ C‖² / (N − P),
//   ∂S/∂c_α = 2 c_α (1[α ∈ set] − S) / D,  Var(S) ≈ gᵀ Cov(c) g,
//   interval S ± z_{(1+γ)/2} √Var(S), clipped to [0, 1].
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/expansion/surrogate.h"

namespace sigmatube::expansion {

/// From the fit's matrix W [P, N], its basis at the design points Ψ [N, P], the
/// design values Y [N, n_columns] and the coefficients C = W·Y [P, n_columns].
CoefficientCovariance linear_fit_covariance(const Eigen::MatrixXd& W, const Eigen::MatrixXd& basis,
                                            const Eigen::MatrixXd& values, const Eigen::MatrixXd& coefficients);

struct GroupedSobol {
  Eigen::MatrixXd first, total;  // [n_columns, G]
  // Delta-method interval at the requested confidence; NaN without a covariance.
  Eigen::MatrixXd first_lower, first_upper, total_lower, total_upper;  // [n_columns, G]
};

/// groups[g] = the germ dimensions of input g (any order; each dimension in at
/// most one group). Columns with D = 0 get indices 0 and a zero-width interval.
/// `covariance` may be null (intervals NaN). `confidence` in (0, 1).
GroupedSobol grouped_sobol(const MultiIndexSet& indices, const Eigen::MatrixXd& coefficients,
                           const std::vector<std::vector<int>>& groups, const CoefficientCovariance* covariance,
                           double confidence);

}  // namespace sigmatube::expansion
