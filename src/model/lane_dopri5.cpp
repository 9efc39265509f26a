// SPDX-License-Identifier: MIT
// dopri5 over lanes with per-lane step control (model/lane_dopri5.h). Every
// expression below is OdeIntegrator::integrate_dopri5's (integrator.cpp), written
// out per value in the same association order; Eigen evaluates those vector
// expressions coefficient by coefficient, so each lane performs the same IEEE
// operations on the same operands. This file is compiled with
// -ffp-contract=off (CMakeLists.txt): no multiply–add is fused.
#include "sigmatube/model/lane_dopri5.h"

#include <algorithm>
#include <cmath>
#include <stdexcept>

#include "sigmatube/model/controller.h"
#include "sigmatube/model/integrator.h"
#include "sigmatube/model/plan.h"
#include "dopri5_tableau.h"
#include "lane_kernels.h"

namespace sigmatube::model {
namespace {

using namespace dopri5;

// ---- lane loops (multiversioned: AVX2 and the x86-64 baseline, same bits) ----
// All arrays are [n][L]; h is [L]. Lanes no longer integrating are computed too
// (their values are ignored): the loops stay branch-free.

SIGMATUBE_LANE_TARGETS
void stage2(std::size_t L, int n, const double* __restrict y, const double* __restrict h, const double* __restrict k1,
            double* __restrict out) {
  // y + h * a21 * k1_  =  y + (h·a21)·k1
  for (int i = 0; i < n; ++i)
    for (std::size_t l = 0; l < L; ++l) {
      const std::size_t q = i * L + l;
      out[q] = y[q] + h[l] * a21 * k1[q];
    }
}

SIGMATUBE_LANE_TARGETS
void stage3(std::size_t L, int n, const double* __restrict y, const double* __restrict h, const double* __restrict k1,
            const double* __restrict k2, double* __restrict out) {
  for (int i = 0; i < n; ++i)
    for (std::size_t l = 0; l < L; ++l) {
      const std::size_t q = i * L + l;
      out[q] = y[q] + h[l] * (a31 * k1[q] + a32 * k2[q]);
    }
}

SIGMATUBE_LANE_TARGETS
void stage4(std::size_t L, int n, const double* __restrict y, const double* __restrict h, const double* __restrict k1,
            const double* __restrict k2, const double* __restrict k3, double* __restrict out) {
  for (int i = 0; i < n; ++i)
    for (std::size_t l = 0; l < L; ++l) {
      const std::size_t q = i * L + l;
      out[q] = y[q] + h[l] * (a41 * k1[q] + a42 * k2[q] + a43 * k3[q]);
    }
}

SIGMATUBE_LANE_TARGETS
void stage5(std::size_t L, int n, const double* __restrict y, const double* __restrict h, const double* __restrict k1,
            const double* __restrict k2, const double* __restrict k3, const double* __restrict k4,
            double* __restrict out) {
  for (int i = 0; i < n; ++i)
    for (std::size_t l = 0; l < L; ++l) {
      const std::size_t q = i * L + l;
      out[q] = y[q] + h[l] * (a51 * k1[q] + a52 * k2[q] + a53 * k3[q] + a54 * k4[q]);
    }
}

SIGMATUBE_LANE_TARGETS
void stage6(std::size_t L, int n, const double* __restrict y, const double* __restrict h, const double* __restrict k1,
            const double* __restrict k2, const double* __restrict k3, const double* __restrict k4,
            const double* __restrict k5, double* __restrict out) {
  for (int i = 0; i < n; ++i)
    for (std::size_t l = 0; l < L; ++l) {
      const std::size_t q = i * L + l;
      out[q] = y[q] + h[l] * (a61 * k1[q] + a62 * k2[q] + a63 * k3[q] + a64 * k4[q] + a65 * k5[q]);
    }
}

// The fifth-order solution (no k2 term).
SIGMATUBE_LANE_TARGETS
void stage7(std::size_t L, int n, const double* __restrict y, const double* __restrict h, const double* __restrict k1,
            const double* __restrict k3, const double* __restrict k4, const double* __restrict k5,
            const double* __restrict k6, double* __restrict out) {
  for (int i = 0; i < n; ++i)
    for (std::size_t l = 0; l < L; ++l) {
      const std::size_t q = i * L + l;
      out[q] = y[q] + h[l] * (a71 * k1[q] + a73 * k3[q] + a74 * k4[q] + a75 * k5[q] + a76 * k6[q]);
    }
}

// err[l] = sqrt( (1/n) Σ_i (e_i / sc_i)² ), e = h (e1 k1 + e3 k3 + … + e7 k7),
// sc = atol + rtol·max(|y|, |ynew|), summed over i in order as the one-run path.
SIGMATUBE_LANE_TARGETS
void error_norm(std::size_t L, int n, double rtol, double atol, const double* __restrict y,
                const double* __restrict ynew, const double* __restrict h, const double* __restrict k1,
                const double* __restrict k3, const double* __restrict k4, const double* __restrict k5,
                const double* __restrict k6, const double* __restrict k7, double* __restrict err) {
  for (std::size_t l = 0; l < L; ++l) err[l] = 0.0;
  for (int i = 0; i < n; ++i)
    for (std::size_t l = 0; l < L; ++l) {
      const std::size_t q = i * L + l;
      const double e = h[l] * (e1 * k1[q] + e3 * k3[q] + e4 * k4[q] + e5 * k5[q] + e6 * k6[q] + e7 * k7[q]);
      const double ay = std::fabs(y[q]), an = std::fabs(ynew[q]);
      const double sc = atol + rtol * (ay < an ? an : ay);  // std::max(|y|, |ynew|)
      err[l] += (e / sc) * (e / sc);
    }
  const double count = static_cast<double>(n);
  for (std::size_t l = 0; l < L; ++l) err[l] = std::sqrt(err[l] / count);
}

// scaled_norm(v, reference) of the initial-step guess, per lane; v = a − b when
// b is given (k2 − k1), else a.
SIGMATUBE_LANE_TARGETS
void scaled_norm(std::size_t L, int n, double rtol, double atol, const double* __restrict a,
                 const double* __restrict b, const double* __restrict reference, double* __restrict out) {
  for (std::size_t l = 0; l < L; ++l) out[l] = 0.0;
  for (int i = 0; i < n; ++i)
    for (std::size_t l = 0; l < L; ++l) {
      const std::size_t q = i * L + l;
      const double v = b != nullptr ? a[q] - b[q] : a[q];
      const double sc = atol + rtol * std::fabs(reference[q]);
      out[l] += (v / sc) * (v / sc);
    }
  const double count = static_cast<double>(n);
  for (std::size_t l = 0; l < L; ++l) out[l] = std::sqrt(out[l] / count);
}

// y + h0·k1 (the initial-step probe).
SIGMATUBE_LANE_TARGETS
void probe(std::size_t L, int n, const double* __restrict y, const double* __restrict h, const double* __restrict k1,
           double* __restrict out) {
  for (int i = 0; i < n; ++i)
    for (std::size_t l = 0; l < L; ++l) {
      const std::size_t q = i * L + l;
      out[q] = y[q] + h[l] * k1[q];
    }
}

// Where take[l]: y = ynew and k1 = k7 (an accepted step; first same as last).
SIGMATUBE_LANE_TARGETS
void commit(std::size_t L, int n, const std::uint8_t* __restrict take, const double* __restrict ynew,
            const double* __restrict k7, double* __restrict y, double* __restrict k1) {
  for (int i = 0; i < n; ++i)
    for (std::size_t l = 0; l < L; ++l) {
      const std::size_t q = i * L + l;
      y[q] = take[l] ? ynew[q] : y[q];
      k1[q] = take[l] ? k7[q] : k1[q];
    }
}

// ---- the closed loop at one lane, as ClosedLoop::run's lambdas ----

struct LaneLoop {
  const ClosedLoop& cl;
  const Eigen::VectorXd& low;
  const Eigen::VectorXd& high;
  int n, m, n_derived, n_out;
  mutable std::vector<double> x_ref, u_ff, u_cmd, u_app, derived;
  // Each lane's last plan and gain intervals (walked from, not searched).
  mutable std::vector<std::size_t> plan_hint, gain_hint;

