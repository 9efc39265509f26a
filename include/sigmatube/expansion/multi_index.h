// SPDX-License-Identifier: MIT
#pragma once
// Multi-index sets of a polynomial chaos basis (rows α ∈ ℕ^d):
//   total degree   { α : |α|_1 ≤ p },                size C(d + p, p)
//   hyperbolic     { α : ‖α‖_q = (Σ α_k^q)^{1/q} ≤ p },  0 < q ≤ 1
// (Blatman & Sudret, "Adaptive sparse polynomial chaos expansion based on least
// angle regression", J. Comput. Phys. 230, 2011). Both are downward closed.
// Rows are in graded order: by |α|_1, then with the earlier dimensions' degrees
// higher first (α = (1,0) before (0,1)); row 0 is the zero index.
#include <vector>

#include "sigmatube/expansion/surrogate.h"

// Layer expansion/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::expansion {

MultiIndexSet total_degree_set(int dimension, int degree);

/// Hyperbolic set; q = 1 gives the total-degree set. Throws std::logic_error
/// unless 0 < q ≤ 1.
MultiIndexSet hyperbolic_set(int dimension, int degree, double q);

/// Every α' ≤ α (componentwise) of every row is a row.
bool is_downward_closed(const MultiIndexSet& set);

/// Sorts rows into graded order (row 0 zero when present) and removes duplicates.
MultiIndexSet graded(const std::vector<std::vector<int>>& rows, int dimension);

/// Row of each index of `set` in `reference`, or −1 when absent.
std::vector<int> rows_in(const MultiIndexSet& set, const MultiIndexSet& reference);

}  // namespace sigmatube::expansion
