// SPDX-License-Identifier: MIT
#include "sigmatube/expansion/regression.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>

#include "sigmatube/core/counter_rng.h"
#include "sigmatube/core/error.h"
#include "sigmatube/expansion/multi_index.h"
#include "sigmatube/expansion/polynomial_basis.h"

using namespace sigmatube::expansion;
using sigmatube::casefile::RegressionDesign;
using sigmatube::germ::Family;
using sigmatube::germ::FamilySpec;

namespace {
// Least squares on a well-conditioned design recovers an exactly representable
// function to roundoff: coefficients O(1), condition number O(10).
constexpr double kRecovery = 1e-12;
// Relative LOO of a function inside the basis: residuals are roundoff (~1e-15),
// so mean(e²)/var ~ 1e-30; 1e-20 leaves ten orders of margin and still fails
// for any real misfit.
constexpr double kExactLoo = 1e-20;
// Common practice: a leave-one-out estimate is trusted "within a factor 2" of
// the true generalization error (Blatman & Sudret 2010 report similar agreement).
constexpr double kLooFactor = 2.0;
}  // namespace

TEST(Regression, RecoversAPolynomialInTheBasisWithZeroLeaveOneOutError) {
  const std::vector<FamilySpec> families = {{Family::hermite}, {Family::legendre}, {Family::laguerre, 1.0}};
  const MultiIndexSet indices = total_degree_set(3, 3);
  for (RegressionDesign design : {RegressionDesign::sobol, RegressionDesign::latin_hypercube}) {
    const RegressionProjection projection = regression_projection(families, indices, 2.0, design, 11);
    EXPECT_EQ(projection.points.rows(), 2 * indices.rows());
    const sigmatube::CounterRng rng(3);
    Eigen::MatrixXd truth(indices.rows(), 2);
    for (Eigen::Index r = 0; r < truth.rows(); ++r)
      for (int c = 0; c < 2; ++c) truth(r, c) = rng.normal(r, c);
    const Eigen::MatrixXd values = projection.basis * truth;
    const Eigen::MatrixXd coefficients = projection.matrix * values;
    const double recovery = (coefficients - truth).cwiseAbs().maxCoeff();
    EXPECT_LE(recovery, kRecovery);
    const Eigen::VectorXd loo = relative_leave_one_out_error(projection, values, coefficients);
    EXPECT_LE(loo.maxCoeff(), kExactLoo);
    std::printf("[measured] regression on a basis polynomial (%s): coefficient error %.3g, relative LOO %.3g\n",
                design == RegressionDesign::sobol ? "sobol" : "lhs", recovery, loo.maxCoeff());
  }
}

TEST(Regression, LeaveOneOutErrorIsWithinAFactorTwoOfTheHeldOutError) {
  // f(ξ) = exp(0.7 ξ1) sin(2 ξ2) + ξ1 ξ2², ξ ~ U(−1,1)², degree 5, 5 runs per basis
  // function; the true error is measured on 20 000 fresh uniform points. (With
  // only 3 runs per basis function the LOO estimate is ~4× pessimistic here: it
  // refits with N − 1 points where each point still carries much leverage.)
  const std::vector<FamilySpec> families = {{Family::legendre}, {Family::legendre}};
  const auto f = [](double x, double y) { return std::exp(0.7 * x) * std::sin(2 * y) + x * y * y; };
  const MultiIndexSet indices = total_degree_set(2, 5);
  const RegressionProjection projection =
      regression_projection(families, indices, 5.0, RegressionDesign::latin_hypercube, 5);
  Eigen::MatrixXd values(projection.points.rows(), 1);
  for (Eigen::Index i = 0; i < values.rows(); ++i) values(i, 0) = f(projection.points(i, 0), projection.points(i, 1));
  const Eigen::MatrixXd coefficients = projection.matrix * values;
  const double loo = relative_leave_one_out_error(projection, values, coefficients)[0];

  const int n_test = 20000;
  const sigmatube::CounterRng rng(99);
  Eigen::MatrixXd test_points(n_test, 2);
  Eigen::VectorXd test_values(n_test);
  for (int i = 0; i < n_test; ++i) {
    test_points(i, 0) = 2 * rng.uniform(i, 0) - 1;
    test_points(i, 1) = 2 * rng.uniform(i, 1) - 1;
    test_values[i] = f(test_points(i, 0), test_points(i, 1));
  }
  const Eigen::VectorXd predicted = basis_matrix(families, indices, test_points) * coefficients.col(0);
  const double variance = (test_values.array() - test_values.mean()).square().mean();
  const double held_out = (predicted - test_values).squaredNorm() / n_test / variance;
  std::printf("[measured] regression LOO %.3g vs held-out %.3g (ratio %.3f)\n", loo, held_out, loo / held_out);
  EXPECT_GT(held_out, 0.0);
  EXPECT_LE(loo, kLooFactor * held_out);
  EXPECT_GE(loo, held_out / kLooFactor);
}

TEST(Regression, OversamplingBelowTwoIsAnInputError) {
  try {
    regression_projection({{Family::hermite}}, total_degree_set(1, 3), 1.5, RegressionDesign::sobol);
    FAIL() << "expected InputError";
  } catch (const sigmatube::InputError& e) {
    EXPECT_EQ(e.where().key, "surrogate.oversampling");
  }
}

TEST(Regression, RankDeficientDesignIsANumericalError) {
  // Eight copies of one point cannot identify a degree-2 basis.
  Eigen::MatrixXd points = Eigen::MatrixXd::Constant(8, 1, 0.3);
  EXPECT_THROW(regression_on_points({{Family::hermite}}, total_degree_set(1, 2), points), sigmatube::NumericalError);
}
