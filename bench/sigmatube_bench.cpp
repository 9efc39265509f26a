// SPDX-License-Identifier: MIT
// The side-by-side benchmark suite: measures (a)–(e) in one run and prints each
// ratio beside its goal. Not a test: nothing here passes or fails, and the
// numbers depend on the machine and its load (printed with them).
//
// (a) efficiency   model runs and wall time the surrogate needs for the keep-out
//                  path probability within 10 % relative and the final position
//                  standard deviation within 1 %, vs crude Monte Carlo reaching the
//                  same confidence-interval half-width (95 %):
//                    probability  n = z² (1 − p) / (p · 0.1²)         (binomial)
//                    std          n = z² (κ − 1) / (4 · 0.01²)        (delta method,
//                                 Var s ≈ σ² (κ − 1) / (4n), κ the kurtosis)
//                  p and κ from the surrogate; Monte Carlo wall time from its
//                  measured rate on a pilot run (2 threads), which also checks the
//                  surrogate's numbers against the full model.
// (b) throughput   Monte Carlo runs per CPU-second on one thread vs the NumPy
//                  baseline bench/numpy_baseline.py (same model, plan, gain, RK4).
// (c) scaling      Monte Carlo wall time on 1 thread / on 2 threads.
// (d) sampling     surrogate evaluation flop rate (2·N·P·columns per batch) as a
//                  fraction of a dense matrix-multiply rate, one thread each:
//                  Eigen's in this build (x86-64 baseline) and Eigen's built with
//                  -mavx2 -mfma (bench/avx2_gemm_reference.cpp, the machine's
//                  rate with AVX2 enabled).
// (e) memory       peak resident set (getrusage ru_maxrss) of a separate process
//                  computing a path probability from 10⁷ surrogate samples with
//                  the pipeline's streaming code (app::analyze_case).
#include <sys/resource.h>
#include <time.h>
#include <unistd.h>

#include <algorithm>
#include <array>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <iostream>
#include <map>
#include <memory>
#include <sstream>
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/app/analysis.h"
#include "sigmatube/app/case_loader.h"
#include "sigmatube/app/model_runs.h"
#include "sigmatube/constraints/violation_statistics.h"
#include "sigmatube/core/counter_rng.h"
#include "sigmatube/core/parallel.h"
#include "sigmatube/expansion/basis_product.h"
#include "sigmatube/expansion/surrogate.h"
#include "sigmatube/model/batch_propagator.h"
#include "sigmatube/model/controller.h"
#include "sigmatube/montecarlo/monte_carlo.h"

namespace {

using namespace sigmatube;

// Two-sided 95 % standard normal quantile (Abramowitz & Stegun, Table 26.1).
constexpr double kZ95 = 1.959963984540054;
constexpr double kProbabilityRelativeHalfWidth = 0.10;  // (a) goal: 10 % relative
constexpr double kStdRelativeHalfWidth = 0.01;          // (a) goal: 1 % relative
constexpr double kNegligibleStdInMetres = 1e-9;
constexpr unsigned long long kSurrogateSeed = 0x5EED5EEDULL;

const std::string kSource = SIGMATUBE_SOURCE_DIR;
const std::string kTrackingCase = kSource + "/bench/cases/hcw-tracking/case.toml";
const std::string kDemoCase = kSource + "/bench/cases/demo-wide-keepout/case.toml";

double wall_now() {
  return std::chrono::duration<double>(std::chrono::steady_clock::now().time_since_epoch()).count();
}
double cpu_now(clockid_t clock) {
  timespec ts{};
  clock_gettime(clock, &ts);
  return static_cast<double>(ts.tv_sec) + 1e-9 * static_cast<double>(ts.tv_nsec);
}
double process_cpu() { return cpu_now(CLOCK_PROCESS_CPUTIME_ID); }
double thread_cpu() { return cpu_now(CLOCK_THREAD_CPUTIME_ID); }

std::string load_text() {
  std::ifstream in("/proc/loadavg");
  std::string a, b, c;
  in >> a >> b >> c;
  return a + " " + b + " " + c;
}

std::string fmt(const char* format, double v) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, format, v);
  return buffer;
}

/// Design runs as the pipeline makes them (app::ModelRunner: batched where the
/// integrator allows, over threads).
expansion::Surrogate build(const app::LoadedCase& loaded, int threads, expansion::SurrogateSummary& summary) {
  const auto& cl = *loaded.closed_loop;
  const int n_times = static_cast<int>(cl.report_times().size()), n_out = cl.output_count();
  const app::ModelRunner runner(loaded);
  const expansion::ModelEvaluator evaluate = [&](const Eigen::MatrixXd& points, Eigen::MatrixXd& values) {
    values.resize(points.rows(), static_cast<Eigen::Index>(n_times) * n_out);
    std::vector<double> rows(static_cast<std::size_t>(values.size()));
    std::vector<std::uint8_t> ok(static_cast<std::size_t>(points.rows()));
    runner.run(points, 0, threads, 16, rows.data(), ok.data(), true);
    for (Eigen::Index i = 0; i < points.rows(); ++i)
      values.row(i) = Eigen::Map<const Eigen::RowVectorXd>(rows.data() + i * values.cols(), values.cols());
  };
  return expansion::build_surrogate(loaded.germ->specs(), n_times, n_out, loaded.options.surrogate, evaluate, &summary);
}

