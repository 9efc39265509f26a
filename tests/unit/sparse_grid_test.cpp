// SPDX-License-Identifier: MIT
#include "sigmatube/design/sparse_grid.h"

#include <gtest/gtest.h>

#include <cmath>
#include <functional>

#include "sigmatube/core/error.h"

using sigmatube::design::build_sparse_grid;
using sigmatube::design::SparseGrid;
using sigmatube::germ::Family;
using sigmatube::germ::FamilySpec;

namespace {

// Sparse-grid sums have negative weights of size up to C(d−1, ·) times tensor
// weights; monomial moments here are O(1)…O(1e3), so a relative 1e-12 is a few
// hundred ulps.
constexpr double kMomentRelative = 1e-12;

// Closed-form moments E[ξ^m] of one germ variable:
//   hermite  (m−1)!! for even m, 0 odd;  legendre 1/(m+1) for even m, 0 odd;
//   laguerre Π_{r<m}(a+1+r);  jacobi via u = (ξ+1)/2 ~ Beta(b+1, a+1) and the
//   binomial expansion ξ^m = Σ_j C(m,j) (2u)^j (−1)^{m−j}.
double moment(const FamilySpec& spec, int m) {
  switch (spec.family) {
    case Family::hermite: {
      if (m % 2) return 0.0;
      double v = 1.0;
      for (int k = m - 1; k > 0; k -= 2) v *= k;
      return v;
    }
    case Family::legendre: return m % 2 ? 0.0 : 1.0 / (m + 1);
    case Family::laguerre: {
      double v = 1.0;
      for (int r = 0; r < m; ++r) v *= spec.a + 1 + r;
      return v;
    }
    case Family::jacobi: {
      double total = 0.0, binom = 1.0;
      for (int j = 0; j <= m; ++j) {
        double eu = 1.0;
        for (int r = 0; r < j; ++r) eu *= (spec.b + 1 + r) / (spec.a + spec.b + 2 + r);
        total += binom * std::pow(2.0, j) * eu * ((m - j) % 2 ? -1.0 : 1.0);
        binom = binom * (m - j) / (j + 1);
      }
      return total;
    }
  }
  return 0.0;
}

// Every α with α_k ≤ m(i_k) for some i with |i| = L + d − 1 (Novak & Ritter 1996).
std::vector<std::vector<int>> exact_monomials(const SparseGrid& grid, int d) {
  std::vector<std::vector<int>> result;
  std::vector<int> bound(d, 0);
  for (const auto& term : grid.terms) {
    int sum = 0;
    for (int l : term.levels) sum += l;
    if (sum != grid.level + d - 1) continue;
    std::vector<int> alpha(d, 0);
    while (true) {
      result.push_back(alpha);
      int k = 0;
      for (; k < d; ++k) {
        if (++alpha[k] <= term.exactness_degree[k]) break;
        alpha[k] = 0;
      }
      if (k == d) break;
    }
  }
  return result;
}

void expect_exact(const std::vector<FamilySpec>& families, int level, bool nested) {
  const SparseGrid grid = build_sparse_grid(families, level, nested);
  const int d = static_cast<int>(families.size());
  double worst = 0.0;
  for (const auto& alpha : exact_monomials(grid, d)) {
    double exact = 1.0;
    for (int k = 0; k < d; ++k) exact *= moment(families[k], alpha[k]);
    double approx = 0.0;
    for (Eigen::Index j = 0; j < grid.points.rows(); ++j) {
      double v = grid.weights[j];
      for (int k = 0; k < d; ++k) v *= std::pow(grid.points(j, k), alpha[k]);
      approx += v;
    }
    const double error = std::abs(approx - exact) / std::max(1.0, std::abs(exact));
    worst = std::max(worst, error);
    EXPECT_LE(error, kMomentRelative) << "level " << level << " alpha " << alpha[0] << "," << alpha[1];
  }
  std::printf("[measured] sparse grid d=%d level %d%s: %zu exact monomials, worst relative error %.3g\n", d, level,
              nested ? " (nested CC)" : "", exact_monomials(grid, d).size(), worst);
}

}  // namespace

