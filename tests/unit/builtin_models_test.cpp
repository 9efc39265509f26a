// SPDX-License-Identifier: MIT
// Tests of model/builtin_models.h and model/model_factory.h.
#include "sigmatube/model/builtin_models.h"

#include <gtest/gtest.h>

#include <cmath>
#include <memory>
#include <string>

#include "sigmatube/core/error.h"
#include "sigmatube/model/model_factory.h"

namespace sigmatube::model {
namespace {

// Central differences with h = 1e-6 on smooth functions of O(1) scale have error
// ~h² + eps/h ≈ 1e-10; 1e-7 relative leaves room for the larger entries (common practice).
constexpr double kJacobianTolerance = 1e-7;

void expect_analytic_jacobians_match_differences(const Model& model, const Eigen::VectorXd& x, const Eigen::VectorXd& u) {
  const int n = model.state_count(), m = model.input_count();
  const Eigen::VectorXd p = model.parameters();
  Eigen::MatrixXd A(n, n), B(n, m), A_fd(n, n), B_fd(n, m);
  model.jacobians(0.3, x.data(), u.data(), p.data(), A.data(), B.data());
  // The base class implementation is the central-difference one.
  model.Model::jacobians(0.3, x.data(), u.data(), p.data(), A_fd.data(), B_fd.data());
  const double scale = std::max({1.0, A.cwiseAbs().maxCoeff(), B.cwiseAbs().maxCoeff()});
  EXPECT_LT((A - A_fd).cwiseAbs().maxCoeff(), kJacobianTolerance * scale) << model.name() << "\nA=\n" << A << "\nfd=\n" << A_fd;
  EXPECT_LT((B - B_fd).cwiseAbs().maxCoeff(), kJacobianTolerance * scale) << model.name() << "\nB=\n" << B << "\nfd=\n" << B_fd;
}

std::unique_ptr<Model> builtin(const std::string& name, std::vector<casefile::NamedValue> parameters = {}) {
  casefile::ModelOptions options;
  options.builtin = name;
  options.parameters = std::move(parameters);
  return make_model(options);
}

TEST(BuiltinModels, AnalyticJacobiansMatchCentralDifferences) {
  Eigen::VectorXd x6(6), u3(3);
  x6 << 12.0, -30.0, 4.0, 0.3, -0.2, 0.05;
  u3 << 0.01, -0.02, 0.03;
  // A larger mean motion so the n² entries are not lost in the tolerance.
  expect_analytic_jacobians_match_differences(*builtin("hill-clohessy-wiltshire", {{"mean_motion", 0.3, {}}}), x6, u3);
  expect_analytic_jacobians_match_differences(*builtin("double-integrator-3d", {{"drag", 0.4, {}}}), x6, u3);
  Eigen::VectorXd x3(3), u2(2);
  x3 << 1.0, 2.0, 0.7;
  u2 << 3.0, -0.4;
  expect_analytic_jacobians_match_differences(*builtin("unicycle", {{"slip", 0.1, {}}}), x3, u2);
  Eigen::VectorXd f(3);
  f << 1.0, -2.0, 16.0;
  expect_analytic_jacobians_match_differences(
      *builtin("multirotor-point-mass", {{"wind_x", 3.0, {}}, {"wind_z", -1.0, {}}, {"drag_area", 0.2, {}}}), x6, f);
}

TEST(BuiltinModels, HillClohessyWiltshireRightHandSideIsTheTextbookEquations) {
  // ẍ = 3n²x + 2nẏ + a_x, ÿ = −2nẋ + a_y, z̈ = −n²z + a_z (Clohessy & Wiltshire 1960).
  const auto model = builtin("hill-clohessy-wiltshire");
  const double n = HillClohessyWiltshire::kDefaultMeanMotion;
  const double x[6] = {100.0, -50.0, 20.0, 0.1, -0.2, 0.3}, u[3] = {1e-3, 2e-3, -3e-3};
  const Eigen::VectorXd p = model->parameters();
  double d[6];
  model->rhs(0.0, x, u, p.data(), d);
  EXPECT_DOUBLE_EQ(d[3], 3 * n * n * x[0] + 2 * n * x[4] + u[0]);
  EXPECT_DOUBLE_EQ(d[4], -2 * n * x[3] + u[1]);
  EXPECT_DOUBLE_EQ(d[5], -n * n * x[2] + u[2]);
}

TEST(BuiltinModels, MultirotorHoversWithThrustEqualToWeight) {
  const auto model = builtin("multirotor-point-mass");
  const Eigen::VectorXd p = model->parameters();
  const double x[6] = {0, 0, 10, 0, 0, 0}, u[3] = {0, 0, p(0) * 9.80665};
  double d[6];
  model->rhs(0.0, x, u, p.data(), d);
  for (double v : d) EXPECT_NEAR(v, 0.0, 1e-15);
  // Wind from +x drags a vehicle at rest towards +x: F = c·|w|·w.
  Eigen::VectorXd windy = p;
  windy(2) = 5.0;
  model->rhs(0.0, x, u, windy.data(), d);
  EXPECT_NEAR(d[3], p(1) * 25.0 / p(0), 1e-12);
}

TEST(ModelFactory, UnknownBuiltinSuggestsTheNearestName) {
  casefile::ModelOptions options;
  options.builtin = "unicylce";
  options.where = {"case.toml", 3, "model.builtin"};
  try {
    make_model(options);
    FAIL();
  } catch (const InputError& error) {
    const std::string message = error.what();
    EXPECT_NE(message.find("did you mean 'unicycle'?"), std::string::npos) << message;
    EXPECT_NE(message.find("case.toml:3"), std::string::npos) << message;
  }
}

TEST(ModelFactory, UnknownBuiltinParameterIsReportedAtItsLocation) {
  try {
    builtin("hill-clohessy-wiltshire", {{"mean_motoin", 0.001, {"case.toml", 5, "model.mean_motoin"}}});
    FAIL();
  } catch (const InputError& error) {
    const std::string message = error.what();
    EXPECT_EQ(error.where().line, 5);
    EXPECT_NE(message.find("did you mean 'mean_motion'?"), std::string::npos) << message;
  }
  EXPECT_THROW(builtin("multirotor-point-mass", {{"mass", -1.0, {}}}), InputError);
}

TEST(ModelFactory, BuiltinParametersOverrideDefaults) {
  const auto model = builtin("multirotor-point-mass", {{"gravity", 3.71, {}}});
  EXPECT_EQ(model->parameters()(5), 3.71);
  EXPECT_EQ(model->parameter_names()[5], "gravity");
  EXPECT_EQ(builtin("unicycle")->state_names(), (std::vector<std::string>{"x", "y", "heading"}));
}

}  // namespace
}  // namespace sigmatube::model