/// Germ points of surrogate samples [begin, end) (the pipeline's construction).
Eigen::MatrixXd germ_points(const app::LoadedCase& loaded, long long begin, long long end) {
  const int d = loaded.germ->dimension();
  const CounterRng rng(kSurrogateSeed);
  Eigen::MatrixXd points(end - begin, d);
  std::vector<double> z(static_cast<std::size_t>(d)), xi(static_cast<std::size_t>(d));
  for (long long i = begin; i < end; ++i) {
    for (int j = 0; j < d; ++j) z[static_cast<std::size_t>(j)] = rng.normal(static_cast<std::uint64_t>(i), static_cast<std::uint64_t>(j));
    loaded.germ->from_standard_normal(z.data(), xi.data());
    for (int j = 0; j < d; ++j) points(i - begin, j) = xi[static_cast<std::size_t>(j)];
  }
  return points;
}

/// Path probabilities from `samples` surrogate samples, streamed like app::analyze_case.
constraints::ViolationResults sample_surrogate(const app::LoadedCase& loaded, const expansion::Surrogate& s,
                                               long long samples, int threads) {
  const auto& cl = *loaded.closed_loop;
  const int n_times = static_cast<int>(cl.report_times().size()), n_out = cl.output_count();
  std::vector<char> used(static_cast<std::size_t>(n_out), 0);
  for (const auto& c : loaded.constraints)
    for (int o : c.output_indices()) used[static_cast<std::size_t>(o)] = 1;
  std::vector<int> columns;
  for (int t = 0; t < n_times; ++t)
    for (int o = 0; o < n_out; ++o)
      if (used[static_cast<std::size_t>(o)]) columns.push_back(t * n_out + o);
  const Eigen::VectorXd times = Eigen::Map<const Eigen::VectorXd>(cl.report_times().data(), n_times);
  return constraints::stream_violation_statistics(
      loaded.constraints, times, n_out, samples, 2048, threads, [&](long long begin, long long end, Eigen::MatrixXd& Y) {
        const Eigen::MatrixXd points = germ_points(loaded, begin, end);
        Eigen::MatrixXd values;
        s.evaluate(points, values, columns);
        Y.setZero(end - begin, static_cast<Eigen::Index>(n_times) * n_out);
        for (std::size_t k = 0; k < columns.size(); ++k) Y.col(columns[k]) = values.col(static_cast<Eigen::Index>(k));
      });
}

montecarlo::MonteCarloResult monte_carlo(const app::LoadedCase& loaded, long long runs, int threads) {
  const auto& cl = *loaded.closed_loop;
  casefile::MonteCarloOptions options = loaded.options.montecarlo;
  options.runs = runs;
  montecarlo::MonteCarloRunOptions run_options;
  run_options.threads = threads;
  // The pipeline's runner: batched where the integrator allows.
  const app::ModelRunner runner(loaded);
  run_options.run_rows = [&](long long begin, long long, const Eigen::MatrixXd& xi, double* outputs, std::uint8_t* ok) {
    runner.run(xi, begin, threads, app::ModelRunner::kDefaultBlock, outputs, ok, false);
  };
  const montecarlo::RunSample run = runner.run_sample();
  const Eigen::VectorXd times = Eigen::Map<const Eigen::VectorXd>(cl.report_times().data(), static_cast<Eigen::Index>(cl.report_times().size()));
  return montecarlo::run_monte_carlo(options, loaded.germ->specs(), times, cl.output_count(), loaded.constraints, run,
                                     run_options);
}

struct Row {
  std::string what, measured, goal, verdict;
};
std::vector<Row> table;

void add_row(const std::string& what, double ratio, const std::string& detail, double goal, bool larger_is_better,
             const char* unit = "x") {
  const bool met = larger_is_better ? ratio >= goal : ratio <= goal;
  table.push_back({what, fmt("%.3g", ratio) + unit + "  " + detail,
                   std::string(larger_is_better ? ">= " : "<= ") + fmt("%.3g", goal) + unit, met ? "met" : "NOT met"});
}

