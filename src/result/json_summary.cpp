// SPDX-License-Identifier: MIT
#include "sigmatube/result/json_summary.h"

#include <sstream>

#include "sigmatube/result/markup_escape.h"
#include "sigmatube/result/summary_text.h"

namespace sigmatube::result {
namespace {

std::string pair(const double v[2]) { return "[" + json_number(v[0]) + ", " + json_number(v[1]) + "]"; }

std::string per_output(const AnalysisResult& r, const Eigen::VectorXd& v) {
  std::string out = "{";
  for (Eigen::Index i = 0; i < v.size(); ++i) {
    const std::string name =
        std::size_t(i) < r.output_names.size() ? r.output_names[std::size_t(i)] : "#" + std::to_string(i);
    out += (i ? ", " : "") + json_string(name) + ": " + json_number(v[i]);
  }
  return out + "}";
}

std::string strings(const std::vector<std::string>& v) {
  std::string out = "[";
  for (std::size_t i = 0; i < v.size(); ++i) out += (i ? ", " : "") + json_string(v[i]);
  return out + "]";
}

std::string boolean(bool b) { return b ? "true" : "false"; }

std::string numbers(const std::vector<double>& v) {
  std::string out = "[";
  for (std::size_t k = 0; k < v.size(); ++k) out += (k ? ", " : "") + json_number(v[k]);
  return out + "]";
}

}  // namespace

std::string json_summary(const AnalysisResult& r) {
  std::ostringstream o;
  o << "{\n";
  o << "  \"format\": \"sigmatube-summary\",\n  \"version\": 1,\n";
  o << "  \"title\": " << json_string(r.title) << ",\n";
  o << "  \"case_path\": " << json_string(r.case_path) << ",\n";
  o << "  \"case_sha256\": " << json_string(r.case_sha256) << ",\n";
  o << "  \"inputs_sha256\": " << json_string(r.inputs_sha256) << ",\n";
  o << "  \"created_utc\": " << json_string(r.created_utc) << ",\n";
  o << "  \"tool_version\": " << json_string(r.tool_version) << ",\n";
  o << "  \"seed\": " << r.seed << ",\n";
  o << "  \"command\": " << json_string(r.command) << ",\n";
  o << "  \"report_times\": " << r.time.size() << ",\n";
  o << "  \"time_start\": " << json_number(r.time.empty() ? kNaN : r.time.front()) << ",\n";
  o << "  \"time_end\": " << json_number(r.time.empty() ? kNaN : r.time.back()) << ",\n";
  o << "  \"outputs\": " << strings(r.output_names) << ",\n";

  const SurrogateResult& s = r.surrogate;
  o << "  \"surrogate\": ";
  if (!s.done) {
    o << "null,\n";
  } else {
    o << "{\n";
    o << "    \"method\": " << json_string(s.method) << ",\n";
    o << "    \"germ_dimension\": " << s.germ_names.size() << ",\n";
    o << "    \"germ_names\": " << strings(s.germ_names) << ",\n";
    o << "    \"basis_size\": " << s.multi_indices.rows() << ",\n";
    o << "    \"model_runs\": " << s.model_runs << ",\n";
    o << "    \"tolerance_met\": " << boolean(s.tolerance_met) << ",\n";
    o << "    \"error_estimate\": " << per_output(r, s.error_estimate) << ",\n";
    o << "    \"samples\": " << s.samples << ",\n";
    o << "    \"sampling\": " << json_string(s.sampling) << ",\n";
    o << "    \"sampling_target_met\": " << boolean(s.sampling_target_met) << ",\n";
    o << "    \"joint_path_probability\": " << json_number(s.joint_path_probability) << ",\n";
    o << "    \"karhunen_loeve\": " << strings(s.karhunen_loeve) << "\n";
    o << "  },\n";
  }

  const MonteCarloResult& m = r.montecarlo;
  o << "  \"montecarlo\": ";
  if (!m.done) {
    o << "null,\n";
  } else {
    o << "{\n";
    o << "    \"runs\": " << m.runs << ",\n";
    o << "    \"failed_runs\": " << m.failed_runs << ",\n";
    o << "    \"confidence\": " << json_number(m.confidence) << ",\n";
    o << "    \"seed\": " << m.seed << ",\n";
    o << "    \"joint_path_probability\": " << json_number(m.joint_path_probability) << ",\n";
    o << "    \"joint_path_interval\": " << pair(m.joint_path_interval) << ",\n";
    o << "    \"validation_rmse\": " << per_output(r, m.validation_rmse) << ",\n";
    o << "    \"validation_relative_rmse\": " << per_output(r, m.validation_relative_rmse) << ",\n";
    o << "    \"agreement\": " << json_string(m.agreement) << ",\n";
    o << "    \"agreement_cause\": " << json_string(m.agreement_cause) << "\n";
    o << "  },\n";
  }

  o << "  \"constraints\": [";
  for (std::size_t k = 0; k < r.constraints.size(); ++k) {
    const ConstraintResult& c = r.constraints[k];
    o << (k ? ",\n" : "\n") << "    {\n";
    o << "      \"name\": " << json_string(c.name) << ",\n";
    o << "      \"type\": " << json_string(c.type) << ",\n";
    o << "      \"scope\": " << json_string(c.scope) << ",\n";
    o << "      \"bound\": " << json_number(c.max_probability) << ",\n";
    o << "      \"window\": " << pair(c.window) << ",\n";
    o << "      \"surrogate\": {\"path_probability\": " << json_number(c.path_probability)
      << ", \"path_standard_error\": " << json_number(c.path_standard_error)
      << ", \"worst_pointwise_probability\": " << json_number(c.worst_pointwise_probability)
      << ", \"gate_probability\": " << json_number(surrogate_gate_probability(c))
      << ", \"gate_standard_error\": " << json_number(surrogate_gate_standard_error(c)) << "},\n";
    o << "      \"montecarlo\": ";
    if (c.has_montecarlo)
      o << "{\"path_probability\": " << json_number(c.montecarlo.path_probability)
        << ", \"path_violations\": " << c.montecarlo.path_violations
        << ", \"path_interval\": " << pair(c.montecarlo.path_interval)
        << ", \"gate_probability\": " << json_number(montecarlo_gate_probability(c))
        << ", \"pessimistic_probability\": " << json_number(c.montecarlo.pessimistic_probability)
        << ", \"surrogate_only\": " << c.montecarlo.surrogate_only << ", \"model_only\": " << c.montecarlo.model_only
        << ", \"paired_difference\": " << json_number(c.montecarlo.paired_difference)
        << ", \"paired_interval\": " << pair(c.montecarlo.paired_interval)
        << ", \"mcnemar_p\": " << json_number(c.montecarlo.mcnemar_p)
        << ", \"holm_p\": " << json_number(c.montecarlo.holm_p) << "},\n";
    else
      o << "null,\n";
    const auto& is = c.importance_sampling;
    o << "      \"importance_sampling\": ";
    if (is.done)
      o << "{\"runs\": " << is.runs << ", \"probability\": " << json_number(is.probability)
        << ", \"standard_error\": " << json_number(is.standard_error) << ", \"interval\": " << pair(is.interval)
        << ", \"effective_sample_size\": " << json_number(is.effective_sample_size)
        << ", \"design_point_distance\": " << json_number(is.design_point_distance)
        << ", \"design_point_distances\": " << numbers(is.design_point_distances)
        << ", \"defensive_share\": " << json_number(is.defensive_share)
        << ", \"coefficient_of_variation\": " << json_number(is.coefficient_of_variation)
        << ", \"converged\": " << boolean(is.converged) << "},\n";
    else
      o << "null,\n";
    o << "      \"margin\": " << json_number(c.margin) << ",\n";
    o << "      \"worst_time\": " << json_number(c.worst_time) << ",\n";
    o << "      \"required_backoff\": " << json_number(c.required_backoff) << ",\n";
    o << "      \"tolerable_radius\": " << json_number(c.tolerable_radius) << ",\n";
    o << "      \"within_bound\": " << boolean(c.within_bound) << ",\n";
    o << "      \"verdict\": " << json_string(c.verdict) << ",\n";
    o << "      \"agreement\": " << json_string(c.agreement) << ",\n";
    o << "      \"agreement_cause\": " << json_string(c.agreement_cause) << "\n";
    o << "    }";
  }
  o << (r.constraints.empty() ? "],\n" : "\n  ],\n");
  o << "  \"exit_code\": " << r.verdict_exit_code() << ",\n";
  o << "  \"exit_verdict\": " << json_string(exit_verdict_line(r)) << "\n";
  o << "}\n";
  return o.str();
}

}  // namespace sigmatube::result
