// SPDX-License-Identifier: MIT
#include "sigmatube/design/sampling_design.h"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

using namespace sigmatube::design;
using sigmatube::germ::Family;
using sigmatube::germ::FamilySpec;

TEST(SobolDesign, FirstPointsAreTheVanDerCorputSequenceInDimensionOne) {
  // Closed form: the first Sobol coordinate is the base-2 van der Corput sequence
  // 0, 1/2, 3/4, 1/4, 3/8, 7/8, … (the all-zero first point is skipped); the second
  // starts 1/2, 1/4, 3/4 (Joe & Kuo direction numbers, from memory).
  const Eigen::MatrixXd u = sobol_unit_cube(2, 5);
  const double first[] = {0.5, 0.75, 0.25, 0.375, 0.875};
  for (int i = 0; i < 5; ++i) EXPECT_DOUBLE_EQ(u(i, 0), first[i]);
  EXPECT_DOUBLE_EQ(u(0, 1), 0.5);
  EXPECT_DOUBLE_EQ(u(1, 1), 0.25);
  EXPECT_DOUBLE_EQ(u(2, 1), 0.75);
}

TEST(SobolDesign, MapsThroughTheFamilyQuantileAndIsNested) {
  // Legendre: ξ = 2u − 1; the 8-point design is the prefix of the 16-point one.
  const std::vector<FamilySpec> families = {{Family::legendre}, {Family::hermite}};
  const Eigen::MatrixXd small = sobol_design(families, 8), large = sobol_design(families, 16);
  EXPECT_EQ(small, large.topRows(8));
  const Eigen::MatrixXd u = sobol_unit_cube(2, 8);
  for (int i = 0; i < 8; ++i) EXPECT_NEAR(small(i, 0), 2 * u(i, 0) - 1, 1e-15);
  EXPECT_DOUBLE_EQ(small(0, 1), 0.0);  // Φ⁻¹(1/2) = 0
}

TEST(LatinHypercube, PutsOnePointInEveryStratumAndDependsOnlyOnTheSeed) {
  const std::vector<FamilySpec> families = {{Family::legendre}, {Family::legendre}, {Family::legendre}};
  const int n = 50;
  const Eigen::MatrixXd design = latin_hypercube_design(families, n, 7);
  for (int k = 0; k < 3; ++k) {
    std::vector<int> count(n, 0);
    for (int i = 0; i < n; ++i) ++count[static_cast<int>(std::floor((design(i, k) + 1) / 2 * n))];
    for (int s = 0; s < n; ++s) EXPECT_EQ(count[s], 1) << "dimension " << k << " stratum " << s;
  }
  EXPECT_EQ(design, latin_hypercube_design(families, n, 7));
  EXPECT_NE(design, latin_hypercube_design(families, n, 8));
}
