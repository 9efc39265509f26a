// SPDX-License-Identifier: MIT
// Tests of model/expression_model.h: errors, accuracy against SciPy and against
// compiled C++, and concurrent evaluation.
#include "sigmatube/model/expression_model.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <fstream>
#include <functional>
#include <sstream>
#include <string>
#include <thread>

#include "sigmatube/core/error.h"
#include "sigmatube/model/closed_loop.h"
#include "sigmatube/model/model_factory.h"

namespace sigmatube::model {
namespace {

casefile::ModelOptions oscillator_options(const std::string& v_rhs) {
  casefile::ModelOptions options;
  options.states = {"x", "v"};
  options.inputs = {"u"};
  options.parameters = {{"k", 1.0, {}}, {"c", 0.1, {}}};
  options.rhs = {{"x", "v", {"case.toml", 7, "model.rhs.x"}}, {"v", v_rhs, {"case.toml", 7, "model.rhs.v"}}};
  return options;
}

InputError expression_error(const casefile::ModelOptions& options) {
  try {
    ExpressionModel model(options);
  } catch (const InputError& error) {
    return error;
  }
  ADD_FAILURE() << "no InputError";
  return InputError("none");
}

TEST(ExpressionModelErrors, SyntaxErrorGivesPositionAndLocation) {
  const InputError error = expression_error(oscillator_options("-k*x - * c"));
  const std::string message = error.what();
  EXPECT_EQ(error.where().line, 7);
  EXPECT_EQ(error.where().key, "model.rhs.v");
  // The stray operator '*' is character 7 counting from 0.
  EXPECT_NE(message.find("syntax error at position 7 in \"-k*x - * c\""), std::string::npos) << message;
}

TEST(ExpressionModelErrors, UndefinedSymbolIsNamed) {
  const std::string message = expression_error(oscillator_options("-k*x - damping*v + u")).what();
  EXPECT_NE(message.find("undefined symbol 'damping'"), std::string::npos) << message;
}

TEST(ExpressionModelErrors, StateWithoutRhsAndRhsForUnknownState) {
  auto options = oscillator_options("-k*x");
  options.rhs.pop_back();
  EXPECT_NE(std::string(expression_error(options).what()).find("state 'v' has no rhs"), std::string::npos);
  options = oscillator_options("-k*x");
  options.rhs.push_back({"vv", "1", {"case.toml", 8, "model.rhs.vv"}});
  const InputError error = expression_error(options);
  EXPECT_EQ(error.where().line, 8);
  EXPECT_NE(std::string(error.what()).find("did you mean 'v'?"), std::string::npos) << error.what();
}

TEST(ExpressionModelErrors, ReservedAndDuplicateNames) {
  auto options = oscillator_options("-k*x");
  options.states = {"t", "v"};
  EXPECT_THROW(ExpressionModel{options}, InputError);
  options = oscillator_options("-k*x");
  options.inputs = {"k"};
  EXPECT_THROW(ExpressionModel{options}, InputError);
}

TEST(ExpressionModel, EvaluatesRhsAndDerivedOutputsWithTime) {
  auto options = oscillator_options("-k*x - c*v + u + t");
  options.outputs = {{"energy", "0.5*v^2 + 0.5*k*x^2", {}}};
  const ExpressionModel model(options);
  const double x[2] = {2.0, 3.0}, u[1] = {0.5};
  const Eigen::VectorXd p = model.parameters();
  double d[2], y[1];
  model.rhs(10.0, x, u, p.data(), d);
  EXPECT_DOUBLE_EQ(d[0], 3.0);
  EXPECT_DOUBLE_EQ(d[1], -2.0 - 0.3 + 0.5 + 10.0);
  model.derived_outputs(0.0, x, u, p.data(), y);
  EXPECT_DOUBLE_EQ(y[0], 4.5 + 2.0);
}

// ---------------------------------------------------------------- pendulum runs
// θ̈ = −(g/L) sin θ − c θ̇, an invented test pendulum: g = 9.81, L = 1.3, c = 0.15.
constexpr double kG = 9.81, kL = 1.3, kC = 0.15;

casefile::CaseOptions pendulum_case(casefile::ControlLaw law) {
  casefile::CaseOptions options;
  options.model.states = {"theta", "omega"};
  options.model.inputs = {"torque"};
  options.model.parameters = {{"g", kG, {}}, {"L", kL, {}}, {"c", kC, {}}};
  options.model.rhs = {{"theta", "omega", {}}, {"omega", "-(g/L)*sin(theta) - c*omega + torque", {}}};
  options.plan.file = "pendulum_plan.csv";
  options.plan.path = testing::TempDir() + "expression_model_test_pendulum_plan.csv";
  std::ofstream(options.plan.path) << "t,theta,omega,torque\n0,0,0,0\n10,0,0,0\n";
  options.control.law = law;
  options.control.q = {1.0, 1.0};
  options.control.r = {1.0};
  options.simulation.step_in_seconds = 0.1;
  options.simulation.rtol = 1e-12;
  options.simulation.atol = 1e-14;
  options.simulation.report_every_in_seconds = 0.5;
  return options;
}

// A hand-written C++ model of the same pendulum.
class LambdaPendulum final : public Model {
 public:
  std::string name() const override { return "lambda-pendulum"; }
  const std::vector<std::string>& state_names() const override { return states_; }
  const std::vector<std::string>& input_names() const override { return inputs_; }
  const std::vector<std::string>& parameter_names() const override { return params_; }
  const std::vector<std::string>& derived_output_names() const override { return none_; }
  Eigen::VectorXd parameters() const override { return Eigen::Vector3d(kG, kL, kC); }
  void rhs(double, const double* x, const double* u, const double* p, double* d) const override {
    d[0] = x[1];
    d[1] = -(p[0] / p[1]) * std::sin(x[0]) - p[2] * x[1] + u[0];
  }

