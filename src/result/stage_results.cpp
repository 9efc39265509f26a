// SPDX-License-Identifier: MIT
#include "sigmatube/result/stage_results.h"

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
  m.agreement_cause = agreement.summary;
  for (std::size_t k = 0; k < r.constraints.size(); ++k) {
    r.constraints[k].agreement = montecarlo::to_string(agreement.constraints[k].verdict);
    r.constraints[k].agreement_cause =
        agreement.constraints[k].cause.empty() ? agreement.constraints[k].note : agreement.constraints[k].cause;
  }
}

void add_rare_events(AnalysisResult& r, const std::vector<std::optional<montecarlo::RareEventEstimate>>& estimates) {
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
    // The full-model estimate governs the verdict of a rare-event bound.
    c.within_bound = out.probability <= c.max_probability;
    std::ostringstream verdict;
    verdict << (c.within_bound ? "meets " : "exceeds: ") << "importance sampling p = " << out.probability << " ["
            << out.interval[0] << ", " << out.interval[1] << "] vs bound " << c.max_probability << " (" << out.runs
            << " full-model runs, ESS " << static_cast<long long>(out.effective_sample_size)
            << "); surrogate: " << c.verdict;
    c.verdict = verdict.str();
  }
}

}  // namespace sigmatube::result