  LaneLoop(const ClosedLoop& c, const Eigen::VectorXd& lo, const Eigen::VectorXd& hi, std::size_t lanes)
      : cl(c), low(lo), high(hi), n(c.model().state_count()), m(c.model().input_count()),
        n_derived(c.model().derived_output_count()), n_out(c.output_count()),
        x_ref(static_cast<std::size_t>(n)), u_ff(static_cast<std::size_t>(m)), u_cmd(static_cast<std::size_t>(m)),
        u_app(static_cast<std::size_t>(m)), derived(static_cast<std::size_t>(n_derived)), plan_hint(lanes, 0),
        gain_hint(lanes, 0) {}

  void inputs_at(std::size_t l, const Perturbation& p, double t, const double* state) const {
    cl.plan().evaluate(t, plan_hint[l], x_ref.data(), u_ff.data());
    cl.controller().command(t, gain_hint[l], state, x_ref.data(), u_ff.data(), u_cmd.data());
    for (int i = 0; i < m; ++i)
      u_app[static_cast<std::size_t>(i)] =
          std::clamp(p.input_scale(i) * u_cmd[static_cast<std::size_t>(i)] + p.input_bias(i), low(i), high(i));
  }

  void observe(std::size_t l, const Perturbation& p, double t, const double* state, double* row) const {
    inputs_at(l, p, t, state);
    for (int i = 0; i < n; ++i) row[i] = state[i];
    if (n_derived > 0) {
      cl.model().derived_outputs(t, state, u_app.data(), p.parameters.data(), derived.data());
      for (int j = 0; j < n_derived; ++j) row[n + j] = derived[static_cast<std::size_t>(j)];
    }
    for (int i = 0; i < m; ++i)
      row[n + n_derived + i] = p.input_scale(i) * u_cmd[static_cast<std::size_t>(i)] + p.input_bias(i);
  }
};

bool within_bound(int n, const double* x) {
  for (int i = 0; i < n; ++i)
    if (!(std::fabs(x[i]) <= OdeIntegrator::kDivergenceBound)) return false;  // also NaN
  return true;
}

}  // namespace

void dopri5_lanes(const ClosedLoop& cl, const casefile::SimulationOptions& simulation, const Eigen::VectorXd& input_low,
                  const Eigen::VectorXd& input_high, const Perturbation* perturbations, int lanes, double* rows,
                  std::size_t row_stride, std::uint8_t* ok, LaneStepCounts* counts) {
  if (simulation.integrator != casefile::IntegratorKind::dopri5) throw std::logic_error("dopri5_lanes: not a dopri5 case");
  if (lanes <= 0) return;
  const Model& model = cl.model();
  const int n = model.state_count(), m = model.input_count();
  const std::vector<double>& times = cl.report_times();
  const auto T = static_cast<Eigen::Index>(times.size());
  const LaneLoop loop(cl, input_low, input_high, static_cast<std::size_t>(lanes));
  if (row_stride < static_cast<std::size_t>(T) * static_cast<std::size_t>(loop.n_out))
    throw std::logic_error("dopri5_lanes: row stride below T·n_out");
  const std::size_t L = static_cast<std::size_t>(lanes);
  for (std::size_t l = 0; l < L; ++l) {
    const Perturbation& p = perturbations[l];
    if (p.initial_offset.size() != n || p.parameters.size() != model.parameter_count() || p.input_scale.size() != m ||
        p.input_bias.size() != m || (p.disturbance.rows() > 0 && (p.disturbance.rows() != T || p.disturbance.cols() != n)))
      throw std::logic_error("dopri5_lanes: perturbation sizes do not match the model");
  }
  if (counts) {
    counts->accepted.assign(L, 0);
    counts->rejected.assign(L, 0);
  }

  // Work arrays of the whole call, [n][L].
  const std::size_t nL = static_cast<std::size_t>(n) * L;
  std::vector<double> y(nL), ynew(nL), stage(nL), k1(nL), k2(nL), k3(nL), k4(nL), k5(nL), k6(nL), k7(nL);
  std::vector<double> lane_x(static_cast<std::size_t>(n)), lane_dx(static_cast<std::size_t>(n));
  // Per-lane controller state.
  std::vector<double> t(L), h(L), t_stage(L), err(L), fac_old(L, 1e-4), scratch(L), scratch2(L);
  std::vector<std::uint8_t> active(L, 0), last_rejected(L, 0), final_step(L, 0), accepted_now(L, 0);
  std::vector<std::size_t> next(L, 1);
  std::vector<long long> steps(L, 0), rejects(L, 0);

  // ClosedLoop::run's right-hand side at lane l's own time t_at[l], for the
  // active lanes, lane by lane with the one-run path's functions (a version with
  // the feedback law as a lane loop over per-lane gains measured slower: the
  // gains must be blended and scattered per lane first). Reads [n][L] state,
  // writes [n][L] derivative.
  std::vector<std::size_t> grid_hint(L, 0);
  auto f = [&](const double* t_at, const double* state, double* dxdt) {
    for (std::size_t l = 0; l < L; ++l) {
      if (!active[l]) continue;
      const Perturbation& p = perturbations[l];
      for (int i = 0; i < n; ++i) lane_x[static_cast<std::size_t>(i)] = state[i * L + l];
      loop.inputs_at(l, p, t_at[l], lane_x.data());
      model.rhs(t_at[l], lane_x.data(), loop.u_app.data(), p.parameters.data(), lane_dx.data());
      if (p.disturbance.rows() > 0) {
        const GridSegment g = grid_segment(times, t_at[l], grid_hint[l]);
        for (int i = 0; i < n; ++i)
          lane_dx[static_cast<std::size_t>(i)] += (1.0 - g.w) * p.disturbance(g.k, i) + g.w * p.disturbance(g.k1, i);
      }
      for (int i = 0; i < n; ++i) dxdt[i * L + l] = lane_dx[static_cast<std::size_t>(i)];
    }
  };
  auto lane_state = [&](const std::vector<double>& v, std::size_t l) {
    for (int i = 0; i < n; ++i) lane_x[static_cast<std::size_t>(i)] = v[i * L + l];
    return lane_x.data();
  };
  auto fail = [&](std::size_t l) {
    ok[l] = 0;
    active[l] = 0;
  };

  // x(t0) = x_ref(t0) + initial offset; the one-run path checks, then observes it.
  const double t0 = times.front(), tf = times.back();
  const Eigen::VectorXd x0 = cl.plan().reference_state(t0);
  for (std::size_t l = 0; l < L; ++l) {
    const Eigen::VectorXd x = x0 + perturbations[l].initial_offset;
    for (int i = 0; i < n; ++i) y[i * L + l] = x(i);
    ok[l] = within_bound(n, x.data()) ? 1 : 0;
    active[l] = ok[l] && T > 1;
    if (ok[l]) loop.observe(l, perturbations[l], t0, x.data(), rows + l * row_stride);
  }
  if (T == 1) return;

  const double hmax = simulation.step_in_seconds, rtol = simulation.rtol, atol = simulation.atol;
  const double hmin = kMinimumStepShare * (tf - t0);
  const double expected_steps = (tf - t0) / hmax;
  const double watchdog_steps =
      std::max(OdeIntegrator::kWatchdogMinimumSteps, OdeIntegrator::kWatchdogFactor * expected_steps);

  // First derivative and the initial step (Hairer, Nørsett & Wanner, §II.4).
  std::fill(t.begin(), t.end(), t0);
  f(t.data(), y.data(), k1.data());
  {
    std::vector<double>& dnf = scratch;
    std::vector<double>& dny = scratch2;
    scaled_norm(L, n, rtol, atol, k1.data(), nullptr, y.data(), dnf.data());
    scaled_norm(L, n, rtol, atol, y.data(), nullptr, y.data(), dny.data());
    std::vector<double> h0(L);
    for (std::size_t l = 0; l < L; ++l) {
      double v = (dnf[l] <= 1e-10 || dny[l] <= 1e-10) ? 1e-6 : 0.01 * dny[l] / dnf[l];
      h0[l] = std::min(v, hmax);
      t_stage[l] = t0 + h0[l];
    }
    probe(L, n, y.data(), h0.data(), k1.data(), ynew.data());
    f(t_stage.data(), ynew.data(), k2.data());
    std::vector<double>& der2 = scratch2;  // dny is no longer needed
    scaled_norm(L, n, rtol, atol, k2.data(), k1.data(), y.data(), der2.data());
    for (std::size_t l = 0; l < L; ++l) {
      const double d2 = der2[l] / h0[l];
      const double der12 = std::max(std::abs(d2), std::sqrt(dnf[l]));
      const double h1 = der12 <= 1e-15 ? std::max(1e-6, std::abs(h0[l]) * 1e-3) : std::pow(0.01 / der12, 0.2);
      h[l] = std::min({100.0 * h0[l], h1, hmax});
    }
  }

  std::vector<double> r(static_cast<std::size_t>(n) * 5), dense(static_cast<std::size_t>(n));
  for (;;) {
    // Step rules before the stages, per lane.
    bool any = false;
    for (std::size_t l = 0; l < L; ++l) {
      if (!active[l]) continue;
      final_step[l] = 0;
      if (tf - t[l] <= 1.01 * h[l] && tf - t[l] <= hmax * (1.0 + 1e-9)) {
        h[l] = tf - t[l];
        final_step[l] = 1;
      }
      if (!final_step[l] && h[l] < hmin) {  // the one-run path throws "step size fell below"
        fail(l);
        continue;
      }
      if (static_cast<double>(steps[l]) > watchdog_steps) {  // the one-run path warns: hand it back
        fail(l);
        continue;
      }
      any = true;
    }
    if (!any) break;

    for (std::size_t l = 0; l < L; ++l) t_stage[l] = t[l] + c2 * h[l];
    stage2(L, n, y.data(), h.data(), k1.data(), stage.data());
    f(t_stage.data(), stage.data(), k2.data());
    for (std::size_t l = 0; l < L; ++l) t_stage[l] = t[l] + c3 * h[l];
    stage3(L, n, y.data(), h.data(), k1.data(), k2.data(), stage.data());
    f(t_stage.data(), stage.data(), k3.data());
    for (std::size_t l = 0; l < L; ++l) t_stage[l] = t[l] + c4 * h[l];
    stage4(L, n, y.data(), h.data(), k1.data(), k2.data(), k3.data(), stage.data());
    f(t_stage.data(), stage.data(), k4.data());
    for (std::size_t l = 0; l < L; ++l) t_stage[l] = t[l] + c5 * h[l];
    stage5(L, n, y.data(), h.data(), k1.data(), k2.data(), k3.data(), k4.data(), stage.data());
    f(t_stage.data(), stage.data(), k5.data());
    for (std::size_t l = 0; l < L; ++l) t_stage[l] = t[l] + h[l];
    stage6(L, n, y.data(), h.data(), k1.data(), k2.data(), k3.data(), k4.data(), k5.data(), stage.data());
    f(t_stage.data(), stage.data(), k6.data());
    stage7(L, n, y.data(), h.data(), k1.data(), k3.data(), k4.data(), k5.data(), k6.data(), ynew.data());
    for (std::size_t l = 0; l < L; ++l) t_stage[l] = final_step[l] ? tf : t[l] + h[l];  // tnew
    f(t_stage.data(), ynew.data(), k7.data());
    error_norm(L, n, rtol, atol, y.data(), ynew.data(), h.data(), k1.data(), k3.data(), k4.data(), k5.data(),
               k6.data(), k7.data(), err.data());

    for (std::size_t l = 0; l < L; ++l) {
      accepted_now[l] = 0;
      if (!active[l]) continue;
      ++steps[l];
      const double tnew = t_stage[l];
      if (!std::isfinite(err[l])) {
        // A stage left the finite numbers: shrink hard (the one-run path throws
        // when the new state is not finite and the step is already tiny).
        bool finite = true;
        for (int i = 0; i < n; ++i) finite = finite && std::isfinite(ynew[i * L + l]);
        if (!finite && !(h[l] > hmin * 10.0)) {
          fail(l);
          continue;
        }
        h[l] *= 0.1;
        last_rejected[l] = 1;
        ++rejects[l];
        continue;
      }
      const double fac11 = std::pow(err[l], kExpo1);
      if (err[l] <= 1.0) {
        if (!within_bound(n, lane_state(ynew, l))) {
          fail(l);
          continue;
        }
        // Report times in (t, tnew]: the new state itself, or the dense output.
        const double hs = tnew - t[l];
        bool dense_ready = false;
        std::size_t& k = next[l];
        while (k < times.size() && times[k] <= tnew) {
          double* row = rows + l * row_stride + k * static_cast<std::size_t>(loop.n_out);
          if (times[k] == tnew) {
            loop.observe(l, perturbations[l], tnew, lane_state(ynew, l), row);
          } else {
            if (!dense_ready) {
              for (int i = 0; i < n; ++i) {
                const std::size_t q = i * L + l;
                double* ri = r.data() + 5 * i;
                ri[0] = y[q];
                ri[1] = ynew[q] - y[q];
                ri[2] = hs * k1[q] - ri[1];
                ri[3] = ri[1] - hs * k7[q] - ri[2];
                ri[4] = hs * (d1 * k1[q] + d3 * k3[q] + d4 * k4[q] + d5 * k5[q] + d6 * k6[q] + d7 * k7[q]);
              }
              dense_ready = true;
            }
            const double theta = (times[k] - t[l]) / hs, theta1 = 1.0 - theta;
            for (int i = 0; i < n; ++i) {
              const double* ri = r.data() + 5 * i;
              dense[static_cast<std::size_t>(i)] =
                  ri[0] + theta * (ri[1] + theta1 * (ri[2] + theta * (ri[3] + theta1 * ri[4])));
            }
            loop.observe(l, perturbations[l], times[k], dense.data(), row);
          }
          ++k;
        }
        accepted_now[l] = 1;
        t[l] = tnew;
        double fac = fac11 / std::pow(fac_old[l], kBeta) / kSafety;
        fac = std::clamp(fac, 1.0 / kFacMax, 1.0 / kFacMin);
        double hnew = h[l] / fac;
        if (last_rejected[l]) hnew = std::min(hnew, h[l]);
        fac_old[l] = std::max(err[l], 1e-4);
        last_rejected[l] = 0;
        h[l] = std::min(hnew, hmax);
        if (final_step[l] || k >= times.size()) active[l] = 0;  // done; ok stays 1
      } else {
        h[l] /= std::min(1.0 / kFacMin, fac11 / kSafety);
        last_rejected[l] = 1;
        ++rejects[l];
      }
    }
    commit(L, n, accepted_now.data(), ynew.data(), k7.data(), y.data(), k1.data());
  }
  if (counts)
    for (std::size_t l = 0; l < L; ++l) {
      counts->accepted[l] = steps[l] - rejects[l];
      counts->rejected[l] = rejects[l];
    }
}

}  // namespace sigmatube::model