TEST(SparseGrid, NestedClenshawCurtisPointCounts) {
  // d = 2, level 2 (q = 3): terms (1,1), (2,1), (1,2); the 3-point axes share the
  // origin → 1 + 2 + 2 = 5 points.
  // d = 2, level 3 (q = 4): terms (2,1), (1,2) (inside the others by nesting) and
  // (3,1), (2,2), (1,3): the 3×3 grid {−1,0,1}² (9) plus the two extra nodes
  // ±1/√2 on each axis (2 + 2) → 13 points.
  // d = 3, level 2: the origin plus two points on each axis → 7 points.
  const FamilySpec u{Family::legendre};
  EXPECT_EQ(build_sparse_grid({u, u}, 2, true).points.rows(), 5);
  EXPECT_EQ(build_sparse_grid({u, u}, 3, true).points.rows(), 13);
  EXPECT_EQ(build_sparse_grid({u, u, u}, 2, true).points.rows(), 7);
}

TEST(SparseGrid, GaussLinearGrowthPointCounts) {
  // Gauss rules with n = l points share only the node 0 of symmetric families for odd n.
  // Hermite d = 2, level 2: (1,1) = {(0,0)}, (2,1) = {±1}×{0}, (1,2) → 1 + 2 + 2 = 5.
  // Hermite d = 2, level 3: (2,1), (1,2): 2 + 2; (3,1), (1,3): 3 + 3 sharing the
  // origin; (2,2): 4 → 4 + 5 + 4 = 13.
  // Laguerre (a = 0) d = 2, level 3: no two rules share a node (the 1-point node
  // is 1, the 2-point nodes 2 ± √2, the 3-point nodes are not 1) → 2+2+3+4+3 = 14.
  const FamilySpec h{Family::hermite}, l{Family::laguerre, 0.0};
  EXPECT_EQ(build_sparse_grid({h, h}, 2, false).points.rows(), 5);
  EXPECT_EQ(build_sparse_grid({h, h}, 3, false).points.rows(), 13);
  EXPECT_EQ(build_sparse_grid({l, l}, 3, false).points.rows(), 14);
}

TEST(SparseGrid, CombinationCoefficientsFollowSmolyak) {
  // d = 2, level 3: |i| = 3 terms get (−1)^1 C(1,1) = −1, |i| = 4 terms +1.
  const SparseGrid grid = build_sparse_grid({{Family::hermite}, {Family::hermite}}, 3, false);
  ASSERT_EQ(grid.terms.size(), 5u);
  for (const auto& term : grid.terms)
    EXPECT_EQ(term.coefficient, term.levels[0] + term.levels[1] == 4 ? 1.0 : -1.0);
  EXPECT_NEAR(grid.weights.sum(), 1.0, 1e-14);
}

TEST(SparseGrid, IntegratesEveryMonomialUpToItsExactnessExactly) {
  expect_exact({{Family::laguerre, 0.5}, {Family::jacobi, 1.0, 2.0}}, 4, false);
  expect_exact({{Family::hermite}, {Family::legendre}, {Family::laguerre, 1.5}}, 3, false);
  expect_exact({{Family::legendre}, {Family::legendre}}, 5, true);
  expect_exact({{Family::legendre}, {Family::legendre}, {Family::legendre}}, 4, true);
}

TEST(SparseGrid, NestedRuleForHermiteIsAnInputErrorNamingTheKey) {
  try {
    build_sparse_grid({{Family::legendre}, {Family::hermite}}, 2, true);
    FAIL() << "expected InputError";
  } catch (const sigmatube::InputError& e) {
    EXPECT_EQ(e.where().key, "surrogate.nested");
  }
}
