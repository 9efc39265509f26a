// SPDX-License-Identifier: MIT
#include "sigmatube/model/batch_propagator.h"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstring>
#include <limits>
#include <optional>
#include <string>
#include <stdexcept>
#include <vector>

#include "sigmatube/model/builtin_models.h"
#include "sigmatube/model/controller.h"
#include "sigmatube/model/expression_model.h"
#include "sigmatube/model/integrator.h"
#include "sigmatube/model/lane_dopri5.h"
#include "sigmatube/model/plan.h"
#include "sigmatube/model/plugin_model.h"
#include "lane_kernels.h"

namespace sigmatube::model {
namespace {

// The lane programs of all states as one accumulator-form block program
// (lanes::BlockOp): variable v at row v, state i's result at row `variables` + i,
// slot s ≥ 1 at row variables + n + s − 1, then the constant rows. Operations
// whose operands are all constants are folded here with the arithmetic
// LaneExpression::evaluate applies to them, so the values do not change.
struct BlockProgram {
  std::vector<lanes::BlockOp> ops;
  std::vector<double> constants;
  std::vector<int> result_rows;  // per state
  int rows = 0;
};

// BlockOp's kinds are LaneExpression's instruction kinds, in the same order.
constexpr bool same_kind(LaneExpression::Instruction::Kind a, lanes::BlockOp::Kind b) {
  return static_cast<int>(a) == static_cast<int>(b);
}
static_assert(same_kind(LaneExpression::Instruction::Kind::copy, lanes::BlockOp::Kind::copy) &&
              same_kind(LaneExpression::Instruction::Kind::pow, lanes::BlockOp::Kind::pow) &&
              same_kind(LaneExpression::Instruction::Kind::square, lanes::BlockOp::Kind::square) &&
              same_kind(LaneExpression::Instruction::Kind::function, lanes::BlockOp::Kind::function) &&
              same_kind(LaneExpression::Instruction::Kind::max, lanes::BlockOp::Kind::max));

double fold(const LaneExpression::Instruction& in, double a, double b) {
  using IK = LaneExpression::Instruction::Kind;
  switch (in.kind) {
    case IK::copy: return a;
    case IK::neg: return -a;
    case IK::square: return a * a;
    case IK::function: return in.function(a);
    case IK::add: return a + b;
    case IK::sub: return a - b;
    case IK::mul: return a * b;
    case IK::div: return a / b;
    case IK::min: return b < a ? b : a;
    case IK::max: return a < b ? b : a;
    case IK::pow: return std::pow(a, b);
  }
  return a;
}

BlockProgram block_program(const std::vector<LaneExpression>& programs, int variables) {
  using IK = LaneExpression::Instruction::Kind;
  using OK = LaneExpression::Operand::Kind;
  using BK = lanes::BlockOp::Kind;
  const int n = static_cast<int>(programs.size());
  int slots = 1;
  for (const auto& p : programs) slots = std::max(slots, p.slot_count());
  const int slot_row = variables + n - 1;  // + s for slot s ≥ 1
  const int first_constant = variables + n + slots - 1;
  BlockProgram out;
  auto constant_row = [&](double v) {
    for (std::size_t c = 0; c < out.constants.size(); ++c)
      if (std::memcmp(&out.constants[c], &v, sizeof v) == 0) return first_constant + static_cast<int>(c);
    out.constants.push_back(v);
    return first_constant + static_cast<int>(out.constants.size()) - 1;
  };
  for (int i = 0; i < n; ++i) {
    std::vector<std::optional<double>> known(static_cast<std::size_t>(slots));
    std::vector<lanes::BlockOp> ops;
    auto row_of_slot = [&](int s) { return s == 0 ? variables + i : slot_row + s; };
    struct Resolved {
      bool constant;
      double value;
      int row;
    };
    auto resolve = [&](const LaneExpression::Operand& o) -> Resolved {
      if (o.kind == OK::constant) return {true, o.value, 0};
      if (o.kind == OK::variable) return {false, 0.0, o.index};
      if (const auto& k = known[static_cast<std::size_t>(o.index)]) return {true, *k, 0};
      return {false, 0.0, row_of_slot(o.index)};
    };
    for (const auto& in : programs[static_cast<std::size_t>(i)].instructions()) {
      const bool unary = in.kind == IK::copy || in.kind == IK::neg || in.kind == IK::square || in.kind == IK::function;
      const Resolved a = resolve(in.a), b = unary ? Resolved{true, 0.0, 0} : resolve(in.b);
      auto& k = known[static_cast<std::size_t>(in.out)];
      if (a.constant && b.constant) {
        k = fold(in, a.value, b.value);
        continue;
      }
      k.reset();
      lanes::BlockOp op;
      op.kind = static_cast<BK>(static_cast<int>(in.kind));
      op.a = a.constant ? constant_row(a.value) : a.row;
      op.b = unary ? op.a : b.constant ? constant_row(b.value) : b.row;
      op.out = row_of_slot(in.out);
      op.function = in.function;
      ops.push_back(op);
    }
    if (const auto& k = known[0]) {
      lanes::BlockOp op;
      op.a = op.b = constant_row(*k);
      op.out = variables + i;
      ops.push_back(op);
    }
    // A right-hand side that only copies a variable (x' = vx) is read from that
    // row, unless it is the stage state of a state j < i, which the stage
    // combination (state by state) overwrites before it reads state i's derivative.
    out.result_rows.push_back(variables + i);
    if (ops.size() == 1 && ops[0].kind == BK::copy && ops[0].a < variables && !(ops[0].a >= 1 && ops[0].a - 1 < i)) {
      out.result_rows.back() = ops[0].a;
      ops.clear();
    }
    // Chains on one row stay in the accumulator; a value is stored unless the
    // next op overwrites its row from the accumulator without reading the row.
    for (std::size_t q = 1; q < ops.size(); ++q) ops[q].load_a = ops[q].a != ops[q - 1].out;
    for (std::size_t q = 0; q + 1 < ops.size(); ++q) {
      const auto& next = ops[q + 1];
      const bool next_unary = next.kind == BK::copy || next.kind == BK::neg || next.kind == BK::square || next.kind == BK::function;
      ops[q].store = !(!next.load_a && next.out == ops[q].out && (next_unary || next.b != ops[q].out));
    }
    out.ops.insert(out.ops.end(), ops.begin(), ops.end());
  }
  out.rows = first_constant + static_cast<int>(out.constants.size());
  return out;
}

}  // namespace

BatchPropagator::BatchPropagator(const ClosedLoop& closed_loop, const casefile::CaseOptions& options)
    : closed_loop_(closed_loop), simulation_(options.simulation) {
  const Model& model = closed_loop.model();
  supported_ = simulation_.integrator == casefile::IntegratorKind::rk4 ||
               simulation_.integrator == casefile::IntegratorKind::dopri5;
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

const char* BatchPropagator::instruction_set() { return lanes::active_target(); }
void BatchPropagator::allow_avx512(bool on) { lanes::allow_avx512(on); }

void BatchPropagator::run(const Perturbation* perturbations, int lanes, double* rows, std::size_t row_stride,
                          std::uint8_t* ok) const {
  if (!supported_) throw std::logic_error("BatchPropagator::run: integrator not batched");
  if (lanes <= 0) return;
  if (simulation_.integrator == casefile::IntegratorKind::dopri5)  // per-lane step control: model/lane_dopri5.h
    return dopri5_lanes(closed_loop_, simulation_, input_low_, input_high_, perturbations, lanes, rows, row_stride, ok);
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

  // Plan and gain at a stage time: x_ref, u_ff and Kt(i, j) at [i·n + j], read
  // back from the controller exactly (command at a unit error gives −Kt(i, j),
  // negated back). They depend on t only: kept for the last few stage times
  // (RK4 asks at t, t + h/2 twice and t + h, which is often the next step's t).
  const bool open_loop = controller.open_loop();  // Controller::command adds no feedback at all
  const bool constant_gain = controller.gain_times().size() <= 1;
  struct Terms {
    double t = std::numeric_limits<double>::quiet_NaN();
    unsigned long long used = 0;  // least recently used is replaced: the three of one step stay
    std::vector<double> x_ref, u_ff, gain;
    lanes::StageTerms view() const { return {x_ref.data(), u_ff.data(), gain.data()}; }
  };
  std::array<Terms, 4> cache;
  for (auto& c : cache) {
    c.x_ref.resize(static_cast<std::size_t>(n));
    c.u_ff.resize(static_cast<std::size_t>(m));
    c.gain.resize(static_cast<std::size_t>(m) * n);
  }
  unsigned long long clock = 0;
  bool gain_ready = false;
  std::vector<double> constant_gain_values(static_cast<std::size_t>(m) * n);
  auto terms = [&](double t) -> const Terms& {
    ++clock;
    for (auto& c : cache)
      if (c.t == t) {
        c.used = clock;
        return c;
      }
    Terms& c = *std::min_element(cache.begin(), cache.end(), [](const Terms& p, const Terms& q) { return p.used < q.used; });
    c.used = clock;
    plan.evaluate(t, c.x_ref.data(), c.u_ff.data());
    if (constant_gain && gain_ready) {
      c.gain = constant_gain_values;
    } else {
      for (int j = 0; j < n; ++j) {
        unit[static_cast<std::size_t>(j)] = 1.0;
        controller.command(t, unit.data(), zero_n.data(), zero_m.data(), column.data());
        unit[static_cast<std::size_t>(j)] = 0.0;
        for (int i = 0; i < m; ++i) c.gain[static_cast<std::size_t>(i) * n + j] = -column[static_cast<std::size_t>(i)];
      }
      constant_gain_values = c.gain;
      gain_ready = true;
    }
    c.t = t;
    return c;
  };
  std::vector<double> error(L);
  auto inputs_at = [&](double t, const double* state) {
    lanes::closed_loop_inputs(L, n, m, state, terms(t).view(), !open_loop, scale.data(), bias.data(),
                              input_low_.data(), input_high_.data(), error.data(), u_cmd.data(), u_app.data());
  };
  const lanes::HcwLanes hcw_lanes{scale.data(), bias.data(), input_low_.data(), input_high_.data(), params.data()};

  auto rhs = [&](double t, const double* state, double* dxdt) {
    if (hcw_ && !open_loop) {
      // Fused: feedback, saturation and HillClohessyWiltshire::rhs per lane with
      // the lane's values in registers, in exactly the order of the one-run path.
      lanes::hcw_stage(L, state, terms(t).view(), hcw_lanes, u_cmd.data(), u_app.data(), dxdt);
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
  lanes::check_lanes(L, n, x.data(), OdeIntegrator::kDivergenceBound, ok);
  observe(0, times.front(), x.data());

  // The whole RK4 step in one lane kernel where the model allows (built-in HCW
  // with feedback, or lane programs with at most four inputs; no disturbance);
  // the stages one by one otherwise.
  const bool fused_step = fused_steps_ && hcw_ && !open_loop && !disturbed;
  const bool fused_programs = fused_steps_ && !programs_.empty() && !disturbed && m <= 4;
  BlockProgram block;
  lanes::ProgramStep step;
  std::vector<double> block_work;
  if (fused_programs) {
    block = block_program(programs_, 1 + n + m + n_params);
    step.n = n;
    step.m = m;
    step.n_params = n_params;
    step.result_rows = block.result_rows.data();
    step.rows = block.rows;
    step.ops = block.ops.data();
    step.op_count = block.ops.size();
    step.constants = block.constants.data();
    step.constant_count = static_cast<int>(block.constants.size());
    step.feedback = !open_loop;
    step.scale = scale.data();
    step.bias = bias.data();
    step.low = input_low_.data();
    step.high = input_high_.data();
    step.params = params.data();
    block_work.resize(lanes::program_blocks_work_size(L, step));
    lanes::program_blocks_load(L, x.data(), step, block_work.data());
  }
  // Classical RK4 with OdeIntegrator::integrate_rk4's step rule and expression order.
  for (std::size_t k = 1; k < times.size(); ++k) {
    const double span = times[k] - times[k - 1];
    const long long pieces =
        std::max(1LL, static_cast<long long>(std::ceil(span / simulation_.step_in_seconds - 1e-9)));
    const double h = span / static_cast<double>(pieces);
    const double half = 0.5 * h, sixth = h / 6.0;
    for (long long s = 0; s < pieces; ++s) {
      const double t = times[k - 1] + static_cast<double>(s) * h;
      if (fused_step) {
        const lanes::StageTerms a = terms(t).view(), b = terms(t + 0.5 * h).view(), c = terms(t + h).view();
        lanes::hcw_rk4_step(L, x.data(), y.data(), h, a, b, c, hcw_lanes, OdeIntegrator::kDivergenceBound, ok);
        std::swap(x, y);
        continue;
      }
      if (fused_programs) {
        const lanes::StageTerms a = terms(t).view(), b = terms(t + 0.5 * h).view(), c = terms(t + h).view();
        lanes::program_rk4_step(L, t, h, a, b, c, step, OdeIntegrator::kDivergenceBound, block_work.data());
        continue;
      }
      rhs(t, x.data(), k1.data());
      lanes::axpy(nL, x.data(), half, k1.data(), y.data());
      rhs(t + 0.5 * h, y.data(), k2.data());
      lanes::axpy(nL, x.data(), half, k2.data(), y.data());
      rhs(t + 0.5 * h, y.data(), k3.data());
      lanes::axpy(nL, x.data(), h, k3.data(), y.data());
      rhs(t + h, y.data(), k4.data());
      lanes::rk4_combine(nL, x.data(), sixth, k1.data(), k2.data(), k3.data(), k4.data());
      lanes::check_lanes(L, n, x.data(), OdeIntegrator::kDivergenceBound, ok);
    }
    if (fused_programs) lanes::program_blocks_store(L, step, block_work.data(), x.data(), ok);
    observe(static_cast<Eigen::Index>(k), times[k], x.data());
  }
}

}  // namespace sigmatube::model
