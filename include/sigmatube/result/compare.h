// SPDX-License-Identifier: MIT
#pragma once
// The release gate behind `sigmatube compare BASE.h5 CAND.h5`: did the
// candidate make any constraint riskier, beyond estimator noise and beyond
// what the budget allows?
#include <limits>
#include <map>
#include <string>
#include <vector>

#include "sigmatube/result/analysis_result.h"

// Layer result/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::result {

struct CompareOptions {
  // A rise of a constraint's violation probability from p_b to p_c is allowed up to
  //   Δ_allowed = max(max_absolute_increase, max_increase_ratio · p_b)
  // (budget keys `max_increase_ratio` and `max_increase`).
  double max_increase_ratio = 0.10;
  double max_absolute_increase = 1e-6;
  // One-sided level α of the test of H0: p_c ≤ p_b; a rise is significant
  // when its p-value < α (proportion_test.h says which test is used when).
  double significance = 0.05;
  // Candidate probability must satisfy p_c ≤ max_probability; a constraint
  // without an entry uses the bound stored in the candidate result.
  std::map<std::string, double> max_probability_override;
  std::map<std::string, double> max_increase_ratio_override;
  std::map<std::string, double> max_absolute_increase_override;
  // Candidate margin (ε-quantile of the path-minimum clearance, clearance
  // units) must satisfy margin_c ≥ min_margin; NaN: not checked.
  double min_margin = std::numeric_limits<double>::quiet_NaN();
  std::map<std::string, double> min_margin_override;

  // The budget file these came from ("" = none): named in messages.
  std::string source;

  /// Throws InputError naming the field for negative allowances or α ∉ (0, 1).
  void validate() const;
};

/// Reads a budget file:
///   [defaults]            max_increase, max_increase_ratio, significance, min_margin
///   [constraint.<name>]   max_probability, max_increase, max_increase_ratio, min_margin
/// Unknown tables or keys and wrong types throw InputError with file, line
/// and dotted key; a missing or unparsable file throws InputError too.
CompareOptions read_budget(const std::string& toml_path);

struct CompareRow {
  std::string name;
  bool in_base = false, in_candidate = false;
  std::string scope;   // the candidate's (or base's) scope
  std::string source;  // probabilities compared: "monte-carlo" | "surrogate" | "" (none)
  double base_path_probability = kNaN, candidate_path_probability = kNaN;
  double base_worst_pointwise_probability = kNaN, candidate_worst_pointwise_probability = kNaN;
  double base_margin = kNaN, candidate_margin = kNaN;
  double base_probability = kNaN, candidate_probability = kNaN;  // the gate probabilities (by scope)
  long long base_count = -1, base_runs = 0, candidate_count = -1, candidate_runs = 0;  // Monte Carlo only
  double increase = kNaN;          // candidate_probability − base_probability
  double allowed_increase = kNaN;  // Δ_allowed
  double bound = kNaN;             // max probability applied to the candidate
  double min_margin = kNaN;
  std::string test;  // "pooled z" | "Fisher exact" | "normal z" | ""
  double z = kNaN, p_value = kNaN;
  bool significant = false;
  bool regression = false;
  std::vector<std::string> reasons;  // why it regressed, one phrase each
};

struct CompareReport {
  std::string base_label, candidate_label;  // title or case path; callers may set file names
  std::string base_sha256, candidate_sha256;
  std::string base_inputs_sha256, candidate_inputs_sha256;
  bool same_inputs = false;  // both inputs_sha256 known and equal: nothing changed but the seed or sizes
  double significance = 0.05;
  std::vector<CompareRow> rows;  // base order, then constraints new in the candidate
  bool regression = false;       // any row regressed: exit code 1
};

/// Matches constraints by name. Per constraint the gate probability is the
/// path probability (scope "path") or the worst pointwise probability; every
/// side present must carry Monte Carlo for the Monte Carlo numbers to be used
/// (counts: path violations, or round(p·runs) for pointwise scope, runs
/// excluding failed ones) with one_sided_increase_test; otherwise the
/// surrogate estimates with normal_difference_test on their sampling
/// standard errors. A row regresses when
///   (p-value < significance  and  Δp > Δ_allowed), or
///   p_c > max probability, or margin_c < min_margin, or
///   the constraint is missing in the candidate (a dropped check is not a pass).
/// A constraint new in the candidate is checked against the bound and margin only.
CompareReport compare_results(const AnalysisResult& base, const AnalysisResult& candidate,
                              const CompareOptions& options);

/// Aligned table, one line per regressed constraint naming it and why, and a
/// last line "release gate: pass" or "release gate: REGRESSION (n constraints)".
std::string compare_text(const CompareReport& report);

/// JUnit XML (junit.h): one <testcase> per constraint, classname = the
/// candidate label, <failure> for each regression.
std::string compare_junit(const CompareReport& report, const std::string& suite_name);

/// JSON: { "base": {...}, "candidate": {...}, "significance", "regression",
/// "exit_code", "constraints": [ per-row fields, NaN → null ] }.
std::string compare_json(const CompareReport& report);

}  // namespace sigmatube::result
