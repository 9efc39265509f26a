// SPDX-License-Identifier: MIT
// Google Benchmark micro-benchmarks: one integrator step, one basis-evaluation
// batch, one right-hand side of a built-in and of an expression model, and one
// closed-loop run of the HCW tracking case with each, one at a time and as a
// batch of lanes (model/batch_propagator.h).
#include <benchmark/benchmark.h>

#include <string>
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/app/case_loader.h"
#include "sigmatube/expansion/multi_index.h"
#include "sigmatube/expansion/surrogate.h"
#include "sigmatube/model/batch_propagator.h"
#include "sigmatube/model/builtin_models.h"
#include "sigmatube/model/integrator.h"

namespace {

using namespace sigmatube;

const std::string kSource = SIGMATUBE_SOURCE_DIR;

const app::LoadedCase& tracking_case(bool expression) {
  static const app::LoadedCase builtin = app::load_case(kSource + "/bench/cases/hcw-tracking/case.toml");
  static const app::LoadedCase expr = app::load_case(kSource + "/bench/cases/hcw-tracking-expression/case.toml");
  return expression ? expr : builtin;
}

// One integrator step of the HCW model through the integrator's public entry
// point (report times {0, h}, h the step or the largest step: exactly one step,
// plus the two observer calls).
void integrator_step_hcw(benchmark::State& state, casefile::IntegratorKind kind) {
  casefile::SimulationOptions options;
  options.integrator = kind;
  options.step_in_seconds = 1.0;
  model::OdeIntegrator integrator(options, 6);
  const model::HillClohessyWiltshire hcw;
  const double p[1] = {0.00113}, u[3] = {0.0, 0.0, 0.0};
  const std::vector<double> times{0.0, 1.0};
  const model::OdeIntegrator::Rhs f = [&](double t, const double* x, double* dxdt) { hcw.rhs(t, x, u, p, dxdt); };
  const model::OdeIntegrator::Observer observe = [](std::size_t, double, const double*) {};
  double x[6];
  for (auto _ : state) {
    for (int i = 0; i < 6; ++i) x[i] = 1.0 + i;
    integrator.integrate(f, times, x, observe);
    benchmark::DoNotOptimize(x);
  }
}

void BM_Rk4StepHcw(benchmark::State& state) { integrator_step_hcw(state, casefile::IntegratorKind::rk4); }
BENCHMARK(BM_Rk4StepHcw);

void BM_Dopri5StepHcw(benchmark::State& state) { integrator_step_hcw(state, casefile::IntegratorKind::dopri5); }
BENCHMARK(BM_Dopri5StepHcw);

// Basis matrix of a batch of germ points: 8 dimensions (the demo's germ size),
// total degree 3, Hermite and Legendre families.
void BM_BasisBatch(benchmark::State& state) {
  expansion::Surrogate s;
  for (int j = 0; j < 8; ++j)
    s.families.push_back({j == 4 ? germ::Family::legendre : germ::Family::hermite, 0.0, 0.0});
  s.indices = expansion::total_degree_set(8, 3);
  const Eigen::Index n = state.range(0);
  Eigen::MatrixXd points = 0.5 * Eigen::MatrixXd::Random(n, 8);
  for (auto _ : state) {
    Eigen::MatrixXd psi = s.basis_matrix(points);
    benchmark::DoNotOptimize(psi.data());
  }
  state.SetItemsProcessed(state.iterations() * n);
  state.counters["P"] = static_cast<double>(s.basis_size());
}
BENCHMARK(BM_BasisBatch)->Arg(1024)->Arg(8192);

void BM_RhsHcw(benchmark::State& state) {
  const bool expression = state.range(0) != 0;
  const model::Model& m = tracking_case(expression).closed_loop->model();
  const Eigen::VectorXd p = m.parameters();
  double x[6] = {1, 2, 3, 0.1, 0.2, 0.3}, u[3] = {1e-3, 2e-3, 3e-3}, dx[6];
  for (auto _ : state) {
    m.rhs(0.0, x, u, p.data(), dx);
    benchmark::DoNotOptimize(dx);
    x[0] += 1e-9;
  }
  state.SetLabel(expression ? "expression" : "built-in");
}
BENCHMARK(BM_RhsHcw)->Arg(0)->Arg(1);

void BM_ClosedLoopRunHcw(benchmark::State& state) {
  const bool expression = state.range(0) != 0;
  const auto& cl = *tracking_case(expression).closed_loop;
  model::Perturbation p = cl.nominal();
  p.initial_offset[0] = 0.5;
  Eigen::MatrixXd out(static_cast<Eigen::Index>(cl.report_times().size()), cl.output_count());
  for (auto _ : state) {
    cl.run(p, out);
    benchmark::DoNotOptimize(out.data());
  }
  state.SetLabel(expression ? "expression" : "built-in");
}
BENCHMARK(BM_ClosedLoopRunHcw)->Arg(0)->Arg(1);

// One batch of 64 lanes (the pipeline's block, app::ModelRunner::kDefaultBlock)
// through the lane kernels: items are runs. Argument 0 built-in, 1 expression
// twin, 2 built-in with its whole-step kernel kept at AVX2 (no AVX-512).
void BM_BatchRunHcw(benchmark::State& state) {
  const bool expression = state.range(0) == 1;
  model::BatchPropagator::allow_avx512(state.range(0) != 2);
  const app::LoadedCase& loaded = tracking_case(expression);
  const auto& cl = *loaded.closed_loop;
  const model::BatchPropagator batch(cl, loaded.options);
  constexpr int kLanes = 64;
  std::vector<model::Perturbation> p(kLanes, cl.nominal());
  for (int l = 0; l < kLanes; ++l) p[static_cast<std::size_t>(l)].initial_offset[0] = 0.01 * l;
  const std::size_t width = cl.report_times().size() * static_cast<std::size_t>(cl.output_count());
  std::vector<double> rows(width * kLanes);
  std::vector<std::uint8_t> ok(kLanes);
  for (auto _ : state) {
    batch.run(p.data(), kLanes, rows.data(), width, ok.data());
    benchmark::DoNotOptimize(rows.data());
  }
  state.SetItemsProcessed(state.iterations() * kLanes);
  state.SetLabel(std::string(expression ? "expression" : "built-in") + ", " + model::BatchPropagator::instruction_set());
  model::BatchPropagator::allow_avx512(true);
}
BENCHMARK(BM_BatchRunHcw)->Arg(0)->Arg(1)->Arg(2);

}  // namespace

BENCHMARK_MAIN();
