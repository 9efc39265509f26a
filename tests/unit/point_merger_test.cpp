// SPDX-License-Identifier: MIT
#include "sigmatube/design/point_merger.h"

#include <gtest/gtest.h>

TEST(PointMerger, MergesWithinToleranceOnly) {
  // Tolerance 1e-12·max(1, |x|) (the header's rule): 1e-14 apart merges, 1e-9 does not.
  sigmatube::design::PointMerger merger(2);
  const double a[] = {0.5, 1e-17}, b[] = {0.5 + 1e-14, 0.0}, c[] = {0.5 + 1e-9, 0.0};
  EXPECT_EQ(merger.insert(a), 0);
  EXPECT_EQ(merger.insert(b), 0);
  EXPECT_EQ(merger.insert(c), 1);
  EXPECT_EQ(merger.find(b), 0);
  EXPECT_EQ(merger.size(), 2);
}
