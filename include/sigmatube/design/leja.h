// SPDX-License-Identifier: MIT
#pragma once
// Nested one-dimensional rules for dimension-adaptive sparse grids: weighted Leja
// sequences (Narayan & Jakeman, "Adaptive Leja sparse grid constructions for
// stochastic collocation and high-dimensional approximation", SIAM J. Sci.
// Comput. 36, 2014). With ρ the germ density and x_1 the mean of ρ,
//   x_{n+1} = argmax_x  √ρ(x) · Π_{j ≤ n} |x − x_j|,
// maximized on a fine grid over the support and polished by golden-section
// search (the sequence is nested by construction: the rule of every level
// reuses the points of the level below). The quadrature weights of the first n
// points are interpolatory for the orthonormal basis,
//   Σ_j w_j ψ_k(x_j) = δ_k0,  k = 0…n−1,
// so the n-point rule integrates every polynomial of degree ≤ n − 1 exactly.
// Adaptive level l uses n(1) = 1 and n(l) = 2l + 1 points (l ≥ 2): level 2
// already reaches degree 2, so an input whose effect is even (x², sin² x) is
// seen at the first refinement; each further level adds two points and one
// degree of the pseudo-spectral projection (⌊(n − 1)/2⌋ = l).
#include <deque>
#include <vector>

#include "sigmatube/design/quadrature_rule.h"
#include "sigmatube/germ/family.h"

namespace sigmatube::design {

/// The first n points of the weighted Leja sequence of the family (n ≥ 1).
std::vector<double> weighted_leja_points(const germ::FamilySpec& spec, int n);

/// Interpolatory rule on the given points (exactness n − 1). Throws
/// NumericalError when the Vandermonde system is singular.
QuadratureRule interpolatory_rule(const germ::FamilySpec& spec, const std::vector<double>& points);

/// Points of adaptive level l ≥ 1: 1, then 2l + 1.
int leja_level_points(int level);
/// Highest degree the pseudo-spectral projection of level l may use: ⌊(n(l) − 1)/2⌋.
int leja_level_degree(int level);

/// Caches the Leja sequence of one family and hands out the rule of each level.
class LejaRules {
 public:
  explicit LejaRules(const germ::FamilySpec& spec) : spec_(spec) {}
  /// The rule of level l (nodes in sequence order, not sorted).
  const QuadratureRule& rule(int level);

 private:
  germ::FamilySpec spec_;
  std::vector<double> points_;
  std::deque<QuadratureRule> rules_;  // index level − 1 (a deque: references stay valid as it grows)
};

}  // namespace sigmatube::design
