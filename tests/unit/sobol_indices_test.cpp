// SPDX-License-Identifier: MIT
#include "sigmatube/expansion/sobol_indices.h"

#include <gtest/gtest.h>

#include "sigmatube/expansion/multi_index.h"

using namespace sigmatube::expansion;

TEST(SobolIndices, FollowFromSquaredCoefficients) {
  // Closed form (Sudret 2008): with coefficients c_(1,0) = 1, c_(0,1) = 2,
  // c_(1,1) = 2 and D = 1 + 4 + 4 = 9: S1 = 1/9, S2 = 4/9, S_T1 = 5/9, S_T2 = 8/9.
  // A second column with only the constant term has zero variance: indices 0.
  const MultiIndexSet indices = total_degree_set(2, 2);  // (0,0) (1,0) (0,1) (2,0) (1,1) (0,2)
  Eigen::MatrixXd c = Eigen::MatrixXd::Zero(indices.rows(), 2);
  c(0, 0) = 5.0;
  c(1, 0) = 1.0;
  c(2, 0) = 2.0;
  c(4, 0) = -2.0;
  c(0, 1) = 3.0;
  ASSERT_EQ(indices(4, 0), 1);
  ASSERT_EQ(indices(4, 1), 1);
  const Eigen::MatrixXd first = sobol_first_order(indices, c), total = sobol_total(indices, c);
  constexpr double kRoundoff = 1e-15;
  EXPECT_NEAR(first(0, 0), 1.0 / 9, kRoundoff);
  EXPECT_NEAR(first(0, 1), 4.0 / 9, kRoundoff);
  EXPECT_NEAR(total(0, 0), 5.0 / 9, kRoundoff);
  EXPECT_NEAR(total(0, 1), 8.0 / 9, kRoundoff);
  EXPECT_EQ(first.row(1).norm(), 0.0);
  EXPECT_EQ(total.row(1).norm(), 0.0);
}
