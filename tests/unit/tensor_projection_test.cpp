// SPDX-License-Identifier: MIT
#include "sigmatube/expansion/tensor_projection.h"

#include <gtest/gtest.h>

#include <cmath>

#include "sigmatube/core/counter_rng.h"
#include "sigmatube/expansion/multi_index.h"
#include "sigmatube/expansion/polynomial_basis.h"

using namespace sigmatube::expansion;
using sigmatube::germ::Family;
using sigmatube::germ::FamilySpec;

namespace {
// Quadrature sums of O(1) values with positive weights: roundoff only.
constexpr double kRecovery = 1e-12;
}  // namespace

TEST(TensorProjection, UsesDegreePlusOnePointsPerDimension) {
  const auto projection = tensor_projection({{Family::hermite}, {Family::legendre}, {Family::laguerre, 0.0}}, 3, 1.0);
  EXPECT_EQ(projection.points.rows(), 64);  // (3 + 1)^3
  EXPECT_EQ(projection.indices.rows(), 20);  // C(3 + 3, 3)
  EXPECT_EQ(tensor_grid_size(3, 3), 64.0);
}

TEST(TensorProjection, RecoversPolynomialsOfTheTotalDegreeAndHyperbolicSets) {
  // Property: the (p+1)-point Gauss tensor rule integrates ψ_α ψ_β exactly for
  // α_k, β_k ≤ p, so the projection of a polynomial in the set is the polynomial.
  const std::vector<FamilySpec> families = {{Family::jacobi, 1.0, 3.0}, {Family::laguerre, 2.0}, {Family::hermite}};
  for (double q : {1.0, 0.6}) {
    const auto projection = tensor_projection(families, 5, q);
    const sigmatube::CounterRng rng(5);
    Eigen::VectorXd truth(projection.indices.rows());
    for (Eigen::Index r = 0; r < truth.size(); ++r) truth[r] = rng.normal(r, 1);
    const Eigen::VectorXd values = basis_matrix(families, projection.indices, projection.points) * truth;
    EXPECT_LE((projection.matrix * values - truth).cwiseAbs().maxCoeff(), kRecovery) << "q = " << q;
  }
}
