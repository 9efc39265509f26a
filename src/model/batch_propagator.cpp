// SPDX-License-Identifier: MIT
#include "sigmatube/model/batch_propagator.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <optional>
#include <string>
#include <stdexcept>
#include <vector>

#include "sigmatube/model/builtin_models.h"
#include "sigmatube/model/controller.h"
#include "sigmatube/model/expression_model.h"
#include "sigmatube/model/integrator.h"
#include "sigmatube/model/plan.h"
#include "sigmatube/model/plugin_model.h"

namespace sigmatube::model {

namespace {

// One RK stage of the HCW closed loop for all lanes (6 states, 3 inputs):
//   u = u_ff − K (x − x_ref)  (Controller::command: j outer, i inner, e = 0 skipped),
//   a = clamp(scale·u + bias, low, high),  dx = HillClohessyWiltshire::rhs(x, a, n).
// Operation for operation the one-run path, so the results are bit-identical.
void hcw_closed_loop_stage(std::size_t L, const double* __restrict x, const double* __restrict x_ref,
                           const double* __restrict u_ff, const double* __restrict K, const double* __restrict scale,
                           const double* __restrict bias, const double* __restrict low, const double* __restrict high,
                           const double* __restrict mean_motion, double* __restrict u_cmd, double* __restrict u_app,
                           double* __restrict dx) {
  constexpr int n = 6, m = 3;
  for (std::size_t l = 0; l < L; ++l) {
    double xs[n], u[m];
    for (int j = 0; j < n; ++j) xs[j] = x[j * L + l];
    for (int i = 0; i < m; ++i) u[i] = u_ff[i];
    // Selects of values computed unconditionally; the results are those of the
    // branches of the one-run path.
    for (int j = 0; j < n; ++j) {
      const double e = xs[j] - x_ref[j];
      for (int i = 0; i < m; ++i) {
        const double term = K[i * n + j] * e;
        u[i] -= e != 0.0 ? term : 0.0;
      }
    }
    double a[m];
    for (int i = 0; i < m; ++i) {
      double v = scale[i * L + l] * u[i] + bias[i * L + l];
      v = v < low[i] ? low[i] : v;  // std::clamp(v, low, high), NaN passed through alike
      v = high[i] < v ? high[i] : v;
      a[i] = v;
      u_cmd[i * L + l] = u[i];
      u_app[i * L + l] = a[i];
    }
    const double nl = mean_motion[l];
    dx[l] = xs[3];
    dx[L + l] = xs[4];
    dx[2 * L + l] = xs[5];
    dx[3 * L + l] = 3.0 * nl * nl * xs[0] + 2.0 * nl * xs[4] + a[0];
    dx[4 * L + l] = -2.0 * nl * xs[3] + a[1];
    dx[5 * L + l] = -nl * nl * xs[2] + a[2];
  }
}

}  // namespace

BatchPropagator::BatchPropagator(const ClosedLoop& closed_loop, const casefile::CaseOptions& options)
    : closed_loop_(closed_loop), simulation_(options.simulation) {
  const Model& model = closed_loop.model();
  supported_ = simulation_.integrator == casefile::IntegratorKind::rk4;
  hcw_ = dynamic_cast<const HillClohessyWiltshire*>(&model) != nullptr;
  plugin_ = dynamic_cast<const PluginModel*>(&model);
  if (!hcw_ && options.model.builtin.empty() && dynamic_cast<const ExpressionModel*>(&model) != nullptr) {
    std::vector<std::string> names{"t"};
    for (const auto& v : {&model.state_names(), &model.input_names(), &model.parameter_names()})
      names.insert(names.end(), v->begin(), v->end());
    const auto& states = model.state_names();
    std::vector<std::optional<LaneExpression>> compiled(states.size());
    for (const auto& e : options.model.rhs) {
      const auto it = std::find(states.begin(), states.end(), e.name);
      if (it != states.end()) compiled[static_cast<std::size_t>(it - states.begin())] = LaneExpression::compile(e.text, names);
    }
    if (std::all_of(compiled.begin(), compiled.end(), [](const auto& c) { return c.has_value(); }))
      for (auto& c : compiled) programs_.push_back(std::move(*c));
  }
  const int m = model.input_count();
  // The same saturation bounds ClosedLoop derived (and validated) from the case.
  input_low_ = Eigen::VectorXd::Constant(m, -std::numeric_limits<double>::infinity());
  input_high_ = Eigen::VectorXd::Constant(m, std::numeric_limits<double>::infinity());
  const auto& inputs = model.input_names();
  for (const auto& limit : options.control.limits) {
    const auto it = std::find(inputs.begin(), inputs.end(), limit.input);
    if (it == inputs.end()) throw std::logic_error("BatchPropagator: limit for an unknown input");
    input_low_(it - inputs.begin()) = limit.low;
    input_high_(it - inputs.begin()) = limit.high;
  }
}

void BatchPropagator::run(const Perturbation* perturbations, int lanes, double* rows, std::size_t row_stride,
                          std::uint8_t* ok) const {
  if (!supported_) throw std::logic_error("BatchPropagator::run: only the rk4 integrator is batched");
  if (lanes <= 0) return;
  const Model& model = closed_loop_.model();
  const Plan& plan = closed_loop_.plan();
  const Controller& controller = closed_loop_.controller();
  const int n = model.state_count(), m = model.input_count(), n_derived = model.derived_output_count();
  const int n_params = model.parameter_count();
  const int n_out = closed_loop_.output_count();
  const std::vector<double>& times = closed_loop_.report_times();
  const auto T = static_cast<Eigen::Index>(times.size());
  if (row_stride < static_cast<std::size_t>(T) * static_cast<std::size_t>(n_out))
    throw std::logic_error("BatchPropagator::run: row stride below T·n_out");
  const std::size_t L = static_cast<std::size_t>(lanes);

  // Per-lane perturbations, structure of arrays.
  std::vector<double> scale(static_cast<std::size_t>(m) * L), bias(static_cast<std::size_t>(m) * L);
  std::vector<double> params(static_cast<std::size_t>(n_params) * L);
  bool disturbed = false;
  for (std::size_t l = 0; l < L; ++l) {
    const Perturbation& p = perturbations[l];
    if (p.initial_offset.size() != n || p.parameters.size() != n_params || p.input_scale.size() != m ||
        p.input_bias.size() != m)
      throw std::logic_error("BatchPropagator::run: perturbation sizes do not match the model");
    if (p.disturbance.rows() > 0) {
      if (p.disturbance.rows() != T || p.disturbance.cols() != n)
        throw std::logic_error("BatchPropagator::run: disturbance must be [report times, states]");
      disturbed = true;
    }
    for (int i = 0; i < m; ++i) {
      scale[i * L + l] = p.input_scale(i);
      bias[i * L + l] = p.input_bias(i);
    }
    for (int i = 0; i < n_params; ++i) params[i * L + l] = p.parameters(i);
  }
  // Disturbance values [T][n][L]; lanes without one hold zeros, which add exactly 0
  // only where ClosedLoop would add nothing, so keep a per-lane flag.
  std::vector<double> dist;
  std::vector<std::uint8_t> lane_disturbed(L, 0);
  if (disturbed) {
    dist.assign(static_cast<std::size_t>(T) * n * L, 0.0);
    for (std::size_t l = 0; l < L; ++l) {
      const Perturbation& p = perturbations[l];
      if (p.disturbance.rows() == 0) continue;
      lane_disturbed[l] = 1;
      for (Eigen::Index k = 0; k < T; ++k)
        for (int i = 0; i < n; ++i) dist[(static_cast<std::size_t>(k) * n + i) * L + l] = p.disturbance(k, i);
    }
  }

  // Work arrays of the whole call: nothing below allocates per step.
  const std::size_t nL = static_cast<std::size_t>(n) * L, mL = static_cast<std::size_t>(m) * L;
  std::vector<double> x(nL), y(nL), k1(nL), k2(nL), k3(nL), k4(nL);
  std::vector<double> u_cmd(mL), u_app(mL);
  std::vector<double> x_ref(static_cast<std::size_t>(n)), u_ff(static_cast<std::size_t>(m));
  std::vector<double> gain(static_cast<std::size_t>(m) * n);  // Kt(i, j) at [i·n + j]
  std::vector<double> unit(static_cast<std::size_t>(n), 0.0), zero_n(static_cast<std::size_t>(n), 0.0),
      zero_m(static_cast<std::size_t>(m), 0.0), column(static_cast<std::size_t>(m));
  std::vector<double> lane_x(static_cast<std::size_t>(n)), lane_u(static_cast<std::size_t>(m)),
      lane_p(static_cast<std::size_t>(n_params)), lane_dx(static_cast<std::size_t>(n)),
      lane_y(static_cast<std::size_t>(n_derived));
  std::fill(ok, ok + L, std::uint8_t{1});
  // Lane programs: variable pointers (t, states, inputs, parameters) and their stack.
  std::vector<double> t_lanes(programs_.empty() ? 0 : L);
  std::vector<const double*> variables(1 + static_cast<std::size_t>(n + m + n_params));
  std::size_t scratch_size = 0;
  for (const auto& program : programs_) scratch_size = std::max(scratch_size, program.scratch_size(L));
  std::vector<double> scratch(scratch_size);

  // u_cmd = u_ff − Kt (x − x_ref) and u_app = clamp(scale·u_cmd + bias), for
  // every lane, in Controller::command's order: Kt(i, j) is read back from the
  // controller exactly (command at a unit error gives −Kt(i, j), negated back).
  // Plan and gain depend on t only: RK4 asks twice at t + h/2, so keep the last.
  double cached_t = std::numeric_limits<double>::quiet_NaN();
  const bool open_loop = controller.open_loop();  // Controller::command adds no feedback at all
  const bool constant_gain = controller.gain_times().size() <= 1;
  bool gain_ready = false;
  std::vector<double> error(L);
  auto prepare = [&](double t) {
    if (!(t == cached_t)) {
      plan.evaluate(t, x_ref.data(), u_ff.data());
      for (int j = 0; j < n && !(constant_gain && gain_ready); ++j) {
        unit[static_cast<std::size_t>(j)] = 1.0;
        controller.command(t, unit.data(), zero_n.data(), zero_m.data(), column.data());
        unit[static_cast<std::size_t>(j)] = 0.0;
        for (int i = 0; i < m; ++i) gain[static_cast<std::size_t>(i) * n + j] = -column[static_cast<std::size_t>(i)];
      }
      cached_t = t;
      gain_ready = true;
    }
  };
  auto inputs_at = [&](double t, const double* state) {
    prepare(t);
    for (int i = 0; i < m; ++i) {
      double* u = u_cmd.data() + i * L;
      std::fill(u, u + L, u_ff[static_cast<std::size_t>(i)]);
    }
    for (int j = 0; j < n && !open_loop; ++j) {
      const double* xj = state + j * L;
      const double rj = x_ref[static_cast<std::size_t>(j)];
      double* e = error.data();
      for (std::size_t l = 0; l < L; ++l) e[l] = xj[l] - rj;
      for (int i = 0; i < m; ++i) {
        const double K = gain[static_cast<std::size_t>(i) * n + j];
        double* u = u_cmd.data() + i * L;
        // Controller::command skips e == 0; subtracting +0.0 is the same for every u (also −0).
        for (std::size_t l = 0; l < L; ++l) u[l] -= e[l] != 0.0 ? K * e[l] : 0.0;
      }
    }
    for (int i = 0; i < m; ++i) {
      const double lo = input_low_(i), hi = input_high_(i);
      const double *u = u_cmd.data() + i * L, *s = scale.data() + i * L, *b = bias.data() + i * L;
      double* a = u_app.data() + i * L;
      for (std::size_t l = 0; l < L; ++l) a[l] = std::clamp(s[l] * u[l] + b[l], lo, hi);
    }
  };

  auto rhs = [&](double t, const double* state, double* dxdt) {
    if (hcw_ && !open_loop) {
      // Fused: feedback, saturation and HillClohessyWiltshire::rhs per lane with
      // the lane's values in registers, in exactly the order of the one-run path.
      prepare(t);
      hcw_closed_loop_stage(L, state, x_ref.data(), u_ff.data(), gain.data(), scale.data(), bias.data(),
                            input_low_.data(), input_high_.data(), params.data(), u_cmd.data(), u_app.data(), dxdt);
    } else if (hcw_) {
      inputs_at(t, state);
      // HillClohessyWiltshire::rhs, lane by lane in one loop.
      const double* nn = params.data();
      const double *x0 = state, *x2 = state + 2 * L, *x3 = state + 3 * L, *x4 = state + 4 * L,
                   *x5 = state + 5 * L;
      const double *a0 = u_app.data(), *a1 = u_app.data() + L, *a2 = u_app.data() + 2 * L;
      for (std::size_t l = 0; l < L; ++l) {
        const double nl = nn[l];
        dxdt[l] = x3[l];
        dxdt[L + l] = x4[l];
        dxdt[2 * L + l] = x5[l];
        dxdt[3 * L + l] = 3.0 * nl * nl * x0[l] + 2.0 * nl * x4[l] + a0[l];
        dxdt[4 * L + l] = -2.0 * nl * x3[l] + a1[l];
        dxdt[5 * L + l] = -nl * nl * x2[l] + a2[l];
      }
    } else if (plugin_ != nullptr) {
      // The plugin's own lane loop over the same structure-of-arrays layout.
      inputs_at(t, state);
      plugin_->rhs_lanes(t, lanes, state, u_app.data(), params.data(), dxdt);
    } else if (!programs_.empty()) {
      inputs_at(t, state);
      std::fill(t_lanes.begin(), t_lanes.end(), t);
      variables[0] = t_lanes.data();
      for (int i = 0; i < n; ++i) variables[1 + static_cast<std::size_t>(i)] = state + i * L;
      for (int i = 0; i < m; ++i) variables[1 + static_cast<std::size_t>(n + i)] = u_app.data() + i * L;
      for (int i = 0; i < n_params; ++i) variables[1 + static_cast<std::size_t>(n + m + i)] = params.data() + i * L;
      for (int i = 0; i < n; ++i) programs_[static_cast<std::size_t>(i)].evaluate(variables.data(), L, dxdt + i * L, scratch.data());
    } else {
      inputs_at(t, state);
      for (std::size_t l = 0; l < L; ++l) {
        for (int i = 0; i < n; ++i) lane_x[static_cast<std::size_t>(i)] = state[i * L + l];
        for (int i = 0; i < m; ++i) lane_u[static_cast<std::size_t>(i)] = u_app[i * L + l];
        for (int i = 0; i < n_params; ++i) lane_p[static_cast<std::size_t>(i)] = params[i * L + l];
        model.rhs(t, lane_x.data(), lane_u.data(), lane_p.data(), lane_dx.data());
        for (int i = 0; i < n; ++i) dxdt[i * L + l] = lane_dx[static_cast<std::size_t>(i)];
      }
    }
    if (disturbed) {
      // Piecewise linear between report times, held outside (as ClosedLoop::run).
      const GridSegment g = grid_segment(times, t);
      const Eigen::Index k = g.k, k1i = g.k1;
      const double w = g.w;
      for (int i = 0; i < n; ++i) {
        const double* d0 = dist.data() + (static_cast<std::size_t>(k) * n + i) * L;
        const double* d1 = dist.data() + (static_cast<std::size_t>(k1i) * n + i) * L;
        double* dx = dxdt + i * L;
        for (std::size_t l = 0; l < L; ++l)
          if (lane_disturbed[l]) dx[l] += (1.0 - w) * d0[l] + w * d1[l];
      }
    }
  };

  auto check = [&](const double* state) {
    for (int i = 0; i < n; ++i)
      for (std::size_t l = 0; l < L; ++l) {
        const double v = state[i * L + l];
        if (!std::isfinite(v) || std::abs(v) > OdeIntegrator::kDivergenceBound) ok[l] = 0;
      }
  };

  auto observe = [&](Eigen::Index k, double t, const double* state) {
    inputs_at(t, state);
    for (std::size_t l = 0; l < L; ++l) {
      double* row = rows + l * row_stride + static_cast<std::size_t>(k) * n_out;
      for (int i = 0; i < n; ++i) row[i] = state[i * L + l];
      if (n_derived > 0) {
        for (int i = 0; i < n; ++i) lane_x[static_cast<std::size_t>(i)] = state[i * L + l];
        for (int i = 0; i < m; ++i) lane_u[static_cast<std::size_t>(i)] = u_app[i * L + l];
        for (int i = 0; i < n_params; ++i) lane_p[static_cast<std::size_t>(i)] = params[i * L + l];
        model.derived_outputs(t, lane_x.data(), lane_u.data(), lane_p.data(), lane_y.data());
        for (int j = 0; j < n_derived; ++j) row[n + j] = lane_y[static_cast<std::size_t>(j)];
      }
      // "cmd.<input>": the demand on the actuator before saturation, as ClosedLoop::run.
      for (int i = 0; i < m; ++i) row[n + n_derived + i] = scale[i * L + l] * u_cmd[i * L + l] + bias[i * L + l];
    }
  };

  // x(t0) = x_ref(t0) + initial offset.
  {
    const Eigen::VectorXd x0 = plan.reference_state(times.front());
    for (std::size_t l = 0; l < L; ++l)
      for (int i = 0; i < n; ++i) x[i * L + l] = x0(i) + perturbations[l].initial_offset(i);
  }
  check(x.data());
  observe(0, times.front(), x.data());

  // Classical RK4 with OdeIntegrator::integrate_rk4's step rule and expression order.
  for (std::size_t k = 1; k < times.size(); ++k) {
    const double span = times[k] - times[k - 1];
    const long long pieces =
        std::max(1LL, static_cast<long long>(std::ceil(span / simulation_.step_in_seconds - 1e-9)));
    const double h = span / static_cast<double>(pieces);
    const double half = 0.5 * h, sixth = h / 6.0;
    for (long long s = 0; s < pieces; ++s) {
      const double t = times[k - 1] + static_cast<double>(s) * h;
      rhs(t, x.data(), k1.data());
      for (std::size_t q = 0; q < nL; ++q) y[q] = x[q] + half * k1[q];
      rhs(t + 0.5 * h, y.data(), k2.data());
      for (std::size_t q = 0; q < nL; ++q) y[q] = x[q] + half * k2[q];
      rhs(t + 0.5 * h, y.data(), k3.data());
      for (std::size_t q = 0; q < nL; ++q) y[q] = x[q] + h * k3[q];
      rhs(t + h, y.data(), k4.data());
      for (std::size_t q = 0; q < nL; ++q) x[q] += sixth * (k1[q] + 2.0 * k2[q] + 2.0 * k3[q] + k4[q]);
      check(x.data());
    }
    observe(static_cast<Eigen::Index>(k), times[k], x.data());
  }
}

}  // namespace sigmatube::model
