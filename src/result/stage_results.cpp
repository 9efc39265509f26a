// SPDX-License-Identifier: MIT
#include "sigmatube/result/stage_results.h"

#include "sigmatube/montecarlo/verdict.h"
#include "sigmatube/result/summary_text.h"

#include <algorithm>
#include <sstream>
#include <string>

namespace sigmatube::result {
namespace {

using casefile::ConstraintKind;

Cube to_cube(const Eigen::MatrixXd& flat, int n_times, int n_outputs) {
  // flat: [n_times·n_outputs, k] → n_times slices of [n_outputs, k]
  Cube cube;
  for (int t = 0; t < n_times; ++t) cube.push_back(flat.middleRows(static_cast<Eigen::Index>(t) * n_outputs, n_outputs));
  return cube;
}

void fill_geometry(const casefile::ConstraintOptions& o, ConstraintResult& c) {
  c.position = o.position;
  if (o.type == ConstraintKind::outside_sphere || o.type == ConstraintKind::outside_ellipsoid) c.center = o.center;
  if (o.type == ConstraintKind::outside_sphere) c.radius = o.radius;
  if (o.type == ConstraintKind::outside_ellipsoid) c.semi_axes = o.semi_axes;
  if (o.type == ConstraintKind::inside_box) {
    c.low = o.low;
    c.high = o.high;
  }
}

}  // namespace

void add_surrogate(AnalysisResult& r, const expansion::SurrogateStage& stage, const germ::Germ& germ,
                   long long samples) {
  const expansion::Surrogate& surrogate = stage.surrogate;
  const expansion::SurrogateSummary& summary = stage.summary;
  const int n_times = static_cast<int>(r.time.size());
  const int n_out = surrogate.n_outputs;
  SurrogateResult& s = r.surrogate;
  s.done = true;
  s.method = summary.method;
  s.germ_names = germ.names();
  for (const auto& spec : germ.specs()) s.germ_families.push_back(germ::to_string(spec));
  s.multi_indices = surrogate.indices;
  for (int t = 0; t < n_times; ++t)
    s.coefficients.push_back(surrogate.coefficients.middleCols(static_cast<Eigen::Index>(t) * n_out, n_out).transpose());
  s.mean = surrogate.mean();
  s.std = surrogate.std();
  if (germ.dimension() > 0) {
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
}

void add_constraints(AnalysisResult& r, const std::vector<constraints::Constraint>& list,
                     const constraints::ViolationResults& sampled,
                     const std::vector<constraints::ConstraintAssessment>& assessments) {
  if (!list.empty()) r.surrogate.joint_path_probability = sampled.joint_probability;
  for (std::size_t k = 0; k < list.size(); ++k) {
    const auto& constraint = list[k];
    const auto& st = sampled.constraints[k];
    const auto& a = assessments[k];
    ConstraintResult c;
    c.name = constraint.name();
    c.type = constraints::kind_name(constraint.type());
    c.scope = constraint.scope() == casefile::ConstraintScope::path ? "path" : "pointwise";
    c.max_probability = constraint.max_probability();
    const auto window = constraint.window();
    // An open window is the whole plan: report it as the span it covers.
    c.window[0] = std::max(window.first, r.time.front());
    c.window[1] = std::min(window.second, r.time.back());
    fill_geometry(constraint.options(), c);
    c.pointwise_probability = st.pointwise_probability;
    c.pointwise_standard_error = st.pointwise_standard_error;
    c.path_probability = st.path_probability;
    c.path_standard_error = st.path_standard_error;
    c.clearance_mean = st.clearance_mean;
    c.clearance_std = st.clearance_std;
    c.clearance_quantile = st.clearance_quantile;
    c.gaussian_ok = a.gaussian_ok;
    c.cantelli_ok = a.cantelli_ok;
    c.reformulation_note = a.reformulation_note;
    c.worst_pointwise_probability = a.worst_pointwise_probability;
    c.worst_time = a.margin.worst_time_in_seconds;
    c.margin = a.margin.spare;
    c.required_backoff = a.required_backoff;
    if (a.margin.tolerable_radius) c.tolerable_radius = *a.margin.tolerable_radius;
    if (a.margin.required_inflation) c.radius_inflation = *a.margin.required_inflation;
    c.verdict = a.margin.verdict;
    c.within_bound = a.margin.meets;
    r.constraints.push_back(std::move(c));
  }
}

void add_cross_check(AnalysisResult& r, const montecarlo::CrossCheck& check, unsigned long long seed) {
  const montecarlo::MonteCarloResult& mc = check.runs;
  const int n_times = static_cast<int>(r.time.size());
  const int n_out = static_cast<int>(r.output_names.size());
  MonteCarloResult& m = r.montecarlo;
  m.done = true;
  m.runs = mc.successful_runs + mc.failed_runs;
  m.failed_runs = mc.failed_runs;
  for (const auto& [sample, message] : mc.first_failures)
    m.failure_messages.push_back("sample " + std::to_string(sample) + ": " + message);
  m.confidence = mc.confidence;
  m.seed = seed;
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
  const montecarlo::Agreement& agreement = check.agreement;
  m.agreement = montecarlo::to_string(agreement.overall);
  m.agreement_cause = agreement.cause;
  m.agreement_details = agreement.summary;
  for (std::size_t k = 0; k < r.constraints.size(); ++k) {
    const montecarlo::ConstraintAgreement& a = agreement.constraints[k];
    const montecarlo::ConstraintMonteCarlo& mcc = mc.constraints[k];
    auto& c = r.constraints[k];
    c.agreement = montecarlo::to_string(a.verdict);
    c.agreement_cause = a.cause.empty() ? a.note : a.cause;
    MonteCarloConstraint& out = c.montecarlo;
    out.path_interval_failures_safe[0] = mcc.path_interval_failures_safe.lower;
    out.path_interval_failures_safe[1] = mcc.path_interval_failures_safe.upper;
    out.path_interval_failures_violating[0] = mcc.path_interval_failures_violating.lower;
    out.path_interval_failures_violating[1] = mcc.path_interval_failures_violating.upper;
    out.pessimistic_probability =
        c.scope == "path" ? mcc.pessimistic_path_probability : mcc.pessimistic_pointwise_probability;
    out.compared_runs = a.compared_runs;
    out.surrogate_only = a.surrogate_only;
    out.model_only = a.model_only;
    out.compared_time_index = a.time_index;
    out.paired_difference = a.difference.estimate;
    out.paired_interval[0] = a.difference.lower;
    out.paired_interval[1] = a.difference.upper;
    out.mcnemar_p = a.mcnemar_p;
    out.holm_p = a.holm_p;
  }
}

std::vector<std::uint8_t> violation_shown(const AnalysisResult& r) {
  std::vector<std::uint8_t> shown;
  for (const auto& c : r.constraints)
    shown.push_back(!c.within_bound || (c.has_montecarlo && c.montecarlo.pessimistic_probability > c.max_probability));
  return shown;
}

void add_verdicts(AnalysisResult& r, double rare_event_threshold) {
  if (!r.montecarlo.done) return;  // the surrogate's verdict is all there is
  for (auto& c : r.constraints) {
    montecarlo::BoundEvidence e;
    e.max_probability = c.max_probability;
    e.surrogate_probability = surrogate_gate_probability(c);
    e.surrogate_within = c.within_bound;
    e.has_montecarlo = c.has_montecarlo;
    e.montecarlo_pessimistic = c.montecarlo.pessimistic_probability;
    e.montecarlo_violations = c.scope == "path" || c.montecarlo.compared_time_index < 0
                                  ? c.montecarlo.path_violations
                                  : std::llround(c.montecarlo.pointwise_probability[c.montecarlo.compared_time_index] *
                                                 static_cast<double>(r.montecarlo.runs - r.montecarlo.failed_runs));
    e.montecarlo_failed = r.montecarlo.failed_runs;
    e.montecarlo_runs = r.montecarlo.runs;
    const ImportanceSamplingResult& is = c.importance_sampling;
    if (is.done)
      e.rare_event = montecarlo::RareEventEvidence{is.probability, is.pessimistic_probability, is.interval[0],
                                                   is.interval[1], is.coefficient_of_variation,
                                                   is.effective_sample_size, is.runs, is.converged};
    const bool skipped = !is.done && !(c.max_probability > rare_event_threshold);
    const montecarlo::BoundVerdict v = montecarlo::decide_bound(e, c.verdict);
    c.within_bound = v.within;
    c.verdict = v.line;
    if (skipped) c.verdict += "; importance sampling not run: the violation is already shown";
  }
}

void add_rare_events(AnalysisResult& r, const std::vector<std::optional<montecarlo::RareEventEstimate>>& estimates,
                     double cov_target) {
  for (std::size_t k = 0; k < r.constraints.size() && k < estimates.size(); ++k) {
    if (!estimates[k]) continue;
    const montecarlo::ImportanceSamplingResult& is = estimates[k]->sampling;
    auto& c = r.constraints[k];
    ImportanceSamplingResult& out = c.importance_sampling;
    out.done = true;
    out.runs = is.successful_samples + is.failed_samples;
    out.probability = is.probability;
    out.standard_error = is.standard_error;
    out.interval[0] = is.lower;
    out.interval[1] = is.upper;
    out.effective_sample_size = is.effective_sample_size;
    out.design_point_distance = estimates[k]->design_point.beta;
    for (const auto& p : estimates[k]->design_points) out.design_point_distances.push_back(p.beta);
    out.defensive_share = estimates[k]->proposal.defensive;
    out.coefficient_of_variation = is.coefficient_of_variation;
    out.cov_target = cov_target;
    out.converged = is.converged;
    out.failed_runs = is.failed_samples;
    out.pessimistic_probability = is.pessimistic_probability;
  }
}

}  // namespace sigmatube::result
