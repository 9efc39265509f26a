// SPDX-License-Identifier: MIT
#include "sigmatube/expansion/multi_index.h"

#include <gtest/gtest.h>

#include <cmath>

using namespace sigmatube::expansion;

namespace {
double binomial(int n, int k) {
  double v = 1.0;
  for (int j = 1; j <= k; ++j) v = v * (n - k + j) / j;
  return v;
}
}  // namespace

TEST(MultiIndex, TotalDegreeSetHasBinomialSize) {
  // Closed form: |{α ∈ ℕ^d : |α| ≤ p}| = C(d + p, p).
  for (int d = 1; d <= 5; ++d)
    for (int p = 0; p <= 6; ++p) {
      const MultiIndexSet set = total_degree_set(d, p);
      EXPECT_EQ(static_cast<double>(set.rows()), binomial(d + p, p)) << d << " " << p;
      EXPECT_TRUE(is_downward_closed(set));
      EXPECT_EQ(set.row(0).sum(), 0);
      EXPECT_TRUE((set.row(0).array() == 0).all());
    }
}

TEST(MultiIndex, RowsAreInGradedOrder) {
  const MultiIndexSet set = total_degree_set(3, 4);
  for (Eigen::Index r = 1; r < set.rows(); ++r) EXPECT_LE(set.row(r - 1).sum(), set.row(r).sum());
  // Within a degree the earlier dimension's degree is higher first: (1,0,0) before (0,1,0).
  EXPECT_EQ(set(1, 0), 1);
  EXPECT_EQ(set(2, 1), 1);
  EXPECT_EQ(set(3, 2), 1);
}

TEST(MultiIndex, HyperbolicSetMatchesHandCount) {
  // d = 2, p = 4, q = 0.5: (√α1 + √α2)² ≤ 4 ⇔ √α1 + √α2 ≤ 2: the axes (0…4, 0),
  // (0, 1…4) and (1, 1) only ((2,1) gives 2.41) → 5 + 4 + 1 = 10 indices.
  const MultiIndexSet set = hyperbolic_set(2, 4, 0.5);
  EXPECT_EQ(set.rows(), 10);
  EXPECT_TRUE(is_downward_closed(set));
  // q = 1 is the total-degree set.
  EXPECT_EQ(hyperbolic_set(3, 5, 1.0), total_degree_set(3, 5));
}

TEST(MultiIndex, DownwardClosedCheckCanFail) {
  MultiIndexSet set(2, 2);
  set << 0, 0, 1, 1;  // (1,1) without (1,0) and (0,1)
  EXPECT_FALSE(is_downward_closed(set));
}
