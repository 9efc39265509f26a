// SPDX-License-Identifier: MIT
#include "sigmatube/app/analysis.h"

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cmath>
#include <ctime>
#include <sstream>
#include <vector>

#include "sigmatube/app/model_runs.h"
#include "sigmatube/app/progress.h"
#include "sigmatube/constraints/margins.h"
#include "sigmatube/constraints/reformulations.h"
#include "sigmatube/constraints/violation_statistics.h"
#include "sigmatube/core/counter_rng.h"
#include "sigmatube/core/error.h"
#include "sigmatube/core/parallel.h"
#include "sigmatube/core/scrambled_sobol.h"
#include "sigmatube/expansion/surrogate.h"
#include "sigmatube/montecarlo/agreement.h"
#include "sigmatube/montecarlo/importance_sampling.h"
#include "sigmatube/montecarlo/monte_carlo.h"

namespace sigmatube::app {
namespace {

using casefile::ConstraintKind;

// The surrogate's sampling stream must differ from the Monte Carlo stream of the
// same seed, or the cross-check would reuse the very germ points it checks.
constexpr unsigned long long kSurrogateStream = 0x9E3779B97F4A7C15ULL;
// Surrogate samples per chunk: bounds memory at chunk × (T·n_out) doubles per thread.
constexpr long long kSurrogateChunk = 2048;

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
  r.created_utc = utc_now();
  r.seed = loaded.options.montecarlo.seed;
  r.title = loaded.options.title;
  r.case_path = loaded.options.path;
  r.command = command;
  r.time = loaded.closed_loop->report_times();
  r.output_names = loaded.closed_loop->output_names();
  const auto& cl = *loaded.closed_loop;
  r.nominal_outputs.resize(static_cast<Eigen::Index>(r.time.size()), cl.output_count());
  cl.run(cl.nominal(), r.nominal_outputs, -1);
  return r;
}

Eigen::VectorXd times_vector(const std::vector<double>& t) {
  return Eigen::Map<const Eigen::VectorXd>(t.data(), static_cast<Eigen::Index>(t.size()));
}

/// One full-model run at germ point xi into outputs[t·n_out + o].
void run_at(const LoadedCase& loaded, const double* xi, long long sample, double* outputs) {
  const auto& cl = *loaded.closed_loop;
  model::Perturbation p = cl.nominal();
  loaded.germ->apply(xi, p);
  Eigen::MatrixXd out(static_cast<Eigen::Index>(cl.report_times().size()), cl.output_count());
  cl.run(p, out, sample);
  Eigen::Map<Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>>(outputs, out.rows(), out.cols()) = out;
}

// Design runs go in smaller blocks than Monte Carlo waves (ModelRunner's
// default), so that a few hundred of them still balance over threads.
constexpr std::size_t kDesignRunsPerBlock = 16;

expansion::Surrogate constant_surrogate(const result::AnalysisResult& r) {
  expansion::Surrogate s;
  s.n_times = static_cast<int>(r.time.size());
  s.n_outputs = static_cast<int>(r.output_names.size());
  s.indices.resize(1, 0);
  s.coefficients.resize(1, static_cast<Eigen::Index>(s.n_times) * s.n_outputs);
  for (int t = 0; t < s.n_times; ++t)
    for (int o = 0; o < s.n_outputs; ++o) s.coefficients(0, t * s.n_outputs + o) = r.nominal_outputs(t, o);
  return s;
}

result::Cube to_cube(const Eigen::MatrixXd& flat, int n_times, int n_outputs) {
  // flat: [n_times·n_outputs, k] → n_times slices of [n_outputs, k]
  result::Cube cube;
  for (int t = 0; t < n_times; ++t) cube.push_back(flat.middleRows(static_cast<Eigen::Index>(t) * n_outputs, n_outputs));
  return cube;
}

void fill_geometry(const casefile::ConstraintOptions& o, result::ConstraintResult& c) {
  c.position = o.position;
  if (o.type == ConstraintKind::outside_sphere || o.type == ConstraintKind::outside_ellipsoid) c.center = o.center;
  if (o.type == ConstraintKind::outside_sphere) c.radius = o.radius;
  if (o.type == ConstraintKind::outside_ellipsoid) c.semi_axes = o.semi_axes;
  if (o.type == ConstraintKind::inside_box) {
    c.low = o.low;
    c.high = o.high;
  }
}

std::string reformulation_note(const std::vector<constraints::ReformulationDisagreement>& found) {
  if (found.empty()) return "";
  int gaussian_optimistic = 0, gaussian_pessimistic = 0, cantelli_optimistic = 0;
  for (const auto& d : found) {
    switch (d.kind) {
      case constraints::ReformulationDisagreement::Kind::gaussian_optimistic: ++gaussian_optimistic; break;
      case constraints::ReformulationDisagreement::Kind::gaussian_pessimistic: ++gaussian_pessimistic; break;
      case constraints::ReformulationDisagreement::Kind::cantelli_optimistic: ++cantelli_optimistic; break;
    }
  }
  std::ostringstream out;
  out << found.front().describe();
  if (found.size() > 1) {
    out << " (" << found.size() << " report times in all: ";
    out << gaussian_optimistic << " Gaussian optimistic, " << gaussian_pessimistic << " Gaussian pessimistic, "
        << cantelli_optimistic << " Cantelli optimistic)";
  }
  return out.str();
}

// Columns t·n_out + o of every output the constraints read, at every report time.
std::vector<int> constraint_columns(const std::vector<constraints::Constraint>& list, int n_times, int n_out) {
  std::vector<char> used(static_cast<std::size_t>(n_out), 0);
  for (const auto& c : list)
    for (int o : c.output_indices()) used[static_cast<std::size_t>(o)] = 1;
  std::vector<int> columns;
  for (int t = 0; t < n_times; ++t)
    for (int o = 0; o < n_out; ++o)
      if (used[static_cast<std::size_t>(o)]) columns.push_back(t * n_out + o);
  return columns;
}

// Germ points (rows) for standard-normal points z (rows).
Eigen::MatrixXd germ_points(const germ::Germ& germ, const Eigen::MatrixXd& z) {
  const int d = germ.dimension();
  Eigen::MatrixXd xi(z.rows(), d);
  std::vector<double> zi(static_cast<std::size_t>(d)), x(static_cast<std::size_t>(d));
  for (Eigen::Index i = 0; i < z.rows(); ++i) {
    for (int j = 0; j < d; ++j) zi[static_cast<std::size_t>(j)] = z(i, j);
    if (d > 0) germ.from_standard_normal(zi.data(), x.data());
    for (int j = 0; j < d; ++j) xi(i, j) = x[static_cast<std::size_t>(j)];
  }
  return xi;
}

// Surrogate outputs at germ points in the [N, T·n_out] layout of a model run,
// only `columns` evaluated (the others 0: no constraint reads them).
void surrogate_outputs(const expansion::Surrogate& surrogate, const Eigen::MatrixXd& points,
                       const std::vector<int>& columns, Eigen::MatrixXd& Y) {
  Eigen::MatrixXd values;
  surrogate.evaluate(points, values, columns);
  Y.setZero(points.rows(), static_cast<Eigen::Index>(surrogate.n_times) * surrogate.n_outputs);
  for (std::size_t k = 0; k < columns.size(); ++k) Y.col(columns[k]) = values.col(static_cast<Eigen::Index>(k));
}

// Surrogate points screened for the start of the design-point search.
constexpr long long kDesignPointScreening = 20000;
constexpr unsigned long long kScreeningStream = 0xD1B54A32D192ED03ULL;

/// Rare-event estimate for one constraint: design point on the surrogate, then
/// importance sampling of the full model around it.
result::ImportanceSamplingResult rare_event_estimate(const LoadedCase& loaded, const expansion::Surrogate& surrogate,
                                                     const constraints::Constraint& constraint,
                                                     const Eigen::VectorXd& times, unsigned long long seed,
                                                     const AnalysisOptions& options, int threads,
                                                     const montecarlo::RunSample& run_sample) {
  const auto& germ = *loaded.germ;
  const int d = germ.dimension();
  const int n_out = surrogate.n_outputs;
  const std::vector<int> columns = constraint_columns({constraint}, surrogate.n_times, n_out);
  // Path-minimum clearance of the surrogate at standard-normal points z (rows).
  const auto path_minimum = [&](const Eigen::MatrixXd& z) {
    Eigen::MatrixXd Y;
    surrogate_outputs(surrogate, germ_points(germ, z), columns, Y);
    Eigen::VectorXd minimum(z.rows());
    constraints::ViolationStatistics::path_minimum(constraint, times, n_out, Y, minimum);
    return minimum;
  };
  const CounterRng rng(seed ^ kScreeningStream);
  Eigen::MatrixXd screen(kDesignPointScreening, d);
  for (Eigen::Index i = 0; i < screen.rows(); ++i)
    for (int j = 0; j < d; ++j) screen(i, j) = rng.normal(static_cast<std::uint64_t>(i), static_cast<std::uint64_t>(j));
  const Eigen::VectorXd g_screen = path_minimum(screen);
  const auto start = montecarlo::closest_violating_sample(screen, g_screen);
  const montecarlo::LimitState g = [&](const Eigen::VectorXd& z) {
    return path_minimum(z.transpose())[0];
  };
  const montecarlo::MostProbablePoint mpp = montecarlo::find_most_probable_point(g, d, start);
  montecarlo::ImportanceSamplingOptions is_options;
  is_options.samples = options.importance_sampling_runs;
  is_options.seed = seed;
  is_options.confidence = loaded.options.montecarlo.confidence;
  is_options.threads = threads;
  const montecarlo::ImportanceSamplingResult is = montecarlo::importance_sample_constraint(
      mpp.z, constraint, times, n_out, montecarlo::in_standard_normal_space(germ.specs(), run_sample), is_options);
  result::ImportanceSamplingResult out;
  out.done = true;
  out.runs = is.successful_samples + is.failed_samples;
  out.probability = is.probability;
  out.standard_error = is.standard_error;
  out.interval[0] = is.lower;
  out.interval[1] = is.upper;
  out.effective_sample_size = is.effective_sample_size;
  out.design_point_distance = mpp.beta;
  return out;
}

}  // namespace