 private:
  std::vector<std::string> states_{"theta", "omega"}, inputs_{"torque"}, params_{"g", "L", "c"}, none_;
};

Eigen::MatrixXd run(const ClosedLoop& loop, double theta0, double omega0 = 0.0) {
  Perturbation p = loop.nominal();
  p.initial_offset << theta0, omega0;
  Eigen::MatrixXd out(static_cast<Eigen::Index>(loop.report_times().size()), loop.output_count());
  loop.run(p, out);
  return out;
}

TEST(ExpressionModel, PendulumMatchesScipySolveIvp) {
  const auto options = pendulum_case(casefile::ControlLaw::open_loop);
  const ClosedLoop loop(make_model(options.model), options);
  const double theta0 = 1.0;
  const Eigen::MatrixXd ours = run(loop, theta0);

  // Reference: SciPy's solve_ivp (RK45, rtol 1e-11, atol 1e-12), run now.
  const std::string script = testing::TempDir() + "expression_model_test_pendulum.py";
  std::ofstream(script) << "import numpy as np\n"
                           "from scipy.integrate import solve_ivp\n"
                           "g, L, c = 9.81, 1.3, 0.15\n"
                           "f = lambda t, y: [y[1], -(g/L)*np.sin(y[0]) - c*y[1]]\n"
                           "ts = np.arange(0, 21) * 0.5\n"
                           "s = solve_ivp(f, (0, 10), [1.0, 0.0], method='RK45', rtol=1e-11, atol=1e-12, t_eval=ts)\n"
                           "for k in range(len(ts)): print(repr(ts[k]), repr(s.y[0][k]), repr(s.y[1][k]))\n";
  FILE* pipe = popen((std::string(SIGMATUBE_PYTHON) + " " + script).c_str(), "r");
  ASSERT_NE(pipe, nullptr);
  std::string text;
  char buffer[4096];
  while (std::fgets(buffer, sizeof buffer, pipe)) text += buffer;
  ASSERT_EQ(pclose(pipe), 0) << text;
  std::istringstream in(text);
  double t, theta, omega, worst = 0.0;
  std::size_t k = 0;
  while (in >> t >> theta >> omega) {
    ASSERT_LT(k, loop.report_times().size());
    EXPECT_NEAR(loop.report_times()[k], t, 1e-12);
    const auto row = static_cast<Eigen::Index>(k);
    worst = std::max({worst, std::abs(ours(row, 0) - theta), std::abs(ours(row, 1) - omega)});
    ++k;
  }
  EXPECT_EQ(k, loop.report_times().size());
  std::cout << "pendulum vs SciPy solve_ivp: max abs difference " << worst << "\n";
  // Both sides are tolerance-controlled near 1e-11; global error over ~4 periods
  // stays well below 1e-7 (common practice).
  constexpr double kScipyAgreement = 1e-7;
  EXPECT_LT(worst, kScipyAgreement);
}

TEST(ExpressionModel, PendulumMatchesHandWrittenModel) {
  const auto options = pendulum_case(casefile::ControlLaw::lqr);
  const ClosedLoop expression(make_model(options.model), options);
  const ClosedLoop compiled(std::make_shared<LambdaPendulum>(), options);
  const Eigen::MatrixXd a = run(expression, 0.8, -0.3), b = run(compiled, 0.8, -0.3);
  const double difference = (a - b).cwiseAbs().maxCoeff();
  std::cout << "pendulum expression vs C++ model: max abs difference " << difference << "\n";
  // Same integrator, same arithmetic up to the parser's evaluation order.
  constexpr double kSameModelTolerance = 1e-10;
  EXPECT_LT(difference, kSameModelTolerance);
}

TEST(ExpressionModel, ConcurrentRunsEqualSerialRuns) {
  const auto options = pendulum_case(casefile::ControlLaw::lqr);
  const ClosedLoop loop(make_model(options.model), options);
  const double offsets[4] = {0.2, -0.5, 1.1, 0.05};
  Eigen::MatrixXd serial[4], parallel[4];
  for (int i = 0; i < 4; ++i) serial[i] = run(loop, offsets[i], 0.1 * i);
  std::thread a([&] {
    for (int i = 0; i < 4; i += 2) parallel[i] = run(loop, offsets[i], 0.1 * i);
  });
  std::thread b([&] {
    for (int i = 1; i < 4; i += 2) parallel[i] = run(loop, offsets[i], 0.1 * i);
  });
  a.join();
  b.join();
  for (int i = 0; i < 4; ++i) EXPECT_EQ((serial[i] - parallel[i]).cwiseAbs().maxCoeff(), 0.0) << i;
  EXPECT_NE((serial[0] - serial[1]).cwiseAbs().maxCoeff(), 0.0);
}

}  // namespace
}  // namespace sigmatube::model