// ------------------------------------------------------------------ (a)
void efficiency(const std::string& label, const std::string& path, long long pilot_runs, int threads) {
  std::cout << "\n(a) efficiency on " << label << "  [load " << load_text() << "]\n";
  const app::LoadedCase loaded = app::load_case(path);
  const auto& cl = *loaded.closed_loop;
  const int n_times = static_cast<int>(cl.report_times().size()), n_out = cl.output_count();

  double w0 = wall_now();
  expansion::SurrogateSummary summary;
  const expansion::Surrogate s = build(loaded, threads, summary);
  const double build_wall = wall_now() - w0;

  // Keep-out path probability: pilot of 1e5 samples, then as many as 10 % needs.
  const std::size_t keep_out = 0;  // first constraint of both cases
  const constraints::ViolationResults pilot = sample_surrogate(loaded, s, 100000, threads);
  const double p_pilot = pilot.constraints[keep_out].path_probability;
  if (!(p_pilot > 0.0)) {
    std::cout << "  keep-out path probability is 0 in 1e5 surrogate samples: relative precision undefined\n";
    return;
  }
  const auto runs_for_p = [](double p) {
    return std::ceil(kZ95 * kZ95 * (1.0 - p) / (p * kProbabilityRelativeHalfWidth * kProbabilityRelativeHalfWidth));
  };
  const long long n_samples = std::max<long long>(100000, static_cast<long long>(runs_for_p(p_pilot)));
  w0 = wall_now();
  const constraints::ViolationResults sampled = sample_surrogate(loaded, s, n_samples, threads);
  const double sample_wall = wall_now() - w0;
  const double p_s = sampled.constraints[keep_out].path_probability;

  // Final position: std from the coefficients (no sampling error), kurtosis from samples.
  const Eigen::MatrixXd sd = s.std();
  const int last = n_times - 1;
  const Eigen::MatrixXd points = germ_points(loaded, 0, 200000);
  Eigen::MatrixXd values;
  std::vector<int> final_columns{last * n_out + 0, last * n_out + 1, last * n_out + 2};
  s.evaluate(points, values, final_columns);
  double n_std = 0.0;
  std::array<double, 3> kurtosis{};
  for (int k = 0; k < 3; ++k) {
    const Eigen::VectorXd v = values.col(k).array() - values.col(k).mean();
    const double m2 = v.array().square().mean(), m4 = v.array().square().square().mean();
    kurtosis[static_cast<std::size_t>(k)] = m2 > 0 ? m4 / (m2 * m2) : 3.0;
    // A component that does not vary (std below a nanometre) has no relative precision to reach.
    if (!(sd(last, k) > kNegligibleStdInMetres)) continue;
    n_std = std::max(n_std, std::ceil(kZ95 * kZ95 * (kurtosis[static_cast<std::size_t>(k)] - 1.0) /
                                      (4.0 * kStdRelativeHalfWidth * kStdRelativeHalfWidth)));
  }
  const double n_p = runs_for_p(p_s);
  const double n_mc = std::max(n_p, n_std);

  // Monte Carlo pilot: its rate gives the wall time, its values check the surrogate.
  w0 = wall_now();
  const montecarlo::MonteCarloResult mc = monte_carlo(loaded, pilot_runs, threads);
  const double mc_wall = wall_now() - w0;
  const double mc_rate = static_cast<double>(mc.successful_runs) / mc_wall;
  const double mc_total_wall = n_mc / mc_rate;
  const double surrogate_wall = build_wall + sample_wall;

  std::cout << "  surrogate: " << summary.model_runs << " model runs (" << summary.method << ", level "
            << summary.level_reached << ", P = " << s.basis_size() << "), build " << fmt("%.3g", build_wall)
            << " s; " << n_samples << " samples in " << fmt("%.3g", sample_wall) << " s\n";
  std::cout << "  keep-out path probability: surrogate " << fmt("%.4g", p_s) << "; Monte Carlo pilot "
            << fmt("%.4g", mc.constraints[keep_out].path_probability) << " [" << fmt("%.4g", mc.constraints[keep_out].path_interval.lower)
            << ", " << fmt("%.4g", mc.constraints[keep_out].path_interval.upper) << "] from " << mc.successful_runs
            << " runs -> surrogate " << (p_s >= mc.constraints[keep_out].path_interval.lower && p_s <= mc.constraints[keep_out].path_interval.upper ? "inside" : "OUTSIDE")
            << " the 95 % interval\n";
  for (int k = 0; k < 3; ++k) {
    const double s_sur = sd(last, k), s_mc = mc.std(last, k), se = mc.std_standard_error(last, k);
    std::cout << "  final " << cl.output_names()[static_cast<std::size_t>(k)] << " std: surrogate " << fmt("%.5g", s_sur)
              << ", Monte Carlo pilot " << fmt("%.5g", s_mc) << " +/- " << fmt("%.2g", kZ95 * se) << " (relative difference "
              << fmt("%.2g", std::abs(s_sur - s_mc) / s_mc) << "), kurtosis " << fmt("%.3g", kurtosis[static_cast<std::size_t>(k)]) << "\n";
  }
  std::cout << "  Monte Carlo needs " << fmt("%.0f", n_p) << " runs for p and " << fmt("%.0f", n_std)
            << " for the std; rate " << fmt("%.4g", mc_rate) << " runs/s on " << threads << " threads -> "
            << fmt("%.4g", mc_total_wall) << " s\n";
  add_row("(a) model runs, " + label, n_mc / summary.model_runs,
          fmt("%.0f", n_mc) + " MC runs / " + std::to_string(summary.model_runs) + " surrogate runs", 300.0, true);
  add_row("(a) wall time, " + label, mc_total_wall / surrogate_wall,
          fmt("%.3g", mc_total_wall) + " s MC (extrapolated) / " + fmt("%.3g", surrogate_wall) + " s surrogate", 1.0, true);
}