result::AnalysisResult simulate_case(const LoadedCase& loaded) { return base_result(loaded, "simulate"); }

result::AnalysisResult analyze_case(const LoadedCase& loaded, const AnalysisOptions& options) {
  result::AnalysisResult r = base_result(loaded, "run");
  const auto& cl = *loaded.closed_loop;
  const auto& germ = *loaded.germ;
  const int n_times = static_cast<int>(r.time.size());
  const int n_out = cl.output_count();
  const int d = germ.dimension();
  const int threads = resolve_thread_count(options.threads);
  casefile::MonteCarloOptions mc_options = loaded.options.montecarlo;
  if (options.seed) mc_options.seed = *options.seed;
  if (options.mc_runs) mc_options.runs = *options.mc_runs;
  r.seed = mc_options.seed;
  const long long samples = d == 0 ? 1 : options.samples.value_or(loaded.options.surrogate.samples);
  const Eigen::VectorXd times = times_vector(r.time);

  const ModelRunner runner(loaded);

  // 1. Surrogate from one set of design runs.
  expansion::Surrogate surrogate;
  expansion::SurrogateSummary summary;
  if (d == 0) {
    surrogate = constant_surrogate(r);
    summary.method = "none (no uncertain inputs)";
    summary.model_runs = 1;
    summary.error_estimate = Eigen::VectorXd::Zero(n_out);
    summary.notes.push_back("no uncertain inputs: every statistic is the nominal run's");
  } else {
    long long design_runs_done = 0;
    const expansion::ModelEvaluator evaluate = [&](const Eigen::MatrixXd& points, Eigen::MatrixXd& values) {
      const long long first = design_runs_done;
      values.resize(points.rows(), static_cast<Eigen::Index>(n_times) * n_out);
      ProgressBar bar("surrogate design runs", static_cast<std::size_t>(points.rows()), options.progress);
      // Spread over ranks and threads; every rank ends up with every row.
      std::vector<double> rows(static_cast<std::size_t>(points.rows()) * static_cast<std::size_t>(values.cols()));
      std::vector<std::uint8_t> ok(static_cast<std::size_t>(points.rows()));
      runner.run(points, first, threads, kDesignRunsPerBlock, rows.data(), ok.data(), true);
      for (Eigen::Index i = 0; i < points.rows(); ++i)
        values.row(i) = Eigen::Map<const Eigen::RowVectorXd>(rows.data() + i * values.cols(), values.cols());
      bar.update(static_cast<std::size_t>(points.rows()));
      bar.finish();
      design_runs_done += points.rows();
    };
    surrogate = expansion::build_surrogate(germ.specs(), n_times, n_out, loaded.options.surrogate, evaluate, &summary);
  }

  result::SurrogateResult& s = r.surrogate;
  s.done = true;
  s.method = summary.method;
  s.germ_names = germ.names();
  for (const auto& spec : germ.specs()) s.germ_families.push_back(germ::to_string(spec));
  s.multi_indices = surrogate.indices;
  for (int t = 0; t < n_times; ++t)
    s.coefficients.push_back(surrogate.coefficients.middleCols(static_cast<Eigen::Index>(t) * n_out, n_out).transpose());
  s.mean = surrogate.mean();
  s.std = surrogate.std();
  if (d > 0) {
    s.sobol_first = to_cube(surrogate.sobol_first(), n_times, n_out);
    s.sobol_total = to_cube(surrogate.sobol_total(), n_times, n_out);
  } else {
    s.sobol_first.assign(static_cast<std::size_t>(n_times), Eigen::MatrixXd(n_out, 0));
    s.sobol_total = s.sobol_first;
  }
  s.model_runs = summary.model_runs;
  s.level_reached = summary.level_reached;
  s.degree_reached = summary.degree_reached;
  s.tolerance_met = summary.tolerance_met;
  s.error_estimate = summary.error_estimate;
  s.notes = summary.notes;
  s.samples = samples;
  for (const auto& kl : germ.karhunen_loeve()) {
    std::ostringstream line;
    line << kl.input_name << ": " << kl.modes << " modes capture " << 100.0 * kl.captured_variance_fraction
         << " % of the variance";
    s.karhunen_loeve.push_back(line.str());
  }

  // 2. Constraints from surrogate samples, streamed.
  const auto& constraint_list = loaded.constraints;
  constraints::ViolationResults surrogate_violations;
  if (!constraint_list.empty()) {
    const std::vector<int> columns = constraint_columns(constraint_list, n_times, n_out);
    const CounterRng rng(mc_options.seed ^ kSurrogateStream);
    ProgressBar bar("surrogate sampling", static_cast<std::size_t>(samples), options.progress && d > 0);
    std::atomic<long long> sampled{0};
    const auto& so = loaded.options.surrogate;
    if (so.sampling == casefile::SurrogateSampling::precision && d > 0 && d <= ScrambledSobol::max_dimension()) {
      // Scrambled Sobol replicates until every probability meets its target (samples = the cap).
      constraints::PrecisionTarget target;
      target.cap = samples;
      target.relative = so.sampling_relative_error;
      target.absolute = so.sampling_absolute_error;
      const constraints::PrecisionSampling sampled_to_target = constraints::stream_to_precision(
          constraint_list, times, n_out, target, kSurrogateChunk, threads,
          [&](int replicate, long long first, long long count, Eigen::MatrixXd& Y) {
            const ScrambledSobol sobol(d, mc_options.seed ^ kSurrogateStream, static_cast<std::uint64_t>(replicate));
            Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor> z(count, d);
            sobol.normals(static_cast<std::uint64_t>(first), static_cast<std::size_t>(count), z.data());
            surrogate_outputs(surrogate, germ_points(germ, z), columns, Y);
            bar.update(static_cast<std::size_t>(std::min(samples, sampled += count)));
          });
      surrogate_violations = sampled_to_target.results;
      s.samples = sampled_to_target.samples;
      s.sampling = "precision";
      s.sampling_target_met = sampled_to_target.target_met;
    } else {
      surrogate_violations = constraints::stream_violation_statistics(
          constraint_list, times, n_out, samples, kSurrogateChunk, threads,
          [&](long long begin, long long end, Eigen::MatrixXd& Y) {
            const Eigen::Index n = static_cast<Eigen::Index>(end - begin);
            Eigen::MatrixXd z(n, d);
            for (Eigen::Index i = 0; i < n; ++i)
              for (int j = 0; j < d; ++j)
                z(i, j) = rng.normal(static_cast<std::uint64_t>(begin + i), static_cast<std::uint64_t>(j));
            surrogate_outputs(surrogate, germ_points(germ, z), columns, Y);
            bar.update(static_cast<std::size_t>(sampled += n));
          });
    }
    bar.finish();
    s.joint_path_probability = surrogate_violations.joint_probability;
  }

  for (std::size_t k = 0; k < constraint_list.size(); ++k) {
    const auto& constraint = constraint_list[k];
    const auto& o = constraint.options();
    const auto& st = surrogate_violations.constraints[k];
    result::ConstraintResult c;
    c.name = constraint.name();
    c.type = constraints::kind_name(constraint.type());
    c.scope = constraint.scope() == casefile::ConstraintScope::path ? "path" : "pointwise";
    c.max_probability = constraint.max_probability();
    const auto window = constraint.window();
    // An open window is the whole plan: report it as the span it covers.
    c.window[0] = std::max(window.first, r.time.front());
    c.window[1] = std::min(window.second, r.time.back());
    fill_geometry(o, c);
    c.pointwise_probability = st.pointwise_probability;
    c.pointwise_standard_error = st.pointwise_standard_error;
    c.path_probability = st.path_probability;
    c.path_standard_error = st.path_standard_error;
    c.clearance_mean = st.clearance_mean;
    c.clearance_std = st.clearance_std;
    c.clearance_quantile = st.clearance_quantile;
    c.gaussian_ok = constraints::gaussian_check(st.clearance_mean, st.clearance_std, c.max_probability);
    c.cantelli_ok = constraints::cantelli_check(st.clearance_mean, st.clearance_std, c.max_probability);
    c.reformulation_note = reformulation_note(constraints::find_reformulation_disagreements(
        times, c.gaussian_ok, c.cantelli_ok, st.pointwise_probability, c.max_probability));
    double worst = 0.0;
    for (Eigen::Index t = 0; t < st.pointwise_probability.size(); ++t)
      if (!std::isnan(st.pointwise_probability[t])) worst = std::max(worst, st.pointwise_probability[t]);
    c.worst_pointwise_probability = worst;
    const constraints::ConstraintMargin margin = constraints::compute_margin(constraint, st, times);
    c.worst_time = margin.worst_time_in_seconds;
    c.margin = margin.spare;
    double backoff = -std::numeric_limits<double>::infinity();
    for (Eigen::Index t = 0; t < margin.backoff.size(); ++t)
      if (!std::isnan(margin.backoff[t])) backoff = std::max(backoff, margin.backoff[t]);
    c.required_backoff = std::isfinite(backoff) ? backoff : result::kNaN;
    if (margin.tolerable_radius) c.tolerable_radius = *margin.tolerable_radius;
    if (margin.required_inflation) c.radius_inflation = *margin.required_inflation;
    c.verdict = margin.verdict;
    c.within_bound = margin.meets;
    r.constraints.push_back(std::move(c));
  }

  // 3. Monte Carlo cross-check with the full model.
  if (mc_options.runs > 0 && d > 0) {
    montecarlo::MonteCarloRunOptions run_options;
    run_options.threads = threads;
    run_options.saturation = montecarlo::saturation_limits(loaded.options.control.limits, r.output_names);
    const montecarlo::RunSample run_sample = [&](const double* xi, long long sample, double* outputs,
                                                 std::string* error) {
      try {
        run_at(loaded, xi, sample, outputs);
        return true;
      } catch (const NumericalError& e) {
        if (error) *error = e.what();
        return false;
      }
    };
    // Each wave of runs goes over ranks and threads; the accumulators then see
    // the same rows in the same order on every rank.
    run_options.run_rows = [&](long long begin, long long, const Eigen::MatrixXd& xi, double* outputs,
                               std::uint8_t* ok) {
      runner.run(xi, begin, threads, app::ModelRunner::kDefaultBlock, outputs, ok, false);
    };
    const montecarlo::SurrogateEvaluator evaluate_surrogate = [&](const Eigen::MatrixXd& xi, Eigen::MatrixXd& values) {
      surrogate.evaluate(xi, values);
    };
    ProgressBar bar("Monte Carlo runs", static_cast<std::size_t>(mc_options.runs), options.progress);
    const montecarlo::MonteCarloResult mc = montecarlo::run_monte_carlo(
        mc_options, germ.specs(), times, n_out, constraint_list, run_sample, run_options, evaluate_surrogate,
        [&](long long done, long long) { bar.update(static_cast<std::size_t>(done)); });
    bar.finish();

    result::MonteCarloResult& m = r.montecarlo;
    m.done = true;
    m.runs = mc.successful_runs + mc.failed_runs;
    m.failed_runs = mc.failed_runs;
    for (const auto& [sample, message] : mc.first_failures)
      m.failure_messages.push_back("sample " + std::to_string(sample) + ": " + message);
    m.confidence = mc.confidence;
    m.seed = mc_options.seed;
    m.mean = mc.mean;
    m.std = mc.std;
    m.mean_standard_error = mc.mean_standard_error;
    m.std_standard_error = mc.std_standard_error;
    m.validation_rmse = mc.validation_rmse;
    m.validation_relative_rmse = mc.validation_relative_rmse;
    for (Eigen::Index k = 0; k < mc.kept_outputs.rows(); ++k) {
      const Eigen::RowVectorXd row = mc.kept_outputs.row(k);
      if (!row.allFinite()) continue;
      m.sample_outputs.push_back(
          Eigen::Map<const Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>>(row.data(), n_times, n_out));
    }
    m.joint_path_probability = mc.joint_probability;
    m.joint_path_interval[0] = mc.joint_interval.lower;
    m.joint_path_interval[1] = mc.joint_interval.upper;
    for (std::size_t k = 0; k < r.constraints.size(); ++k) {
      auto& c = r.constraints[k];
      const auto& mcc = mc.constraints[k];
      c.has_montecarlo = true;
      c.montecarlo.pointwise_probability = mcc.pointwise_probability;
      c.montecarlo.path_probability = mcc.path_probability;
      c.montecarlo.path_violations = mcc.path_violations;
      c.montecarlo.path_interval[0] = mcc.path_interval.lower;
      c.montecarlo.path_interval[1] = mcc.path_interval.upper;
    }
    const montecarlo::Agreement agreement =
        montecarlo::assess_agreement(surrogate_violations, mc, mc.saturation_fraction);
    m.agreement = montecarlo::to_string(agreement.overall);
    m.agreement_cause = agreement.summary;
    for (std::size_t k = 0; k < r.constraints.size(); ++k) {
      r.constraints[k].agreement = montecarlo::to_string(agreement.constraints[k].verdict);
      r.constraints[k].agreement_cause =
          agreement.constraints[k].cause.empty() ? agreement.constraints[k].note : agreement.constraints[k].cause;
    }

    // 4. Rare events: a crude Monte Carlo of a few thousand runs cannot resolve a
    // bound ≤ 1e-4, so the full model is importance-sampled around the design point.
    for (std::size_t k = 0; k < r.constraints.size(); ++k) {
      auto& c = r.constraints[k];
      if (c.max_probability > options.importance_sampling_threshold) continue;
      c.importance_sampling = rare_event_estimate(loaded, surrogate, constraint_list[k], times, mc_options.seed,
                                                  options, threads, run_sample);
      // The full-model estimate governs the verdict of a rare-event bound.
      c.within_bound = c.importance_sampling.probability <= c.max_probability;
      std::ostringstream verdict;
      verdict << (c.within_bound ? "meets " : "exceeds: ") << "importance sampling p = "
              << c.importance_sampling.probability << " [" << c.importance_sampling.interval[0] << ", "
              << c.importance_sampling.interval[1] << "] vs bound " << c.max_probability << " ("
              << c.importance_sampling.runs << " full-model runs, ESS "
              << static_cast<long long>(c.importance_sampling.effective_sample_size) << "); surrogate: " << c.verdict;
      c.verdict = verdict.str();
    }
  }
  return r;
}

}  // namespace sigmatube::app
