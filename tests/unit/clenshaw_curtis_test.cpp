// SPDX-License-Identifier: MIT
#include "sigmatube/design/clenshaw_curtis.h"

#include <gtest/gtest.h>

#include <cmath>

using sigmatube::design::clenshaw_curtis_points;
using sigmatube::design::clenshaw_curtis_rule;
using sigmatube::design::QuadratureRule;

namespace {
// Sums of ≤ 257 weighted terms of size ≤ 1: a few hundred ulps at most.
constexpr double kSumOfTerms = 1e-13;
}  // namespace

TEST(ClenshawCurtis, PointCountsDoubleMinusOne) {
  // n(1) = 1, n(l) = 2^(l−1) + 1 (the nested growth of the sparse grid design).
  EXPECT_EQ(clenshaw_curtis_points(1), 1);
  EXPECT_EQ(clenshaw_curtis_points(2), 3);
  EXPECT_EQ(clenshaw_curtis_points(3), 5);
  EXPECT_EQ(clenshaw_curtis_points(4), 9);
  EXPECT_EQ(clenshaw_curtis_points(5), 17);
}

TEST(ClenshawCurtis, ThreeAndFivePointWeightsAreSimpsonAndTheirClosedForm) {
  // Closed form: the 3-point rule is Simpson's rule (1/3, 4/3, 1/3 on [−1, 1]);
  // the 5-point rule has weights (1, 8, 12, 8, 1)/15 on [−1, 1] (from memory,
  // Trefethen, "Is Gauss quadrature better than Clenshaw–Curtis?", SIAM Rev. 2008).
  const QuadratureRule three = clenshaw_curtis_rule(2);
  const double simpson[] = {1.0 / 6, 4.0 / 6, 1.0 / 6};
  for (int j = 0; j < 3; ++j) EXPECT_NEAR(three.weights[j], simpson[j], kSumOfTerms);
  const QuadratureRule five = clenshaw_curtis_rule(3);
  const double fifteenths[] = {1, 8, 12, 8, 1};
  for (int j = 0; j < 5; ++j) EXPECT_NEAR(five.weights[j], fifteenths[j] / 30.0, kSumOfTerms);
  EXPECT_NEAR(five.nodes[1], -std::sqrt(0.5), kSumOfTerms);
}

TEST(ClenshawCurtis, IntegratesMonomialsUpToDegreeNAgainstUniformMoments) {
  // Closed form: ξ ~ U(−1, 1) has E[ξ^m] = 1/(m + 1) for even m, 0 for odd m.
  for (int level = 1; level <= 8; ++level) {
    const QuadratureRule rule = clenshaw_curtis_rule(level);
    EXPECT_EQ(rule.exactness_degree, level == 1 ? 1 : rule.size());
    for (int m = 0; m <= rule.exactness_degree; ++m) {
      const double exact = m % 2 == 0 ? 1.0 / (m + 1) : 0.0;
      EXPECT_NEAR((rule.weights.array() * rule.nodes.array().pow(m)).sum(), exact, kSumOfTerms)
          << "level " << level << " m " << m;
    }
    if (level == 2 || level == 3) {
      // The next even degree is not integrated exactly, so the check above can
      // fail (at higher levels the miss is below 1e-8: Clenshaw–Curtis is nearly
      // as accurate as Gauss on monomials, Trefethen 2008).
      const int m = rule.exactness_degree + 1;
      EXPECT_GT(std::abs((rule.weights.array() * rule.nodes.array().pow(m)).sum() - 1.0 / (m + 1)), 1e-6);
    }
  }
}

TEST(ClenshawCurtis, EachLevelContainsThePreviousLevelsNodesExactly) {
  for (int level = 2; level <= 8; ++level) {
    const QuadratureRule coarse = clenshaw_curtis_rule(level - 1), fine = clenshaw_curtis_rule(level);
    for (int j = 0; j < coarse.size(); ++j) {
      const int position = coarse.size() == 1 ? fine.size() / 2 : 2 * j;
      EXPECT_EQ(fine.nodes[position], coarse.nodes[j]) << "level " << level;  // bitwise: merged without tolerance
    }
  }
}
