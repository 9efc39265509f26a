// SPDX-License-Identifier: MIT
// Tests of model/lqr.h and model/controller.h.
#include "sigmatube/model/lqr.h"

#include <gtest/gtest.h>

#include <cmath>

#include "sigmatube/core/error.h"
#include "sigmatube/model/continuous_algebraic_riccati_equation.h"
#include "sigmatube/model/controller.h"
#include "sigmatube/model/model_factory.h"

namespace sigmatube::model {
namespace {

std::unique_ptr<Model> scalar_integrator() {
  casefile::ModelOptions options;
  options.states = {"x"};
  options.inputs = {"u"};
  options.rhs = {{"x", "u", {}}};
  return make_model(options);
}

Plan zero_plan(const Model& model, double t_end) {
  return Plan({0.0, t_end}, Eigen::MatrixXd::Zero(2, model.state_count()), Eigen::MatrixXd::Zero(2, model.input_count()),
              casefile::Interpolation::linear);
}

TEST(RiccatiDifferentialEquation, ScalarIntegratorMatchesHyperbolicTangent) {
  // ẋ = u, Q = R = 1, P(T) = 0: −ṗ = 1 − p², so p(t) = tanh(T − t) (closed form,
  // separation of variables).
  const auto model = scalar_integrator();
  const double T = 10.0;
  const Plan plan = zero_plan(*model, T);
  const Eigen::MatrixXd one = Eigen::MatrixXd::Ones(1, 1), zero = Eigen::MatrixXd::Zero(1, 1);
  const RiccatiSchedule s =
      solve_riccati_differential_equation(*model, plan, model->parameters(), one, one, 0.025, &zero);
  double worst = 0.0;
  for (std::size_t k = 0; k < s.times.size(); ++k)
    worst = std::max(worst, std::abs(s.cost[k](0, 0) - std::tanh(T - s.times[k])));
  std::cout << "Riccati ODE vs tanh: max error " << worst << " on " << s.times.size() << " grid points\n";
  // RK4 at h = 0.025 on a function with O(1) derivatives: global error ~1e-8 (measured 1e-7 at h = 0.05, ×1/16 per halving).
  constexpr double kRk4Tolerance = 1e-7;
  EXPECT_LT(worst, kRk4Tolerance);
  EXPECT_GE(s.times.size(), 401u);  // grid no coarser than the step
}

TEST(RiccatiDifferentialEquation, ConvergesToAlgebraicSolutionFarFromTheHorizon) {
  // Double integrator, Q = I, R = I: the algebraic solution per axis is
  // [[√3, 1], [1, √3]] (closed form, see continuous_algebraic_riccati_equation_test).
  // From P(T) = 0 the backward solution approaches it like exp(−2·(√3/2)·(T − t)).
  casefile::ModelOptions options;
  options.builtin = "double-integrator-3d";
  const auto model = make_model(options);
  const double T = 30.0;
  const Plan plan = zero_plan(*model, T);
  const Eigen::MatrixXd Q = Eigen::MatrixXd::Identity(6, 6), R = Eigen::MatrixXd::Identity(3, 3);
  const Eigen::MatrixXd zero = Eigen::MatrixXd::Zero(6, 6);
  const RiccatiSchedule s = solve_riccati_differential_equation(*model, plan, model->parameters(), Q, R, 0.1, &zero);
  const Eigen::MatrixXd& P0 = s.cost.front();
  const double r3 = std::sqrt(3.0);
  double worst = 0.0;
  for (int axis = 0; axis < 3; ++axis) {
    worst = std::max({worst, std::abs(P0(axis, axis) - r3), std::abs(P0(axis + 3, axis + 3) - r3),
                      std::abs(P0(axis, axis + 3) - 1.0), std::abs(P0(axis + 3, axis) - 1.0)});
  }
  worst = std::max(worst, std::abs(P0(0, 1)));  // axes decouple
  std::cout << "Riccati ODE at t = 0 vs algebraic closed form: max error " << worst << "\n";
  constexpr double kConvergedTolerance = 1e-9;
  EXPECT_LT(worst, kConvergedTolerance);
  // Near the horizon it has not converged: P(T) = 0.
  EXPECT_EQ(s.cost.back().norm(), 0.0);
}

TEST(Controller, TimeVaryingLqrWithAlgebraicTerminalCostIsConstantAndStabilizing) {
  casefile::ModelOptions model_options;
  model_options.builtin = "double-integrator-3d";
  const auto model = make_model(model_options);
  const Plan plan = zero_plan(*model, 20.0);
  casefile::ControlOptions control;
  control.law = casefile::ControlLaw::lqr;
  control.q = {1, 1, 1, 1, 1, 1};
  control.r = {1, 1, 1};
  const auto controller = make_controller(control, *model, plan, 1.0);
  Eigen::MatrixXd expected = Eigen::MatrixXd::Zero(3, 6);
  for (int i = 0; i < 3; ++i) {
    expected(i, i) = 1.0;  // K = BᵀP = [1, √3] per axis (closed form above)
    expected(i, i + 3) = std::sqrt(3.0);
  }
  for (double t : {0.0, 7.3, 20.0}) EXPECT_LT((controller->gain(t) - expected).cwiseAbs().maxCoeff(), 1e-9) << t;

  Eigen::MatrixXd A, B;
  linearize_plan(*model, plan, model->parameters(), 0.0, A, B);
  const Eigen::VectorXcd eigenvalues = (A - B * controller->gain(3.0)).eigenvalues();
  for (Eigen::Index i = 0; i < eigenvalues.size(); ++i) EXPECT_LT(eigenvalues(i).real(), 0.0);

  control.time_varying = false;
  EXPECT_LT((make_controller(control, *model, plan, 1.0)->gain(5.0) - expected).cwiseAbs().maxCoeff(), 1e-12);
}

TEST(Controller, WrongWeightCountsAreInputErrorsAtTheirKeys) {
  casefile::ModelOptions model_options;
  model_options.builtin = "unicycle";
  const auto model = make_model(model_options);
  const Plan plan = zero_plan(*model, 5.0);
  casefile::ControlOptions control;
  control.law = casefile::ControlLaw::lqr;
  control.where = {"case.toml", 12, ""};
  control.q = {1, 1};
  control.r = {1, 1};
  try {
    make_controller(control, *model, plan, 1.0);
    FAIL();
  } catch (const InputError& error) {
    EXPECT_EQ(error.where().key, "control.q");
    EXPECT_NE(std::string(error.what()).find("expected 3"), std::string::npos) << error.what();
  }
  control.q = {1, 1, 1};
  control.r = {1, 0};
  try {
    make_controller(control, *model, plan, 1.0);
    FAIL();
  } catch (const InputError& error) {
    EXPECT_EQ(error.where().key, "control.r");
  }
  control.law = casefile::ControlLaw::gain;
  control.gain = {{1, 2, 3}};
  EXPECT_THROW(make_controller(control, *model, plan, 1.0), InputError);
}

TEST(Controller, FixedGainCommandsFeedforwardMinusGainTimesError) {
  Eigen::MatrixXd K(2, 3);
  K << 1, 2, 3, 4, 5, 6;
  const Controller controller(K);
  const double x[3] = {1, 1, 1}, x_ref[3] = {0, 1, 3}, u_ff[2] = {10, 20};
  double u[2];
  controller.command(0.0, x, x_ref, u_ff, u);
  // e = (1, 0, −2): K e = (1 − 6, 4 − 12) = (−5, −8).
  EXPECT_DOUBLE_EQ(u[0], 15.0);
  EXPECT_DOUBLE_EQ(u[1], 28.0);
}

}  // namespace
}  // namespace sigmatube::model