// ------------------------------------------------------------------ (b), (c)
void throughput(long long runs) {
  std::cout << "\n(b) Monte Carlo throughput, HCW tracking case  [load " << load_text() << "]\n";
  const app::LoadedCase loaded = app::load_case(kTrackingCase);
  const auto& cl = *loaded.closed_loop;

  double c0 = process_cpu(), w0 = wall_now();
  const montecarlo::MonteCarloResult mc1 = monte_carlo(loaded, runs, 1);
  const double cpu1 = process_cpu() - c0, wall1 = wall_now() - w0;
  const double cpp_rate = static_cast<double>(mc1.successful_runs) / cpu1;

  // What the NumPy script times: the closed-loop runs alone (germ points drawn
  // and outputs stored, no statistics), on one thread, in waves of 4096 runs
  // into one reused buffer as the pipeline does (one 100 000-run block would
  // measure the memory bus writing 650 MB of outputs, not the model).
  double propagation_rate = 0.0;
  {
    constexpr long long kWave = 4096;
    const int d = loaded.germ->dimension();
    const app::ModelRunner runner(loaded);
    Eigen::MatrixXd xi(kWave, d);
    std::vector<double> outputs(static_cast<std::size_t>(kWave) * cl.report_times().size() * cl.output_count(), 0.0);
    std::vector<std::uint8_t> ok(static_cast<std::size_t>(kWave), 0);
    std::vector<double> point(static_cast<std::size_t>(d));
    long long succeeded = 0;
    c0 = process_cpu();
    for (long long begin = 0; begin < runs; begin += kWave) {
      const long long n = std::min(kWave, runs - begin);
      xi.conservativeResize(n, d);
      for (long long r = 0; r < n; ++r) {
        montecarlo::germ_point(loaded.germ->specs(), loaded.options.montecarlo.seed, begin + r, point.data());
        for (int j = 0; j < d; ++j) xi(r, j) = point[static_cast<std::size_t>(j)];
      }
      runner.run(xi, begin, 1, app::ModelRunner::kDefaultBlock, outputs.data(), ok.data(), false);
      for (long long r = 0; r < n; ++r) succeeded += ok[static_cast<std::size_t>(r)];
    }
    const double cpu_p = process_cpu() - c0;
    propagation_rate = static_cast<double>(succeeded) / cpu_p;
    std::cout << "  C++ model runs alone, 1 thread: " << succeeded << " runs, " << fmt("%.3g", cpu_p) << " CPU-s -> "
              << fmt("%.4g", propagation_rate) << " runs/CPU-s (lane kernels: " << model::BatchPropagator::instruction_set()
              << ")\n";
  }

  // The NumPy side flies the same constant gain.
  const Eigen::MatrixXd K = cl.controller().gain(cl.report_times().front());
  std::ostringstream gain;
  for (int i = 0; i < K.rows(); ++i)
    for (int j = 0; j < K.cols(); ++j) gain << (i || j ? "," : "") << fmt("%.17g", K(i, j));
  const std::string command = std::string("OMP_NUM_THREADS=1 OPENBLAS_NUM_THREADS=1 ") + SIGMATUBE_PYTHON + " " + kSource +
                              "/bench/numpy_baseline.py --plan " + kSource + "/bench/cases/hcw-tracking/plan.csv --gain " +
                              gain.str() + " --mean-motion " + fmt("%.17g", cl.model().parameters()[0]) +
                              " --runs " + std::to_string(runs) + " --step " +
                              fmt("%.17g", loaded.options.simulation.step_in_seconds) + " --report-every " +
                              fmt("%.17g", loaded.options.simulation.report_every_in_seconds);
  std::map<std::string, std::string> py;
  if (FILE* pipe = popen(command.c_str(), "r")) {
    char line[4096];
    while (std::fgets(line, sizeof line, pipe)) {
      std::istringstream in(line);
      std::string key, value;
      in >> key >> value;
      py[key] = value;
    }
    pclose(pipe);
  }
  if (!py.count("runs_per_cpu_second")) {
    std::cout << "  NumPy baseline failed to run: " << command << "\n";
  } else {
    const double numpy_rate = std::stod(py["runs_per_cpu_second"]);
    // Same closed loop: the nominal final states must agree to rounding.
    Eigen::MatrixXd nominal(static_cast<Eigen::Index>(cl.report_times().size()), cl.output_count());
    cl.run(cl.nominal(), nominal);
    std::istringstream in(py["nominal_final"]);
    double worst = 0.0;
    std::string item;
    for (int i = 0; std::getline(in, item, ','); ++i)
      worst = std::max(worst, std::abs(std::stod(item) - nominal(nominal.rows() - 1, i)));
    std::cout << "  C++ 1 thread: " << mc1.successful_runs << " runs, " << fmt("%.3g", cpu1) << " CPU-s ("
              << fmt("%.3g", wall1) << " s wall) -> " << fmt("%.4g", cpp_rate) << " runs/CPU-s\n";
    std::cout << "  NumPy: " << py["runs"] << " runs, " << fmt("%.3g", std::stod(py["cpu_seconds"])) << " CPU-s -> "
              << fmt("%.4g", numpy_rate) << " runs/CPU-s; nominal final state differs from C++ by at most "
              << fmt("%.2g", worst) << "\n";
    add_row("(b) model runs per core vs NumPy", propagation_rate / numpy_rate,
            fmt("%.4g", propagation_rate) + " / " + fmt("%.4g", numpy_rate) + " runs/CPU-s (both: runs alone)", 10.0, true);
    add_row("(b) whole MC stage per core vs NumPy", cpp_rate / numpy_rate,
            fmt("%.4g", cpp_rate) + " / " + fmt("%.4g", numpy_rate) + " runs/CPU-s (C++ incl. statistics)", 10.0, true);
  }

  std::cout << "\n(f) expression model vs the same built-in, Monte Carlo on one thread  [load " << load_text() << "]\n";
  {
    const app::LoadedCase expression = app::load_case(kSource + "/bench/cases/hcw-tracking-expression/case.toml");
    c0 = process_cpu();
    const montecarlo::MonteCarloResult mce = monte_carlo(expression, runs, 1);
    const double cpu_e = process_cpu() - c0;
    const double rate_e = static_cast<double>(mce.successful_runs) / cpu_e;
    // Same model, so the same statistics up to rounding (a check on the lane programs).
    const double difference = (mce.mean - mc1.mean).cwiseAbs().maxCoeff();
    std::cout << "  expression twin: " << fmt("%.4g", rate_e) << " runs/CPU-s vs built-in " << fmt("%.4g", cpp_rate)
              << "; largest difference of the Monte Carlo means " << fmt("%.2g", difference) << "\n";
    add_row("(f) expression / built-in run time", cpp_rate / rate_e,
            fmt("%.4g", cpp_rate) + " / " + fmt("%.4g", rate_e) + " runs/CPU-s", 1.3, false);
  }

  const long long scaling_runs = runs;
  std::cout << "\n(c) thread scaling, HCW tracking case  [load " << load_text() << "]\n";
  w0 = wall_now();
  (void)monte_carlo(loaded, scaling_runs, 1);
  const double t1 = wall_now() - w0;
  w0 = wall_now();
  (void)monte_carlo(loaded, scaling_runs, 2);
  const double t2 = wall_now() - w0;
  std::cout << "  " << scaling_runs << " runs: " << fmt("%.3g", t1) << " s on 1 thread, " << fmt("%.3g", t2)
            << " s on 2 threads (wall; other processes share these cores)\n";
  add_row("(c) 1 -> 2 threads, Monte Carlo", t1 / t2, fmt("%.3g", t1) + " s / " + fmt("%.3g", t2) + " s", 1.8, true);

  std::cout << "\n(c) thread scaling, surrogate sampling of the demo  [load " << load_text() << "]\n";
  {
    const app::LoadedCase demo = app::load_case(kDemoCase);
    expansion::SurrogateSummary summary;
    const expansion::Surrogate s = build(demo, 2, summary);
    const long long n = 8 * 65536;
    w0 = wall_now();
    const auto r1 = sample_surrogate(demo, s, n, 1);
    const double s1 = wall_now() - w0;
    w0 = wall_now();
    const auto r2 = sample_surrogate(demo, s, n, 2);
    const double s2 = wall_now() - w0;
    std::cout << "  " << n << " samples: " << fmt("%.3g", s1) << " s on 1 thread, " << fmt("%.3g", s2)
              << " s on 2 threads (wall); same path probability " << (r1.constraints[0].path_probability == r2.constraints[0].path_probability ? "yes" : "NO") << "\n";
    add_row("(c) 1 -> 2 threads, surrogate sampling", s1 / s2, fmt("%.3g", s1) + " s / " + fmt("%.3g", s2) + " s", 1.8, true);
  }
}

