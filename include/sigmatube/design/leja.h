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
// Adaptive level l uses n(l) = 4l − 3 points (1, 5, 9, 13, …): each level
// adds four points and two degrees of the pseudo-spectral projection
// (⌊(n − 1)/2⌋ = 2l − 2), one odd and one even, so that a refinement of an
// input whose effect is odd (sin x) or even (x², sin² x) always shows in its
// surplus. (With one degree per level, every other surplus of such an input is
// near zero and the greedy index search stops in front of it.)
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

/// Points of adaptive level l ≥ 1: 4l − 3.
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
