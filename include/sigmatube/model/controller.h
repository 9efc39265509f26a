// SPDX-License-Identifier: MIT
#pragma once
// The tracking law  u_cmd(t) = u_ff(t) − K(t)(x − x_ref(t)),  with K = 0 for
// open loop, a constant K for a fixed gain or time-invariant LQR, and K(t)
// interpolated linearly between the grid of a time-varying LQR schedule.
// Saturation is not part of the law (ClosedLoop applies it to the input).
#include <memory>
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/casefile/case_options.h"
#include "sigmatube/model/model.h"
#include "sigmatube/model/plan.h"

// Layer model/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::model {

class Controller {
 public:
  /// Open loop (K = 0).
  Controller(int state_count, int input_count);
  /// One constant gain, rows = inputs, columns = states.
  explicit Controller(const Eigen::MatrixXd& gain);
  /// A gain schedule K(t_k); times increasing; K held constant outside the grid.
  Controller(std::vector<double> times, const std::vector<Eigen::MatrixXd>& gains);

  bool open_loop() const { return open_loop_; }
  int state_count() const { return n_; }
  int input_count() const { return m_; }
  const std::vector<double>& gain_times() const { return times_; }
  Eigen::MatrixXd gain(double t) const;

  /// u_cmd = u_ff − K(t)(x − x_ref). Does not allocate; thread-safe.
  void command(double t, const double* x, const double* x_ref, const double* u_ff, double* u_cmd) const;
  /// command() with the gain-grid interval searched from `hint` (this caller's
  /// last interval, start with 0; updated; model/grid_walk.h). The same values,
  /// bit for bit.
  void command(double t, std::size_t& hint, const double* x, const double* x_ref, const double* u_ff,
               double* u_cmd) const;

 private:
  // Gain interval k and weight w at t (K = (1 − w) K_k + w K_{k+1}); from hint when given.
  void gain_interval(double t, std::size_t* hint, std::size_t& k, double& w) const;
  // u_cmd = u_ff − K e, K = (1 − w) K_k + w K_{k+1}.
  void apply(std::size_t k, double w, const double* x, const double* x_ref, const double* u_ff, double* u_cmd) const;
  int n_ = 0, m_ = 0;
  bool open_loop_ = true;
  std::vector<double> times_;
  std::vector<double> gains_;  // K_k column-major, m·n values per grid time
};

/// The controller of a case's [control] table for `model` flying `plan`.
/// LQR weights: q one per state (≥ 0), r one per input (> 0), Q = diag(q), R = diag(r).
/// `max_step_in_seconds` bounds the Riccati grid spacing (the simulation step).
/// @throws InputError for wrong weight counts or signs (at control.q / control.r),
///         a gain of the wrong shape (at control.gain).
/// @throws NumericalError if the Riccati solution fails.
std::unique_ptr<Controller> make_controller(const casefile::ControlOptions& options, const Model& model,
                                            const Plan& plan, double max_step_in_seconds);

}  // namespace sigmatube::model