// ------------------------------------------------------------------ (g)
// Wall time of a whole default analysis (surrogate, sampling, Monte Carlo
// cross-check as the case asks) with "precision" sampling against "fixed".
void default_run(const std::string& label, const std::string& path) {
  std::cout << "\n(g) default run, " << label << ", 2 threads  [load " << load_text() << "]\n";
  // 0: fixed (the former default), 1: precision with the default target,
  // 2: precision with the target set to the fixed run's standard errors.
  double wall[3] = {0, 0, 0}, cpu[3] = {0, 0, 0};
  result::AnalysisResult results[3];
  double relative = 1.0, absolute = 1.0;
  for (int k = 0; k < 3; ++k) {
    app::LoadedCase loaded = app::load_case(path);
    loaded.options.surrogate.sampling = k == 0 ? casefile::SurrogateSampling::fixed : casefile::SurrogateSampling::precision;
    if (k == 2) {
      loaded.options.surrogate.sampling_relative_error = relative;
      loaded.options.surrogate.sampling_absolute_error = absolute;
    }
    app::AnalysisOptions options;
    options.threads = 2;
    options.progress = false;
    const double w0 = wall_now(), c0 = process_cpu();
    results[k] = app::analyze_case(loaded, options);
    wall[k] = wall_now() - w0;
    cpu[k] = process_cpu() - c0;
    std::cout << "  " << (k == 0 ? "fixed           " : k == 1 ? "precision       " : "precision, equal") << ": "
              << fmt("%.3g", wall[k]) << " s wall, " << fmt("%.3g", cpu[k]) << " CPU-s, " << results[k].surrogate.samples
              << " samples";
    for (const auto& c : results[k].constraints) {
      std::cout << "; " << c.name << " path p " << fmt("%.4g", c.path_probability) << " s.e. " << fmt("%.3g", c.path_standard_error);
      if (k == 0 && c.path_probability > 0) {
        relative = std::min(relative, c.path_standard_error / c.path_probability);
        absolute = std::min(absolute, c.path_standard_error / c.max_probability);
      }
    }
    std::cout << "\n";
  }
  add_row("(g) default run fixed / precision, " + label, cpu[0] / cpu[1],
          fmt("%.3g", cpu[0]) + " / " + fmt("%.3g", cpu[1]) + " CPU-s", 3.0, true);
  add_row("(g) same at equal s.e., " + label, cpu[0] / cpu[2],
          fmt("%.3g", cpu[0]) + " / " + fmt("%.3g", cpu[2]) + " CPU-s", 3.0, true);
}

