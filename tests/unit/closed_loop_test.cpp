// SPDX-License-Identifier: MIT
// Tests of model/closed_loop.h: propagation accuracy, report grid, saturation,
// disturbance, divergence and case errors.
#include "sigmatube/model/closed_loop.h"

#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <numbers>
#include <string>

#include "sigmatube/core/error.h"
#include "sigmatube/model/builtin_models.h"
#include "sigmatube/model/model_factory.h"
#include "clohessy_wiltshire.h"

namespace sigmatube::model {
namespace {

casefile::CaseOptions builtin_case(const std::string& builtin, const std::string& plan_name, const std::string& plan) {
  casefile::CaseOptions options;
  options.model.builtin = builtin;
  options.plan.file = plan_name;
  options.plan.path = testing::TempDir() + "closed_loop_test_" + plan_name;
  std::ofstream(options.plan.path) << plan;
  return options;
}

Eigen::MatrixXd run(const ClosedLoop& loop, const Perturbation& p, long long sample = -1) {
  Eigen::MatrixXd out(static_cast<Eigen::Index>(loop.report_times().size()), loop.output_count());
  loop.run(p, out, sample);
  return out;
}

TEST(ClosedLoop, HillClohessyWiltshireMatchesClosedFormTransitionOverOneOrbit) {
  const double n = HillClohessyWiltshire::kDefaultMeanMotion;
  const double period = 2.0 * std::numbers::pi / n;
  auto options = builtin_case("hill-clohessy-wiltshire", "hcw.csv",
                              "t,x\n0,0\n" + std::to_string(period) + ",0\n");
  options.simulation.rtol = 1e-12;
  options.simulation.atol = 1e-14;
  options.simulation.step_in_seconds = 60.0;
  options.simulation.report_every_in_seconds = period / 16.0;
  const ClosedLoop loop(make_model(options.model), options);
  ASSERT_EQ(loop.report_times().size(), 17u);
  Perturbation p = loop.nominal();
  Eigen::Matrix<double, 6, 1> x0;
  x0 << 100.0, -250.0, 30.0, 0.05, -0.2, 0.01;  // invented initial relative state [m, m/s]
  p.initial_offset = x0;
  const Eigen::MatrixXd out = run(loop, p);
  double worst = 0.0;
  for (std::size_t k = 0; k < loop.report_times().size(); ++k) {
    const Eigen::Matrix<double, 6, 1> exact = clohessy_wiltshire_transition(n, loop.report_times()[k]) * x0;
    const Eigen::VectorXd ours = out.row(static_cast<Eigen::Index>(k)).head(6).transpose();
    worst = std::max(worst, (ours - exact).norm() / exact.norm());
  }
  std::cout << "HCW vs Clohessy-Wiltshire closed form: max relative error " << worst << "\n";
  constexpr double kRelativeTolerance = 1e-9;  // from the task: rtol 1e-12 over one orbit
  EXPECT_LT(worst, kRelativeTolerance);
}

TEST(ClosedLoop, ReportGridIsEveryStepThenTheEnd) {
  auto options = builtin_case("double-integrator-3d", "grid.csv", "t,x\n2,0\n9.5,1\n");
  options.simulation.report_every_in_seconds = 2.0;
  const ClosedLoop loop(make_model(options.model), options);
  EXPECT_EQ(loop.report_times(), (std::vector<double>{2, 4, 6, 8, 9.5}));
  options.simulation.report_every_in_seconds = 0.0;
  const ClosedLoop at_plan(make_model(options.model), options);
  EXPECT_EQ(at_plan.report_times(), (std::vector<double>{2, 9.5}));
  EXPECT_EQ(at_plan.output_names(),
            (std::vector<std::string>{"x", "y", "z", "vx", "vy", "vz", "cmd.ax", "cmd.ay", "cmd.az"}));
}

TEST(ClosedLoop, LqrTracksAConsistentPlanExactly) {
  // x_ref = t, vx_ref = 1, a_ff = 0 is a solution of the double integrator, so
  // starting on it the error stays zero and so does the feedback.
  auto options = builtin_case("double-integrator-3d", "track.csv", "t,x,vx\n0,0,1\n5,5,1\n10,10,1\n");
  options.control.law = casefile::ControlLaw::lqr;
  options.control.q = {1, 1, 1, 1, 1, 1};
  options.control.r = {1, 1, 1};
  options.simulation.report_every_in_seconds = 1.0;
  const ClosedLoop loop(make_model(options.model), options);
  const Eigen::MatrixXd out = run(loop, loop.nominal());
  for (std::size_t k = 0; k < loop.report_times().size(); ++k)
    EXPECT_NEAR(out(static_cast<Eigen::Index>(k), 0), loop.report_times()[k], 1e-9);
  // Started 2 m off, the LQR loop (eigenvalues (−√3 ± i)/2) pulls back within 10 s.
  Perturbation p = loop.nominal();
  p.initial_offset(0) = 2.0;
  const Eigen::MatrixXd off = run(loop, p);
  EXPECT_LT(std::abs(off(off.rows() - 1, 0) - 10.0), 2.0 * std::exp(-0.866 * 10.0) * 3.0);
}

TEST(ClosedLoop, ConstantDisturbanceIntegratesToAParabola) {
  // ẍ = d, x(0) = 0, ẋ(0) = 0 → x = d t²/2 (closed form).
  auto options = builtin_case("double-integrator-3d", "dist.csv", "t\n0\n4\n");
  options.simulation.report_every_in_seconds = 1.0;
  const ClosedLoop loop(make_model(options.model), options);
  Perturbation p = loop.nominal();
  p.disturbance = Eigen::MatrixXd::Zero(5, 6);
  p.disturbance.col(3).setConstant(0.3);
  const Eigen::MatrixXd out = run(loop, p);
  for (Eigen::Index k = 0; k < 5; ++k) EXPECT_NEAR(out(k, 0), 0.15 * k * k, 1e-9);
}

TEST(ClosedLoop, SaturationLimitsTheAppliedInputButNotTheCommand) {
  casefile::CaseOptions options;
  options.model.states = {"x", "v"};
  options.model.inputs = {"u"};
  options.model.rhs = {{"x", "v", {}}, {"v", "u", {}}};
  options.model.outputs = {{"applied", "u", {}}};
  options.plan.file = "sat.csv";
  options.plan.path = testing::TempDir() + "closed_loop_test_sat.csv";
  std::ofstream(options.plan.path) << "t,x\n0,0\n20,0\n";
  options.control.law = casefile::ControlLaw::lqr;
  options.control.q = {1, 1};
  options.control.r = {1};
  constexpr double kLimit = 0.2;
  options.control.limits = {{"u", -kLimit, kLimit, {}}};
  options.simulation.report_every_in_seconds = 0.25;
  const ClosedLoop loop(make_model(options.model), options);
  Perturbation p = loop.nominal();
  p.initial_offset(0) = 5.0;  // LQR asks for u = −5 at the start
  p.input_scale(0) = 1.1;
  const Eigen::MatrixXd out = run(loop, p);
  const Eigen::Index applied = 2, command = 3;
  EXPECT_EQ(loop.output_names()[applied], "applied");
  EXPECT_EQ(loop.output_names()[command], "cmd.u");
  EXPECT_LE(out.col(applied).cwiseAbs().maxCoeff(), kLimit);
  EXPECT_GT(out.col(command).cwiseAbs().maxCoeff(), kLimit);
  // cmd.u is the demand on the actuator, scale included, before saturation: 1.1·(−5).
  EXPECT_NEAR(out(0, command), -5.5, 1e-12);
  EXPECT_NEAR(out(0, applied), -kLimit, 1e-15);
}

TEST(ClosedLoop, DivergingRunThrowsNumericalErrorNamingSampleTimeAndState) {
  casefile::CaseOptions options;
  options.model.states = {"runaway"};
  options.model.rhs = {{"runaway", "runaway^2", {}}};
  options.plan.file = "div.csv";
  options.plan.path = testing::TempDir() + "closed_loop_test_div.csv";
  std::ofstream(options.plan.path) << "t,runaway\n0,1\n3,1\n";
  const ClosedLoop loop(make_model(options.model), options);
  try {
    run(loop, loop.nominal(), 42);
    FAIL();
  } catch (const NumericalError& error) {
    const std::string message = error.what();
    std::cout << message << "\n";
    EXPECT_NE(message.find("runaway"), std::string::npos);
    EXPECT_NE(message.find("sample 42"), std::string::npos);
    EXPECT_NE(message.find("t = "), std::string::npos);
    EXPECT_NEAR(error.time_in_seconds(), 1.0, 1e-3);  // x = 1/(1 − t) blows up at t = 1
  }
}

TEST(ClosedLoop, CaseErrorsAreInputErrors) {
  auto options = builtin_case("unicycle", "errs.csv", "t,x\n0,0\n1,1\n");
  options.control.limits = {{"sped", -1, 1, {"case.toml", 20, "control.limits.sped"}}};
  try {
    ClosedLoop loop(make_model(options.model), options);
    FAIL();
  } catch (const InputError& error) {
    EXPECT_EQ(error.where().line, 20);
    EXPECT_NE(std::string(error.what()).find("did you mean 'speed'?"), std::string::npos) << error.what();
  }
  options.control.limits.clear();
  options.simulation.report_every_in_seconds = -1.0;
  EXPECT_THROW(ClosedLoop(make_model(options.model), options), InputError);
  options.simulation.report_every_in_seconds = 0.0;
  options.simulation.step_in_seconds = -1.0;
  EXPECT_THROW(ClosedLoop(make_model(options.model), options), InputError);
}

TEST(ClosedLoop, Rk4AndDopri5AgreeOnTheUnicycle) {
  auto options = builtin_case("unicycle", "uni.csv", "t,speed,turn_rate\n0,1,0.2\n10,1,0.2\n");
  options.simulation.report_every_in_seconds = 2.0;
  options.simulation.rtol = 1e-11;
  options.simulation.atol = 1e-12;
  const ClosedLoop adaptive(make_model(options.model), options);
  options.simulation.integrator = casefile::IntegratorKind::rk4;
  options.simulation.step_in_seconds = 0.01;
  const ClosedLoop fixed(make_model(options.model), options);
  const Eigen::MatrixXd a = run(adaptive, adaptive.nominal()), b = run(fixed, fixed.nominal());
  // Constant speed and turn rate: a circle of radius 5, x = 5 sin(0.2 t), y = 5(1 − cos(0.2 t)).
  for (Eigen::Index k = 0; k < a.rows(); ++k) {
    const double t = adaptive.report_times()[static_cast<std::size_t>(k)];
    EXPECT_NEAR(a(k, 0), 5.0 * std::sin(0.2 * t), 1e-8);
    EXPECT_NEAR(a(k, 1), 5.0 * (1.0 - std::cos(0.2 * t)), 1e-8);
    EXPECT_NEAR(b(k, 0), a(k, 0), 1e-8);
  }
}

}  // namespace
}  // namespace sigmatube::model
