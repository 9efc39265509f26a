// SPDX-License-Identifier: MIT
#include "sigmatube/model/closed_loop.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>
#include <stdexcept>

#include "sigmatube/casefile/nearest_name.h"
#include "sigmatube/core/error.h"
#include "sigmatube/core/option_values.h"
#include "sigmatube/model/controller.h"
#include "sigmatube/model/grid_walk.h"
#include "sigmatube/model/integrator.h"
#include "sigmatube/model/plan.h"

namespace sigmatube::model {
namespace {

std::string rounded(double value) { return significant_digits(value, 3); }

// Report times and integration steps of one run against [limits], before the
// controller's Riccati sweep or any run (both scale with them).
void check_run_size(const casefile::CaseOptions& options, double plan_length) {
  const auto& sim = options.simulation;
  const auto& limits = options.limits;
  const double steps = plan_length / sim.step_in_seconds;
  if (!(steps <= limits.max_steps))
    throw InputError(sim.key_where.of("step", sim.where),
                     rounded(sim.step_in_seconds) + " s steps over the " + rounded(plan_length) + " s plan make " +
                         rounded(steps) + " steps per run, more than the limit " + rounded(limits.max_steps) +
                         " (limits.max_steps)");
  if (sim.report_every_in_seconds > 0.0) {
    const double times = plan_length / sim.report_every_in_seconds + 1.0;
    if (!(times <= static_cast<double>(limits.max_report_times)))
      throw InputError(sim.key_where.of("report_every", sim.where),
                       "reporting every " + rounded(sim.report_every_in_seconds) + " s over the " + rounded(plan_length) +
                           " s plan makes " + rounded(times) + " report times, more than the limit " +
                           std::to_string(limits.max_report_times) + " (limits.max_report_times)");
  }
}

}  // namespace

ClosedLoop::ClosedLoop(std::shared_ptr<const Model> model, const casefile::CaseOptions& options)
    : model_(std::move(model)), simulation_(options.simulation) {
  if (!model_) throw std::logic_error("ClosedLoop: no model");
  const int n = model_->state_count(), m = model_->input_count();
  // Validates step and tolerances before the (possibly long) Riccati solve.
  OdeIntegrator validate(simulation_, n);
  if (!(simulation_.report_every_in_seconds >= 0.0) || !std::isfinite(simulation_.report_every_in_seconds)) {
    SourceLocation where = simulation_.where;
    where.key = "simulation.report_every";
    throw InputError(where, "must be ≥ 0 seconds (0 = report at the plan's times)");
  }

  plan_ = std::make_unique<Plan>(options.plan, *model_);
  check_run_size(options, plan_->end_time() - plan_->start_time());

  input_low_ = Eigen::VectorXd::Constant(m, -std::numeric_limits<double>::infinity());
  input_high_ = Eigen::VectorXd::Constant(m, std::numeric_limits<double>::infinity());
  const auto& inputs = model_->input_names();
  for (const auto& limit : options.control.limits) {
    SourceLocation where = limit.where;
    if (where.key.empty()) where.key = "control.limits." + limit.input;
    const auto it = std::find(inputs.begin(), inputs.end(), limit.input);
    if (it == inputs.end())
      throw InputError(where, "limit for unknown input '" + limit.input + "' of model '" + model_->name() + "'" +
                                  casefile::suggestion_or_list(limit.input, inputs));
    if (!(limit.low <= limit.high) || std::isnan(limit.low) || std::isnan(limit.high))
      throw InputError(where, "limits must be [low, high] with low ≤ high");
    const auto i = static_cast<Eigen::Index>(it - inputs.begin());
    input_low_(i) = limit.low;
    input_high_(i) = limit.high;
  }

  controller_ = make_controller(options.control, *model_, *plan_, simulation_.step_in_seconds);

  const double t0 = plan_->start_time(), tf = plan_->end_time();
  if (simulation_.report_every_in_seconds == 0.0) {
    report_times_ = plan_->times();
  } else {
    const double every = simulation_.report_every_in_seconds;
    // Grid points closer than this to tf are merged with tf rather than reported twice.
    const double merge = 1e-9 * (tf - t0);
    for (long long k = 0;; ++k) {
      const double t = t0 + static_cast<double>(k) * every;
      if (t >= tf - merge) break;
      report_times_.push_back(t);
    }
    report_times_.push_back(tf);
  }

  output_names_ = model_->state_names();
  const auto& derived = model_->derived_output_names();
  output_names_.insert(output_names_.end(), derived.begin(), derived.end());
  for (const auto& input : inputs) output_names_.push_back("cmd." + input);

  // Units: the case file's [model] units, else the model's own; cmd.<input> has its input's.
  std::vector<std::string> named = model_->state_names();
  named.insert(named.end(), derived.begin(), derived.end());
  named.insert(named.end(), inputs.begin(), inputs.end());
  for (const auto& entry : options.model.units)
    if (std::find(named.begin(), named.end(), entry.name) == named.end())
      throw InputError(entry.where, "'" + entry.name + "' is not a state, input or output of model '" +
                                        model_->name() + "'" + casefile::suggestion_or_list(entry.name, named));
  const auto unit_of = [&](const std::string& name) {
    for (const auto& entry : options.model.units)
      if (entry.name == name) return entry.text;
    return model_->unit(name);
  };
  for (const auto& name : output_names_)
    output_units_.push_back(name.rfind("cmd.", 0) == 0 ? unit_of(name.substr(4)) : unit_of(name));
}

ClosedLoop::~ClosedLoop() = default;

Perturbation ClosedLoop::nominal() const {
  const int n = model_->state_count(), m = model_->input_count();
  Perturbation p;
  p.initial_offset = Eigen::VectorXd::Zero(n);
  p.parameters = model_->parameters();
  p.input_scale = Eigen::VectorXd::Ones(m);
  p.input_bias = Eigen::VectorXd::Zero(m);
  p.disturbance = Eigen::MatrixXd::Zero(0, n);
  return p;
}

void ClosedLoop::run(const Perturbation& perturbation, Eigen::Ref<Eigen::MatrixXd> outputs, long long sample) const {
  const int n = model_->state_count(), m = model_->input_count(), n_derived = model_->derived_output_count();
  const auto T = static_cast<Eigen::Index>(report_times_.size());
  if (perturbation.initial_offset.size() != n || perturbation.parameters.size() != model_->parameter_count() ||
      perturbation.input_scale.size() != m || perturbation.input_bias.size() != m)
    throw std::logic_error("ClosedLoop::run: perturbation sizes do not match the model");
  const bool disturbed = perturbation.disturbance.rows() > 0;
  if (disturbed && (perturbation.disturbance.rows() != T || perturbation.disturbance.cols() != n))
    throw std::logic_error("ClosedLoop::run: disturbance must be [report times, states]");
  if (outputs.rows() != T || outputs.cols() != output_count())
    throw std::logic_error("ClosedLoop::run: outputs must be [report times, output_count()]");

  // Work arrays of this run; the right-hand side below allocates nothing.
  Eigen::VectorXd x_ref(n), u_ff(m), u_cmd(m), u_app(m), x(n), derived(n_derived);
  const double* p = perturbation.parameters.data();

  // Evaluates u_cmd and u_app at (t, state). The plan, gain and disturbance
  // intervals are walked from the previous call's (model/grid_walk.h): same values.
  std::size_t plan_hint = 0, gain_hint = 0, grid_hint = 0;
  auto inputs_at = [&](double t, const double* state) {
    plan_->evaluate(t, plan_hint, x_ref.data(), u_ff.data());
    controller_->command(t, gain_hint, state, x_ref.data(), u_ff.data(), u_cmd.data());
    for (int i = 0; i < m; ++i)
      u_app(i) = std::clamp(perturbation.input_scale(i) * u_cmd(i) + perturbation.input_bias(i), input_low_(i),
                            input_high_(i));
  };

  const OdeIntegrator::Rhs rhs = [&](double t, const double* state, double* dxdt) {
    inputs_at(t, state);
    model_->rhs(t, state, u_app.data(), p, dxdt);
    if (disturbed) {
      // Piecewise linear between report times, held constant outside.
      const GridSegment g = grid_segment(report_times_, t, grid_hint);
      for (int i = 0; i < n; ++i)
        dxdt[i] += (1.0 - g.w) * perturbation.disturbance(g.k, i) + g.w * perturbation.disturbance(g.k1, i);
    }
  };

  const OdeIntegrator::Observer observe = [&](std::size_t k, double t, const double* state) {
    const auto row = static_cast<Eigen::Index>(k);
    inputs_at(t, state);
    for (int i = 0; i < n; ++i) outputs(row, i) = state[i];
    if (n_derived > 0) {
      // Derived outputs see the applied (saturated) input, like the dynamics do.
      model_->derived_outputs(t, state, u_app.data(), p, derived.data());
      for (int j = 0; j < n_derived; ++j) outputs(row, n + j) = derived(j);
    }
    // The demand on the actuator, before saturation: what an input limit judges and
    // what tells a saturated run from a smooth one.
    for (int i = 0; i < m; ++i)
      outputs(row, n + n_derived + i) = perturbation.input_scale(i) * u_cmd(i) + perturbation.input_bias(i);
  };

  x = plan_->reference_state(report_times_.front()) + perturbation.initial_offset;
  OdeIntegrator integrator(simulation_, n);
  integrator.integrate(rhs, report_times_, x.data(), observe, sample, &model_->state_names());
}

namespace {
GridSegment segment_of(const std::vector<double>& times, double t, std::size_t* hint) {
  const auto T = static_cast<Eigen::Index>(times.size());
  GridSegment g;
  if (t >= times.back()) {
    g.k = T - 1;
  } else if (t > times.front()) {
    const std::size_t k = hint ? walk_to_interval(times, t, times.size() - 2, *hint)
                               : static_cast<std::size_t>(std::upper_bound(times.begin(), times.end(), t) - times.begin()) - 1;
    if (hint) *hint = k;
    g.k = static_cast<Eigen::Index>(k);
    g.w = (t - times[k]) / (times[k + 1] - times[k]);
  }
  g.k1 = std::min<Eigen::Index>(g.k + 1, T - 1);
  return g;
}
}  // namespace

GridSegment grid_segment(const std::vector<double>& times, double t) { return segment_of(times, t, nullptr); }

GridSegment grid_segment(const std::vector<double>& times, double t, std::size_t& hint) {
  return segment_of(times, t, &hint);
}

}  // namespace sigmatube::model