// ------------------------------------------------------------------ (h)
// dopri5 model runs of the bundled demo, one thread: one at a time through
// ClosedLoop::run (what the pipeline does) against lanes with per-lane step
// control (model/lane_dopri5.h) in blocks of 64 and 16; the same bits.
void dopri5_lanes_rate(long long runs) {
  std::cout << "\n(h) dopri5 model runs, bundled demo, 1 thread  [load " << load_text() << "]\n";
  const app::LoadedCase loaded = app::load_case(kSource + "/cases/inspection-approach/case.toml");
  const auto& cl = *loaded.closed_loop;
  const app::ModelRunner runner(loaded);
  const int d = loaded.germ->dimension();
  Eigen::MatrixXd xi(runs, d);
  std::vector<double> point(static_cast<std::size_t>(d));
  for (long long r = 0; r < runs; ++r) {
    montecarlo::germ_point(loaded.germ->specs(), loaded.options.montecarlo.seed, r, point.data());
    for (int j = 0; j < d; ++j) xi(r, j) = point[static_cast<std::size_t>(j)];
  }
  const std::size_t width = cl.report_times().size() * static_cast<std::size_t>(cl.output_count());
  std::vector<double> scalar(width * static_cast<std::size_t>(runs)), lanes(scalar.size());
  std::vector<std::uint8_t> ok(static_cast<std::size_t>(runs));
  double c0 = thread_cpu();
  for (long long r = 0; r < runs; ++r) {
    const Eigen::RowVectorXd x = xi.row(r);
    runner.run_one(x.data(), r, scalar.data() + static_cast<std::size_t>(r) * width);
  }
  const double cpu_scalar = thread_cpu() - c0;
  double cpu_lanes[2] = {0, 0};
  const std::size_t blocks[2] = {app::ModelRunner::kDefaultBlock, 16};
  bool same = true;
  const model::BatchPropagator batch(cl, loaded.options);
  std::vector<model::Perturbation> perturbations(static_cast<std::size_t>(runs), cl.nominal());
  for (long long r = 0; r < runs; ++r) {
    const Eigen::RowVectorXd x = xi.row(r);
    loaded.germ->apply(x.data(), perturbations[static_cast<std::size_t>(r)]);
  }
  for (int b = 0; b < 2; ++b) {
    c0 = thread_cpu();
    for (long long first = 0; first < runs; first += static_cast<long long>(blocks[b])) {
      const int count = static_cast<int>(std::min<long long>(static_cast<long long>(blocks[b]), runs - first));
      batch.run(perturbations.data() + first, count, lanes.data() + static_cast<std::size_t>(first) * width, width,
                ok.data() + first);
    }
    cpu_lanes[b] = thread_cpu() - c0;
    same = same && std::equal(scalar.begin(), scalar.end(), lanes.begin(),
                              [](double a, double c) { return std::memcmp(&a, &c, sizeof a) == 0; });
  }
  const double rate_scalar = static_cast<double>(runs) / cpu_scalar;
  std::cout << "  one at a time: " << runs << " runs, " << fmt("%.3g", cpu_scalar) << " CPU-s -> "
            << fmt("%.4g", rate_scalar) << " runs/CPU-s\n";
  for (int b = 0; b < 2; ++b)
    std::cout << "  lanes, blocks of " << blocks[b] << ": " << fmt("%.3g", cpu_lanes[b]) << " CPU-s -> "
              << fmt("%.4g", static_cast<double>(runs) / cpu_lanes[b]) << " runs/CPU-s\n";
  std::cout << "  same bits as one at a time: " << (same ? "yes" : "NO") << "\n";
  add_row("(h) dopri5 lanes / one at a time", cpu_scalar / cpu_lanes[0],
          fmt("%.3g", cpu_scalar) + " / " + fmt("%.3g", cpu_lanes[0]) + " CPU-s", 1.0, true);
}

