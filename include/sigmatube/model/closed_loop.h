// SPDX-License-Identifier: MIT
#pragma once
// The plan flown by its tracking controller: one call propagates one closed-loop
// run for one set of perturbations and reports outputs on the report grid. This
// is the "model run" every later stage counts.
//
//   u_cmd(t) = u_ff(t) - K(t) (x - x_ref(t))            (open-loop: K = 0)
//   u_app    = sat( input_scale ∘ u_cmd + input_bias )  (saturation from [control].limits)
//   dx/dt    = f(t, x, u_app, p) + w(t)                  (w: disturbance, piecewise linear)
//   x(t0)    = x_ref(t0) + initial_offset
#include <memory>
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/casefile/case_options.h"
#include "sigmatube/model/model.h"

// Layer model/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::model {

/// Everything uncertain about one run. nominal() of a ClosedLoop gives the
/// unperturbed values; the germ writes into a copy.
struct Perturbation {
  Eigen::VectorXd initial_offset;  // [n_states], added to the plan's initial state
  Eigen::VectorXd parameters;      // [n_params], replaces the model's parameters
  Eigen::VectorXd input_scale;     // [n_inputs], multiplies the commanded input (1 = none)
  Eigen::VectorXd input_bias;      // [n_inputs], added to it (0 = none)
  // Additive disturbance on d(state)/dt at the disturbance grid times
  // (ClosedLoop::disturbance_times()), linear between them, row = time, col = state.
  // Empty (0 rows) = no disturbance.
  Eigen::MatrixXd disturbance;
};

/// Where t falls on a grid for piecewise-linear interpolation, values held
/// constant outside it: v(t) = (1 − w)·v[k] + w·v[k1].
struct GridSegment {
  Eigen::Index k = 0;
  Eigen::Index k1 = 0;
  double w = 0.0;
};
GridSegment grid_segment(const std::vector<double>& times, double t);
/// The same, walking from hint (the previous interval of this caller; model/grid_walk.h).
GridSegment grid_segment(const std::vector<double>& times, double t, std::size_t& hint);

class Plan;        // model/plan.h
class Controller;  // model/controller.h

class ClosedLoop {
 public:
  /// Builds the plan interpolant, the controller (LQR gains solved here) and the
  /// report grid. Throws InputError for a case the model cannot fly (unknown
  /// input in limits, wrong weight count, ...), NumericalError if the Riccati
  /// solution fails.
  ClosedLoop(std::shared_ptr<const Model> model, const casefile::CaseOptions& options);
  ~ClosedLoop();
  ClosedLoop(const ClosedLoop&) = delete;
  ClosedLoop& operator=(const ClosedLoop&) = delete;

  const Model& model() const { return *model_; }
  const std::vector<double>& report_times() const { return report_times_; }
  /// Times at which a Perturbation's disturbance values sit (= report_times()).
  const std::vector<double>& disturbance_times() const { return report_times_; }

  /// States, then derived outputs, then the demanded actuator inputs
  /// input_scale ∘ u_cmd + input_bias, before saturation, named "cmd.<input>",
  /// so input limits and saturation can be checked.
  const std::vector<std::string>& output_names() const { return output_names_; }
  int output_count() const { return static_cast<int>(output_names_.size()); }
  /// The unit of each output ("" when neither the case file nor the model gives one).
  const std::vector<std::string>& output_units() const { return output_units_; }

  Perturbation nominal() const;

  /// Propagates one run and writes outputs[k, j] = output j at report time k
  /// (out must be [report_times().size(), output_count()]). Thread-safe.
  /// Throws NumericalError naming `sample`, the time and the state when the
  /// state stops being finite or grows beyond 1e12 in magnitude, or when the
  /// adaptive step falls below 1e-12·(time span).
  void run(const Perturbation& perturbation, Eigen::Ref<Eigen::MatrixXd> outputs, long long sample = -1) const;

  const Plan& plan() const { return *plan_; }
  const Controller& controller() const { return *controller_; }

 private:
  std::shared_ptr<const Model> model_;
  std::unique_ptr<Plan> plan_;
  std::unique_ptr<Controller> controller_;
  casefile::SimulationOptions simulation_;
  std::vector<double> report_times_;
  std::vector<std::string> output_names_;
  std::vector<std::string> output_units_;
  // saturation bounds per input (±inf where unlimited)
  Eigen::VectorXd input_low_, input_high_;
};

}  // namespace sigmatube::model
