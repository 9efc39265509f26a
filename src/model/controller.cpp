// SPDX-License-Identifier: MIT
#include "sigmatube/model/controller.h"

#include <algorithm>
#include <cmath>
#include <sstream>
#include <stdexcept>

#include "sigmatube/core/error.h"
#include "sigmatube/model/grid_walk.h"
#include "sigmatube/model/lqr.h"

namespace sigmatube::model {

Controller::Controller(int state_count, int input_count) : n_(state_count), m_(input_count), open_loop_(true) {}

Controller::Controller(const Eigen::MatrixXd& gain)
    : n_(static_cast<int>(gain.cols())), m_(static_cast<int>(gain.rows())), open_loop_(false), times_{0.0} {
  gains_.assign(gain.data(), gain.data() + gain.size());
}

Controller::Controller(std::vector<double> times, const std::vector<Eigen::MatrixXd>& gains)
    : open_loop_(false), times_(std::move(times)) {
  if (times_.empty() || gains.size() != times_.size()) throw std::logic_error("Controller: one gain per grid time");
  m_ = static_cast<int>(gains.front().rows());
  n_ = static_cast<int>(gains.front().cols());
  for (std::size_t k = 0; k < gains.size(); ++k) {
    if (gains[k].rows() != m_ || gains[k].cols() != n_) throw std::logic_error("Controller: gain shapes differ");
    if (k > 0 && !(times_[k] > times_[k - 1])) throw std::logic_error("Controller: grid times must increase");
    gains_.insert(gains_.end(), gains[k].data(), gains[k].data() + gains[k].size());
  }
}

Eigen::MatrixXd Controller::gain(double t) const {
  Eigen::MatrixXd K = Eigen::MatrixXd::Zero(m_, n_);
  if (open_loop_) return K;
  Eigen::VectorXd e(n_), u(m_);
  // Read K column by column through command(): u = 0 − K·e_j.
  const Eigen::VectorXd zero_state = Eigen::VectorXd::Zero(n_);
  const Eigen::VectorXd zero_input = Eigen::VectorXd::Zero(m_);
  for (int j = 0; j < n_; ++j) {
    e.setZero();
    e(j) = 1.0;
    command(t, e.data(), zero_state.data(), zero_input.data(), u.data());
    K.col(j) = -u;
  }
  return K;
}

void Controller::gain_interval(double t, std::size_t* hint, std::size_t& k, double& w) const {
  k = 0;
  w = 0.0;
  if (times_.size() > 1) {
    if (t >= times_.back()) {
      k = times_.size() - 1;
    } else if (t > times_.front()) {
      k = hint ? walk_to_interval(times_, t, times_.size() - 2, *hint)
               : static_cast<std::size_t>(std::upper_bound(times_.begin(), times_.end(), t) - times_.begin()) - 1;
      w = (t - times_[k]) / (times_[k + 1] - times_[k]);
    }
    if (hint) *hint = k;
  }
}

void Controller::apply(std::size_t k, double w, const double* x, const double* x_ref, const double* u_ff,
                       double* u_cmd) const {
  for (int i = 0; i < m_; ++i) u_cmd[i] = u_ff[i];
  if (open_loop_) return;
  const std::size_t stride = static_cast<std::size_t>(m_) * static_cast<std::size_t>(n_);
  const double* K0 = gains_.data() + k * stride;
  const double* K1 = w > 0.0 ? K0 + stride : K0;
  for (int j = 0; j < n_; ++j) {
    const double e = x[j] - x_ref[j];
    if (e == 0.0) continue;
    for (int i = 0; i < m_; ++i) {
      const std::size_t at = static_cast<std::size_t>(i) + static_cast<std::size_t>(j) * m_;
      u_cmd[i] -= ((1.0 - w) * K0[at] + w * K1[at]) * e;
    }
  }
}

void Controller::command(double t, const double* x, const double* x_ref, const double* u_ff, double* u_cmd) const {
  std::size_t k = 0;
  double w = 0.0;
  if (!open_loop_) gain_interval(t, nullptr, k, w);
  apply(k, w, x, x_ref, u_ff, u_cmd);
}

void Controller::command(double t, std::size_t& hint, const double* x, const double* x_ref, const double* u_ff,
                         double* u_cmd) const {
  std::size_t k = 0;
  double w = 0.0;
  if (!open_loop_) gain_interval(t, &hint, k, w);
  apply(k, w, x, x_ref, u_ff, u_cmd);
}

namespace {
SourceLocation at_key(const casefile::ControlOptions& options, const std::string& key) {
  SourceLocation where = options.where;
  where.key = key;
  return where;
}
}  // namespace

std::unique_ptr<Controller> make_controller(const casefile::ControlOptions& options, const Model& model,
                                            const Plan& plan, double max_step_in_seconds) {
  const int n = model.state_count(), m = model.input_count();
  switch (options.law) {
    case casefile::ControlLaw::open_loop:
      return std::make_unique<Controller>(n, m);
    case casefile::ControlLaw::gain: {
      if (static_cast<int>(options.gain.size()) != m) {
        std::ostringstream message;
        message << "expected " << m << " rows (one per input of model '" << model.name() << "'), found "
                << options.gain.size();
        throw InputError(at_key(options, "control.gain"), message.str());
      }
      Eigen::MatrixXd K(m, n);
      for (int i = 0; i < m; ++i) {
        if (static_cast<int>(options.gain[static_cast<std::size_t>(i)].size()) != n) {
          std::ostringstream message;
          message << "row " << i + 1 << " has " << options.gain[static_cast<std::size_t>(i)].size()
                  << " entries, expected " << n << " (one per state)";
          throw InputError(at_key(options, "control.gain"), message.str());
        }
        for (int j = 0; j < n; ++j) {
          K(i, j) = options.gain[static_cast<std::size_t>(i)][static_cast<std::size_t>(j)];
          if (!std::isfinite(K(i, j))) throw InputError(at_key(options, "control.gain"), "entries must be finite");
        }
      }
      return std::make_unique<Controller>(K);
    }
    case casefile::ControlLaw::lqr: {
      auto check = [&](const std::vector<double>& w, int count, const char* key, const char* per, bool zero_ok) {
        if (static_cast<int>(w.size()) != count) {
          std::ostringstream message;
          message << "expected " << count << " weights (one per " << per << " of model '" << model.name()
                  << "'), found " << w.size();
          throw InputError(at_key(options, key), message.str());
        }
        for (double v : w)
          if (!std::isfinite(v) || v < 0.0 || (!zero_ok && v == 0.0))
            throw InputError(at_key(options, key), zero_ok ? "weights must be finite and ≥ 0" : "weights must be finite and > 0");
      };
      check(options.q, n, "control.q", "state", true);
      check(options.r, m, "control.r", "input", false);
      const Eigen::MatrixXd Q = Eigen::Map<const Eigen::VectorXd>(options.q.data(), n).asDiagonal();
      const Eigen::MatrixXd R = Eigen::Map<const Eigen::VectorXd>(options.r.data(), m).asDiagonal();
      const Eigen::VectorXd p = model.parameters();
      if (!options.time_varying) {
        Eigen::MatrixXd A, B;
        linearize_plan(model, plan, p, plan.start_time(), A, B);
        try {
          return std::make_unique<Controller>(lqr_gain(A, B, Q, R));
        } catch (const NumericalError& error) {
          throw NumericalError(std::string("LQR at the plan's first point: ") + error.what(), -1, plan.start_time());
        }
      }
      const RiccatiSchedule schedule = solve_riccati_differential_equation(model, plan, p, Q, R, max_step_in_seconds);
      return std::make_unique<Controller>(schedule.times, schedule.gain);
    }
  }
  throw std::logic_error("make_controller: unknown control law");
}

}  // namespace sigmatube::model