// ------------------------------------------------------------------ (d)
// Repeats `step` until it has used at least two CPU-seconds of this thread; the
// number of calls per CPU-second.
template <class Step>
double calls_per_cpu_second(Step&& step) {
  step();  // warm-up
  int reps = 0;
  const double c0 = thread_cpu();
  double elapsed = 0.0;
  do {
    step();
    ++reps;
    elapsed = thread_cpu() - c0;
  } while (elapsed < 2.0);
  return reps / elapsed;
}

// The AVX2/FMA GEMM reference (bench/avx2_gemm_reference.cpp) on [m, k]·[k, n],
// FLOP/s; 0 where the CPU lacks AVX2 or FMA or the program fails.
double avx2_fma_gemm_rate(Eigen::Index m, Eigen::Index k, Eigen::Index n) {
  __builtin_cpu_init();
  if (!__builtin_cpu_supports("avx2") || !__builtin_cpu_supports("fma")) return 0.0;
  const std::string command = std::string(SIGMATUBE_AVX2_GEMM) + " " + std::to_string(m) + " " + std::to_string(k) +
                              " " + std::to_string(n);
  double rate = 0.0;
  if (FILE* pipe = popen(command.c_str(), "r")) {
    char line[256];
    if (std::fgets(line, sizeof line, pipe)) rate = std::atof(line);
    pclose(pipe);
  }
  return rate;
}

void sampling_rate() {
  std::cout << "\n(d) surrogate sampling vs matrix multiply, one thread  [load " << load_text() << "]\n";
  const app::LoadedCase loaded = app::load_case(kDemoCase);
  expansion::SurrogateSummary summary;
  const expansion::Surrogate s = build(loaded, 2, summary);
  const Eigen::Index N = 20000, P = s.basis_size(), J = s.coefficients.cols();
  const Eigen::MatrixXd points = germ_points(loaded, 0, N);
  const double flops = 2.0 * static_cast<double>(N) * static_cast<double>(P) * static_cast<double>(J);
  Eigen::MatrixXd values;
  const auto surrogate_rate = [&] { return flops * calls_per_cpu_second([&] { s.evaluate(points, values); }); };
  // The product alone, as Surrogate::evaluate runs it (blocks of 4096 rows).
  const Eigen::MatrixXd psi = s.basis_matrix(points.topRows(4096));
  const expansion::PackedColumns packed(s.coefficients);
  Eigen::MatrixXd y(psi.rows(), J);
  const double product_flops = 2.0 * static_cast<double>(psi.rows()) * static_cast<double>(P) * static_cast<double>(J);
  const auto product_rate = [&] {
    return product_flops * calls_per_cpu_second([&] { expansion::basis_product(psi, packed, y); });
  };
  const Eigen::Index n = 512;
  const Eigen::MatrixXd A = Eigen::MatrixXd::Random(n, n), B = Eigen::MatrixXd::Random(n, n);
  const expansion::PackedColumns packed_b(B);
  Eigen::MatrixXd C(n, n);
  const double cube = 2.0 * std::pow(static_cast<double>(n), 3);
  const auto kernel_cube_rate = [&] { return cube * calls_per_cpu_second([&] { expansion::basis_product(A, packed_b, C); }); };

  std::cout << "  demo surrogate: N = " << N << " points, P = " << P << ", " << J << " columns; basis product kernel "
            << expansion::product_target_name() << " (GFLOP/s, 2·N·P·columns per evaluation)\n";
  const double rate = surrogate_rate(), rate_product = product_rate(), rate_cube = kernel_cube_rate();
  std::cout << "  " << expansion::product_target_name() << ": evaluation " << fmt("%.3g", rate / 1e9)
            << " (" << fmt("%.3g", rate / flops * static_cast<double>(N) / 1e6) << " M samples/s), product alone "
            << fmt("%.3g", rate_product / 1e9) << ", kernel " << n << "^3 " << fmt("%.3g", rate_cube / 1e9) << "\n";
  double rate_avx2 = 0.0;
  for (const auto target : {expansion::ProductTarget::avx2, expansion::ProductTarget::baseline}) {
    expansion::set_product_target(target);
    const char* name = expansion::product_target_name();
    const double r = surrogate_rate(), rp = product_rate(), rc = kernel_cube_rate();
    if (target == expansion::ProductTarget::avx2) rate_avx2 = r;
    std::cout << "  " << name << " (forced): evaluation " << fmt("%.3g", r / 1e9) << ", product alone "
              << fmt("%.3g", rp / 1e9) << ", kernel " << n << "^3 " << fmt("%.3g", rc / 1e9) << "\n";
  }
  expansion::set_product_target(expansion::ProductTarget::automatic);

  const double gemm_rate = cube * calls_per_cpu_second([&] { C.noalias() = A * B; });
  std::cout << "  Eigen " << n << "^3 GEMM, this build (x86-64 baseline): " << fmt("%.3g", gemm_rate / 1e9) << " GFLOP/s\n";
  add_row("(d) sampling rate / Eigen GEMM rate (this build)", 100.0 * rate / gemm_rate, "", 50.0, true, " %");
  // The machine's rate with AVX2 enabled: Eigen built with -mavx2 -mfma.
  const double avx2_cube = avx2_fma_gemm_rate(n, n, n), avx2_shape = avx2_fma_gemm_rate(N, P, J);
  if (avx2_cube > 0.0) {
    std::cout << "  Eigen GEMM built with -mavx2 -mfma: " << n << "^3 " << fmt("%.3g", avx2_cube / 1e9) << " GFLOP/s, "
              << N << "x" << P << "x" << J << " " << fmt("%.3g", avx2_shape / 1e9) << " GFLOP/s\n";
    add_row("(d) sampling rate / AVX2+FMA GEMM rate (512^3)", 100.0 * rate / avx2_cube,
            fmt("%.3g", rate / 1e9) + " / " + fmt("%.3g", avx2_cube / 1e9) + " GFLOP/s", 50.0, true, " %");
    add_row("(d) sampling rate, AVX2 kernel / AVX2+FMA GEMM rate (512^3)", 100.0 * rate_avx2 / avx2_cube,
            fmt("%.3g", rate_avx2 / 1e9) + " / " + fmt("%.3g", avx2_cube / 1e9) + " GFLOP/s", 50.0, true, " %");
  }
}

