// SPDX-License-Identifier: MIT
#include "sigmatube/app/analysis.h"

#include <ctime>
#include <memory>
#include <string>
#include <vector>

#include "sigmatube/app/breakdown_stages.h"
#include "sigmatube/app/model_runs.h"
#include "sigmatube/app/progress.h"
#include "sigmatube/constraints/assessment.h"
#include "sigmatube/constraints/surrogate_sampling.h"
#include "sigmatube/core/error.h"
#include "sigmatube/core/parallel.h"
#include "sigmatube/expansion/surrogate.h"
#include "sigmatube/montecarlo/cross_check.h"
#include "sigmatube/montecarlo/rare_events.h"
#include "sigmatube/result/stage_results.h"

namespace sigmatube::app {
namespace {

std::string utc_now() {
  const std::time_t now = std::time(nullptr);
  std::tm tm{};
  gmtime_r(&now, &tm);
  char buffer[32];
  std::strftime(buffer, sizeof buffer, "%Y-%m-%dT%H:%M:%SZ", &tm);
  return buffer;
}

result::AnalysisResult base_result(const LoadedCase& loaded, const char* command) {
  result::AnalysisResult r;
  r.tool_version = SIGMATUBE_VERSION;
  r.case_sha256 = loaded.case_sha256;
  r.inputs_sha256 = loaded.inputs_sha256;
  r.created_utc = utc_now();
  r.seed = loaded.options.montecarlo.seed;
  r.title = loaded.options.title;
  r.case_path = loaded.options.path;
  r.command = command;
  r.time = loaded.closed_loop->report_times();
  r.output_names = loaded.closed_loop->output_names();
  r.output_units = loaded.closed_loop->output_units();
  const auto& cl = *loaded.closed_loop;
  r.nominal_outputs.resize(static_cast<Eigen::Index>(r.time.size()), cl.output_count());
  cl.run(cl.nominal(), r.nominal_outputs, -1);
  // The deterministic tube needs no sampling: with the nominal run (app/breakdown_stages.h).
  tube_stage(loaded, r);
  return r;
}

// Design runs go in smaller blocks than Monte Carlo waves (ModelRunner's
// default), so that a few hundred of them still balance over threads.
constexpr std::size_t kDesignRunsPerBlock = 16;

/// The surrogate's design runs: every call spread over ranks and threads (every
/// rank ends up with every row of `width` = T·n_out outputs), numbered on from
/// the previous call, with a bar.
expansion::ModelEvaluator design_runs(const ModelRunner& runner, Eigen::Index width, int threads, bool progress) {
  auto done = std::make_shared<long long>(0);
  return [&runner, width, threads, progress, done](const Eigen::MatrixXd& points, Eigen::MatrixXd& values) {
    values.resize(points.rows(), width);
    ProgressBar bar("surrogate design runs", static_cast<std::size_t>(points.rows()), progress);
    std::vector<double> rows(static_cast<std::size_t>(points.rows()) * static_cast<std::size_t>(width));
    std::vector<std::uint8_t> ok(static_cast<std::size_t>(points.rows()));
    runner.run(points, *done, threads, kDesignRunsPerBlock, rows.data(), ok.data(), true);
    for (Eigen::Index i = 0; i < points.rows(); ++i)
      values.row(i) = Eigen::Map<const Eigen::RowVectorXd>(rows.data() + i * width, width);
    bar.update(static_cast<std::size_t>(points.rows()));
    bar.finish();
    *done += points.rows();
  };
}

/// Each wave of Monte Carlo runs goes over ranks and threads; the accumulators
/// then see the same rows in the same order on every rank.
montecarlo::MonteCarloRunOptions montecarlo_run_options(const LoadedCase& loaded, const ModelRunner& runner,
                                                        const std::vector<std::string>& output_names, int threads) {
  montecarlo::MonteCarloRunOptions run_options;
  run_options.threads = threads;
  run_options.saturation = montecarlo::saturation_limits(loaded.options.control.limits, output_names);
  run_options.run_rows = [&runner, threads](long long begin, long long, const Eigen::MatrixXd& xi, double* outputs,
                                            std::uint8_t* ok) {
    runner.run(xi, begin, threads, ModelRunner::kDefaultBlock, outputs, ok, false);
  };
  return run_options;
}

}  // namespace

result::AnalysisResult simulate_case(const LoadedCase& loaded) { return base_result(loaded, "simulate"); }

result::AnalysisResult analyze_case(const LoadedCase& loaded, const AnalysisOptions& options) {
  // Options: the case file's, overridden from the command line.
  casefile::MonteCarloOptions mc_options = loaded.options.montecarlo;
  if (options.seed) mc_options.seed = *options.seed;
  if (options.mc_runs) mc_options.runs = *options.mc_runs;
  const germ::Germ& germ = *loaded.germ;
  const auto& constraint_list = loaded.constraints;
  const int d = germ.dimension();
  const int threads = resolve_thread_count(options.threads);
  const long long samples = d == 0 ? 1 : options.samples.value_or(loaded.options.surrogate.samples);

  result::AnalysisResult r = base_result(loaded, "run");
  r.seed = mc_options.seed;
  const Eigen::VectorXd times = Eigen::Map<const Eigen::VectorXd>(r.time.data(), static_cast<Eigen::Index>(r.time.size()));
  const int n_out = loaded.closed_loop->output_count();
  const ModelRunner runner(loaded);

  // 1. Surrogate from one set of design runs (expansion/surrogate.h).
  const expansion::SurrogateStage surrogate = expansion::surrogate_stage(
      germ.specs(), r.nominal_outputs, loaded.options.surrogate, design_runs(runner, r.nominal_outputs.size(), threads, options.progress));
  result::add_surrogate(r, surrogate, germ, samples);

  // 2. Surrogate sampling: violation statistics of every constraint (constraints/surrogate_sampling.h).
  ProgressBar sampling_bar("surrogate sampling", static_cast<std::size_t>(samples),
                           options.progress && d > 0 && !constraint_list.empty());
  const constraints::SurrogateSampling sampling = constraints::sample_surrogate_to_target(
      constraint_list, surrogate.surrogate, germ, times, loaded.options.surrogate, samples, mc_options.seed, threads,
      [&](long long done) { sampling_bar.update(static_cast<std::size_t>(std::min(done, samples))); });
  sampling_bar.finish();
  const constraints::ViolationResults& sampled = sampling.results;
  if (!constraint_list.empty()) {
    r.surrogate.samples = sampling.samples;
    r.surrogate.sampling = sampling.precision ? "precision" : "fixed";
    r.surrogate.sampling_target_met = sampling.target_met;
  }

  // 3. Constraint statistics, reformulations and margins (constraints/assessment.h).
  result::add_constraints(r, constraint_list, sampled, constraints::assess_constraints(constraint_list, sampled, times));

  // 3b. Quantile tubes and variance shares per uncertain input, on the same
  // sampling stream (app/breakdown_stages.h).
  quantile_stage(loaded, surrogate.surrogate, mc_options.seed ^ constraints::kSurrogateStream, samples, threads, r);
  input_share_stage(loaded, surrogate.surrogate, surrogate.summary, mc_options.seed ^ constraints::kSurrogateStream,
                    samples, mc_options.confidence, threads, r);

  if (mc_options.runs > 0 && d > 0) {
    const montecarlo::RunSample run_sample = runner.run_sample();

    // 4. Monte Carlo cross-check with the full model (montecarlo/cross_check.h).
    // Every full-model run is also compared with the deterministic tube.
    TubeCheck tube_check(r);
    montecarlo::MonteCarloRunOptions run_options = montecarlo_run_options(loaded, runner, r.output_names, threads);
    run_options.run_rows = [&tube_check, run_rows = run_options.run_rows](long long begin, long long end,
                                                                          const Eigen::MatrixXd& xi, double* outputs,
                                                                          std::uint8_t* ok) {
      run_rows(begin, end, xi, outputs, ok);
      tube_check.observe(outputs, xi.rows(), ok);
    };
    ProgressBar bar("Monte Carlo runs", static_cast<std::size_t>(mc_options.runs), options.progress);
    montecarlo::AgreementOptions agreement;
    agreement.false_alarm_level = mc_options.false_alarm_level;
    agreement.relative_tolerance = mc_options.relative_tolerance;
    agreement.output_names = r.output_names;
    const montecarlo::CrossCheck check = montecarlo::cross_check(
        mc_options, germ.specs(), times, n_out, constraint_list, run_sample, run_options, surrogate.surrogate, sampled,
        [&](long long done, long long) { bar.update(static_cast<std::size_t>(done)); }, agreement);
    bar.finish();
    result::add_cross_check(r, check, mc_options.seed);
    r.montecarlo.false_alarm_level = mc_options.false_alarm_level;
    r.montecarlo.relative_tolerance = mc_options.relative_tolerance;
    tube_check.finish(r);

    // 5. Rare events: importance sampling of the full model around the design
    // point for bounds ≤ the threshold (montecarlo/rare_events.h).
    montecarlo::RareEventOptions rare;
    rare.threshold = options.importance_sampling_threshold;
    rare.samples = options.importance_sampling_runs > 0 ? options.importance_sampling_runs : mc_options.rare_event_runs;
    rare.cov_target = mc_options.cov_target;
    rare.skip = result::violation_shown(r);  // a rare-event estimate could only refine, never overrule
    rare.seed = mc_options.seed;
    rare.confidence = loaded.options.montecarlo.confidence;
    rare.threads = threads;
    result::add_rare_events(r, montecarlo::rare_events(germ, surrogate.surrogate, constraint_list, times, rare, run_sample),
                            rare.cov_target);
    // 6. The bound verdicts from all the evidence (montecarlo/verdict.h).
    result::add_verdicts(r, rare.threshold);
  }

  return r;
}

}  // namespace sigmatube::app
