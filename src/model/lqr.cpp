// SPDX-License-Identifier: MIT
#include "sigmatube/model/lqr.h"

#include <algorithm>
#include <cmath>
#include <stdexcept>

#include "sigmatube/core/error.h"
#include "sigmatube/model/continuous_algebraic_riccati_equation.h"

namespace sigmatube::model {

Eigen::MatrixXd lqr_gain(const Eigen::MatrixXd& A, const Eigen::MatrixXd& B, const Eigen::MatrixXd& Q,
                         const Eigen::MatrixXd& R) {
  const Eigen::MatrixXd P = continuous_algebraic_riccati_equation(A, B, Q, R);
  return R.llt().solve(B.transpose() * P);
}

void linearize_plan(const Model& model, const Plan& plan, const Eigen::VectorXd& parameters, double t,
                    Eigen::MatrixXd& A, Eigen::MatrixXd& B) {
  const int n = model.state_count(), m = model.input_count();
  Eigen::VectorXd x(n), u(m);
  plan.evaluate(t, x.data(), u.data());
  A.resize(n, n);
  B.resize(n, m);
  model.jacobians(t, x.data(), u.data(), parameters.data(), A.data(), B.data());
}

RiccatiSchedule solve_riccati_differential_equation(const Model& model, const Plan& plan,
                                                    const Eigen::VectorXd& parameters, const Eigen::MatrixXd& Q,
                                                    const Eigen::MatrixXd& R, double max_step_in_seconds,
                                                    const Eigen::MatrixXd* terminal_cost) {
  if (!(max_step_in_seconds > 0.0)) throw std::logic_error("solve_riccati_differential_equation: step must be > 0");
  if (terminal_cost && (terminal_cost->rows() != Q.rows() || terminal_cost->cols() != Q.cols()))
    throw std::logic_error("solve_riccati_differential_equation: terminal cost must be n×n");
  const auto& knots = plan.times();
  RiccatiSchedule schedule;
  for (std::size_t k = 0; k + 1 < knots.size(); ++k) {
    const double span = knots[k + 1] - knots[k];
    const int pieces = std::max(1, static_cast<int>(std::ceil(span / max_step_in_seconds - 1e-9)));
    for (int i = 0; i < pieces; ++i) schedule.times.push_back(knots[k] + span * i / pieces);
  }
  schedule.times.push_back(knots.back());

  const Eigen::LLT<Eigen::MatrixXd> r_factor(R);
  Eigen::MatrixXd A, B;
  auto derivative = [&](double t, const Eigen::MatrixXd& P) -> Eigen::MatrixXd {
    linearize_plan(model, plan, parameters, t, A, B);
    const Eigen::MatrixXd PB = P * B;
    Eigen::MatrixXd dP = -(A.transpose() * P + P * A - PB * r_factor.solve(PB.transpose()) + Q);
    return 0.5 * (dP + dP.transpose());
  };

  const double tf = knots.back();
  linearize_plan(model, plan, parameters, tf, A, B);
  Eigen::MatrixXd P;
  try {
    P = terminal_cost ? *terminal_cost : continuous_algebraic_riccati_equation(A, B, Q, R);
  } catch (const NumericalError& error) {
    throw NumericalError(std::string("LQR terminal cost at the plan's end: ") + error.what(), -1, tf);
  }

  const std::size_t count = schedule.times.size();
  schedule.cost.resize(count);
  schedule.gain.resize(count);
  schedule.cost[count - 1] = P;
  schedule.gain[count - 1] = r_factor.solve(B.transpose() * P);
  for (std::size_t k = count - 1; k-- > 0;) {
    const double t1 = schedule.times[k + 1], t0 = schedule.times[k];
    linearize_plan(model, plan, parameters, t1, A, B);
    const Eigen::MatrixXd closed = A - B * r_factor.solve(B.transpose() * P);
    const double rate = closed.cwiseAbs().colwise().sum().maxCoeff();
    const int substeps = std::max(1, static_cast<int>(std::ceil((t1 - t0) * rate)));
    const double h = (t1 - t0) / substeps;
    double t = t1;
    for (int s = 0; s < substeps; ++s) {
      // Classical RK4 with step −h (backward in time).
      const Eigen::MatrixXd k1 = derivative(t, P);
      const Eigen::MatrixXd k2 = derivative(t - 0.5 * h, P - 0.5 * h * k1);
      const Eigen::MatrixXd k3 = derivative(t - 0.5 * h, P - 0.5 * h * k2);
      const Eigen::MatrixXd k4 = derivative(t - h, P - h * k3);
      P -= h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4);
      P = 0.5 * (P + P.transpose()).eval();
      t = t1 - (s + 1) * h;
    }
    if (!P.allFinite()) throw NumericalError("LQR: the Riccati differential equation diverged", -1, t0);
    linearize_plan(model, plan, parameters, t0, A, B);
    schedule.cost[k] = P;
    schedule.gain[k] = r_factor.solve(B.transpose() * P);
  }
  return schedule;
}

}  // namespace sigmatube::model