// ------------------------------------------------------------------ (e)
int memory_child(long long samples) {
  app::LoadedCase loaded = app::load_case(kTrackingCase);
  loaded.options.surrogate.sampling = casefile::SurrogateSampling::fixed;  // exactly `samples` samples
  app::AnalysisOptions options;
  options.threads = 2;
  options.mc_runs = 0;
  options.samples = samples;
  options.progress = false;
  const double w0 = wall_now();
  const result::AnalysisResult r = app::analyze_case(loaded, options);
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  std::printf("rss_kib %ld\nseconds %.6g\npath_probability %.9g\n", usage.ru_maxrss, wall_now() - w0,
              r.constraints.front().path_probability);
  return 0;
}

void memory(const char* self, long long samples) {
  std::cout << "\n(e) peak memory, path probability from " << samples << " surrogate samples (HCW tracking case)  [load "
            << load_text() << "]\n";
  const std::string command = std::string(self) + " --memory-child " + std::to_string(samples);
  std::map<std::string, std::string> out;
  if (FILE* pipe = popen(command.c_str(), "r")) {
    char line[512];
    while (std::fgets(line, sizeof line, pipe)) {
      std::istringstream in(line);
      std::string key, value;
      in >> key >> value;
      out[key] = value;
    }
    pclose(pipe);
  }
  if (!out.count("rss_kib")) {
    std::cout << "  the measuring process failed\n";
    return;
  }
  const double mib = std::stod(out["rss_kib"]) / 1024.0;
  std::cout << "  peak RSS " << fmt("%.1f", mib) << " MiB, " << out["seconds"] << " s, path probability "
            << out["path_probability"] << "\n";
  add_row("(e) peak memory, 1e7 samples", mib, "", 1024.0, false, " MiB");
}

}  // namespace

int main(int argc, char** argv) {
  bool quick = false;
  std::vector<std::string> parts;
  for (int i = 1; i < argc; ++i) {
    const std::string arg = argv[i];
    if (arg == "--memory-child" && i + 1 < argc) return memory_child(std::atoll(argv[i + 1]));
    if (arg == "--quick") quick = true;
    if (arg == "--part" && i + 1 < argc) parts.push_back(argv[++i]);
  }
  // --part NAME (repeatable) runs only the named parts: memory, efficiency,
  // throughput, sampling, dopri5, default.
  auto part = [&](const char* name) { return parts.empty() || std::find(parts.begin(), parts.end(), name) != parts.end(); };
  std::cout << "sigmatube benchmark suite (" << (quick ? "quick" : "full") << "); machine: " << sysconf(_SC_NPROCESSORS_ONLN)
            << " cores online; lane kernels: " << model::BatchPropagator::instruction_set() << "; load " << load_text() << "\n";
  try {
    if (part("memory")) memory(argv[0], quick ? 1000000 : 10000000);
    if (part("efficiency")) {
      efficiency("demo (keep-out widened)", kDemoCase, quick ? 200 : 1000, 2);
      efficiency("HCW tracking", kTrackingCase, quick ? 500 : 4000, 2);
    }
    if (part("throughput")) throughput(quick ? 5000 : 100000);
    if (part("sampling")) sampling_rate();
    if (part("dopri5")) dopri5_lanes_rate(quick ? 256 : 2048);
    if (part("default")) {
      default_run("demo (keep-out widened)", kDemoCase);
      default_run("bundled demo", kSource + "/cases/inspection-approach/case.toml");
      default_run("HCW tracking", kTrackingCase);
    }
  } catch (const std::exception& e) {
    std::cerr << "benchmark failed: " << e.what() << "\n";
    return 1;
  }
  std::cout << "\nSummary (load " << load_text() << ")\n";
  std::printf("  %-36s %-62s %-12s %s\n", "ratio", "measured", "goal", "");
  for (const auto& row : table)
    std::printf("  %-36s %-62s %-12s %s\n", row.what.c_str(), row.measured.c_str(), row.goal.c_str(), row.verdict.c_str());
  return 0;
}
