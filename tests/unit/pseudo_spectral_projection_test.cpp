// SPDX-License-Identifier: MIT
#include "sigmatube/expansion/pseudo_spectral_projection.h"

#include <gtest/gtest.h>

#include <cstdio>

#include "sigmatube/core/counter_rng.h"
#include "sigmatube/expansion/multi_index.h"
#include "sigmatube/expansion/polynomial_basis.h"

using namespace sigmatube::expansion;
using sigmatube::germ::Family;
using sigmatube::germ::FamilySpec;

namespace {
// Recovery of O(1) coefficients through sums with Smolyak weights of both signs:
// roundoff of a few hundred ulps.
constexpr double kRecovery = 1e-12;
// Direct sparse quadrature of c_α aliases products ψ_α ψ_β the grid does not
// integrate; for random O(1) coefficients the error is O(0.1…1), far above this.
constexpr double kAliasingVisible = 1e-3;

void expect_no_aliasing(const std::vector<FamilySpec>& families, int level, bool nested, bool direct_aliases) {
  const auto grid = sigmatube::design::build_sparse_grid(families, level, nested);
  const LinearProjection projection = sparse_pseudo_spectral_projection(families, grid);
  EXPECT_TRUE(is_downward_closed(projection.indices));
  EXPECT_TRUE((projection.indices.row(0).array() == 0).all());
  const sigmatube::CounterRng rng(17);
  Eigen::VectorXd truth(projection.indices.rows());
  for (Eigen::Index r = 0; r < truth.size(); ++r) truth[r] = rng.normal(r, 0);
  const Eigen::MatrixXd psi = basis_matrix(families, projection.indices, grid.points);
  const Eigen::VectorXd values = psi * truth;
  const double error = (projection.matrix * values - truth).cwiseAbs().maxCoeff();
  // What direct sparse quadrature of each coefficient would give.
  const Eigen::VectorXd direct = psi.transpose() * grid.weights.asDiagonal() * values;
  const double direct_error = (direct - truth).cwiseAbs().maxCoeff();
  std::printf("[measured] d=%zu level %d%s: %ld points, %ld coefficients; projection error %.3g, direct quadrature "
              "error %.3g\n",
              families.size(), level, nested ? " nested CC" : " Gauss", static_cast<long>(grid.points.rows()),
              static_cast<long>(truth.size()), error, direct_error);
  EXPECT_LE(error, kRecovery);
  if (direct_aliases) EXPECT_GT(direct_error, kAliasingVisible);
}
}  // namespace

TEST(SparsePseudoSpectralProjection, RecoversEveryPolynomialInItsIndexSetWithoutAliasing) {
  // Property (Conrad & Marzouk 2013, Theorem 1): each tensor projection is exact on
  // its own index rectangle and the Smolyak coefficients sum to 1 on the union.
  // With nested Clenshaw–Curtis the index set holds products the Smolyak rule does
  // not integrate, so direct sparse quadrature aliases (checked to show the test
  // can tell the two apart).
  expect_no_aliasing({{Family::legendre}, {Family::legendre}}, 5, true, true);
  expect_no_aliasing({{Family::legendre}, {Family::legendre}, {Family::legendre}}, 4, true, true);
  // With linear-growth Gauss rules the union set is {|α| ≤ L − 1} and the Smolyak
  // rule integrates x^γ whenever Σ_k ⌈(γ_k+1)/2⌉ ≤ L + d − 1, which covers every
  // product ψ_α ψ_β of that set (⌈(m+1)/2⌉ ≤ m/2 + 1): here both methods agree.
  expect_no_aliasing({{Family::hermite}, {Family::legendre}}, 4, false, false);
  expect_no_aliasing({{Family::hermite}, {Family::laguerre, 1.0}, {Family::jacobi, 2.0, 0.5}}, 3, false, false);
}

TEST(SparsePseudoSpectralProjection, IndexSetOfGaussLevelTwoIsTotalDegreeOne) {
  // Level 2, d = 2: terms (1,1) → {0}, (2,1) → α1 ≤ 1, (1,2) → α2 ≤ 1: the union is
  // {(0,0), (1,0), (0,1)}.
  const std::vector<FamilySpec> families = {{Family::hermite}, {Family::hermite}};
  const auto projection =
      sparse_pseudo_spectral_projection(families, sigmatube::design::build_sparse_grid(families, 2, false));
  EXPECT_EQ(projection.indices, total_degree_set(2, 1));
}
