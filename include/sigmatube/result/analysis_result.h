// SPDX-License-Identifier: MIT
#pragma once
// Everything one analysis produced, as stored in a result file
// (docs/result-file.md gives the HDF5 layout). Plain data: the writer, the
// reader, `show`, `compare` and `report` all work from this struct.
#include <cstdint>
#include <limits>
#include <string>
#include <vector>

#include <Eigen/Dense>

// Layer result/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::result {

inline constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

/// Row-major [rows, cols] block stored as a vector of matrices, one per time.
using Cube = std::vector<Eigen::MatrixXd>;

struct MonteCarloConstraint {
  Eigen::VectorXd pointwise_probability;  // [T], NaN outside the window
  double path_probability = kNaN;
  long long path_violations = 0;
  double path_interval[2] = {kNaN, kNaN};  // Clopper–Pearson at MonteCarloResult::confidence
  // Failed runs are unknown: intervals over all runs with failures counted safe /
  // counted as violations, and the pessimistic governing probability a verdict uses.
  double path_interval_failures_safe[2] = {kNaN, kNaN};
  double path_interval_failures_violating[2] = {kNaN, kNaN};
  double pessimistic_probability = kNaN;
  // Paired cross-check on the same runs (montecarlo/agreement.h).
  long long compared_runs = 0;
  long long surrogate_only = 0;   // runs the surrogate violates and the model does not
  long long model_only = 0;       // runs the model violates and the surrogate does not
  int compared_time_index = -1;   // pointwise scope: the report time compared; −1 for path
  double paired_difference = kNaN;              // p_S − p_M on the same runs
  double paired_interval[2] = {kNaN, kNaN};     // Agresti–Min at MonteCarloResult::confidence
  double mcnemar_p = kNaN;                      // exact, two-sided
  double holm_p = kNaN;                         // Holm-adjusted over the constraints
};

struct ImportanceSamplingResult {
  bool done = false;
  long long runs = 0;
  double probability = kNaN;
  double standard_error = kNaN;
  double interval[2] = {kNaN, kNaN};
  double effective_sample_size = kNaN;  // Kish, over the violating runs' weights
  double design_point_distance = kNaN;  // ‖z*‖ in standard-normal germ space (reliability index β)
  std::vector<double> design_point_distances;  // β of every design point of the mixture proposal, smallest first
  double defensive_share = kNaN;        // share α₀ of plain N(0, I) draws in the proposal
  double coefficient_of_variation = kNaN;
  double cov_target = kNaN;
  bool converged = false;               // CoV target met: only then does it count for the verdict
  long long failed_runs = 0;
  double pessimistic_probability = kNaN;  // failed runs counted as violations
};

struct ConstraintResult {
  std::string name;
  std::string type;   // "outside-sphere", ...
  std::string scope;  // "path" | "pointwise"
  double max_probability = kNaN;
  double window[2] = {kNaN, kNaN};

  // Geometry from the case file, kept so that `report` can draw the zone in a
  // plane of outputs. Empty / NaN where the type does not use the field.
  std::vector<std::string> position;  // output names forming p
  std::vector<double> center;         // outside-sphere, outside-ellipsoid
  double radius = kNaN;               // outside-sphere
  std::vector<double> semi_axes;      // outside-ellipsoid
  std::vector<double> low, high;      // inside-box

  // From the surrogate (or, without germ, from the nominal run alone).
  Eigen::VectorXd pointwise_probability;     // [T], NaN outside the window
  Eigen::VectorXd pointwise_standard_error;  // [T]
  double path_probability = kNaN;
  double path_standard_error = kNaN;
  Eigen::VectorXd clearance_mean;      // [T]
  Eigen::VectorXd clearance_std;       // [T]
  Eigen::VectorXd clearance_quantile;  // [T], ε-quantile, ε = max_probability
  std::vector<std::uint8_t> gaussian_ok;  // [T], μ − Φ⁻¹(1−ε)σ ≥ 0
  std::vector<std::uint8_t> cantelli_ok;  // [T], μ − √((1−ε)/ε)σ ≥ 0
  double worst_pointwise_probability = kNaN;
  double worst_time = kNaN;         // time of the smallest clearance quantile in the window
  double margin = kNaN;             // ε-quantile of the path-minimum clearance (≥ 0: bound met with room)
  double required_backoff = kNaN;   // max over the window of μ − q_ε
  double tolerable_radius = kNaN;   // outside-sphere: largest radius the plan tolerates at ε
  double radius_inflation = kNaN;   // outside-sphere: tolerable_radius − radius
  std::string reformulation_note;   // where Gaussian/Cantelli disagree with sampling
  std::string verdict;              // one line
  bool within_bound = true;         // the probability used for the verdict ≤ max_probability

  bool has_montecarlo = false;
  MonteCarloConstraint montecarlo;
  ImportanceSamplingResult importance_sampling;
  std::string agreement;  // "agree" | "disagree" | "too few runs to tell" | "" (no cross-check)
  std::string agreement_cause;

  // Variance shares of the clearance per uncertain input (case-file order),
  // [T, n_uncertain], from a regression of the clearance on the surrogate basis;
  // lower/upper: delta-method interval at SurrogateResult::sobol_confidence.
  Eigen::MatrixXd sobol_first_by_input, sobol_total_by_input;
  Eigen::MatrixXd sobol_first_by_input_lower, sobol_first_by_input_upper;
  Eigen::MatrixXd sobol_total_by_input_lower, sobol_total_by_input_upper;
};

struct MonteCarloResult {
  bool done = false;
  long long runs = 0;
  long long failed_runs = 0;
  std::vector<std::string> failure_messages;  // the first few
  double confidence = 0.95;
  unsigned long long seed = 0;
  Eigen::MatrixXd mean, std;                  // [T, n_out]
  Eigen::MatrixXd mean_standard_error, std_standard_error;  // [T, n_out]
  Eigen::VectorXd validation_rmse;            // [n_out]
  Eigen::VectorXd validation_relative_rmse;   // [n_out], RMSE / std of the output
  Cube sample_outputs;                        // K kept runs, each [T, n_out]
  double joint_path_probability = kNaN;
  double joint_path_interval[2] = {kNaN, kNaN};
  std::string agreement;                      // overall "agree" | "disagree" | "too few runs to tell"
  std::string agreement_cause;                // one line: why (empty when they agree)
  std::string agreement_details;              // several lines: per constraint, warnings
  double false_alarm_level = kNaN;            // family-wise, Holm over constraints
  double relative_tolerance = kNaN;           // relevant |p_S − p_M| / p_M
};

struct SurrogateResult {
  bool done = false;
  std::string method;
  std::vector<std::string> germ_names;       // [d]
  std::vector<std::string> germ_families;    // [d], germ::to_string
  Eigen::Matrix<int, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor> multi_indices;  // [P, d]
  Cube coefficients;                          // T entries of [n_out, P]
  Eigen::MatrixXd mean, std;                  // [T, n_out]
  Cube sobol_first, sobol_total;              // T entries of [n_out, d]
  long long model_runs = 0;
  int level_reached = 0;
  int degree_reached = 0;
  bool tolerance_met = true;
  Eigen::VectorXd error_estimate;             // [n_out]
  std::vector<std::string> notes;
  long long samples = 0;                      // surrogate samples for probabilities
  std::string sampling = "fixed";             // "precision" (scrambled Sobol replicates to a target) or "fixed"
  bool sampling_target_met = true;            // precision: every standard error met the target before the cap
  double joint_path_probability = kNaN;
  std::vector<std::string> karhunen_loeve;    // one line per gaussian-process input

  // Quantile tubes: levels (sorted) and T entries of [n_out, k].
  std::vector<double> quantile_levels;
  Cube quantiles;
  long long quantile_samples = 0;
  // Variance shares per uncertain input: T entries of [n_out, n_uncertain], inputs
  // in case-file order (input_names), with delta-method intervals.
  std::vector<std::string> input_names;
  Cube sobol_first_by_input, sobol_total_by_input;
  Cube sobol_first_by_input_lower, sobol_first_by_input_upper;
  Cube sobol_total_by_input_lower, sobol_total_by_input_upper;
  double sobol_confidence = kNaN;
};

/// The deterministic tube (model/deterministic_tube.h).
struct TubeResult {
  bool done = false;
  std::vector<std::string> position;  // state names forming p
  std::string units;                  // unit of the radius (the position's, when they agree)
  Eigen::VectorXd radius;             // [T], NaN = no bound
  Eigen::VectorXd rate;               // [T], contraction rate, 1/s
  Eigen::MatrixXd metric;             // P(t0)
  std::string metric_kind;
  double sigma = kNaN;                // [tube] sigma
  bool bounded = true;
  std::string no_bound_reason;
  std::vector<std::string> assumptions;
  // Against the kept Monte Carlo runs: largest ‖p − p_nom‖ seen, the bound at
  // that time divided by it, and how many (run, time) pairs exceeded the bound.
  long long runs_checked = 0;
  double largest_observed_deviation = kNaN;
  double conservatism = kNaN;
  long long exceedances = 0;
};

struct AnalysisResult {
  // Root attributes.
  std::string tool_version;
  std::string case_sha256;
  std::string inputs_sha256;  // case file + referenced files + suite overrides (app/case_loader.h)
  std::string created_utc;
  unsigned long long seed = 0;
  std::string title;
  std::string case_path;
  std::string command;  // "simulate" | "run"

  std::vector<double> time;                 // [T]
  std::vector<std::string> output_names;    // [n_out]
  std::vector<std::string> output_units;    // [n_out], "" = not given
  Eigen::MatrixXd nominal_outputs;          // [T, n_out]

  SurrogateResult surrogate;
  std::vector<ConstraintResult> constraints;
  MonteCarloResult montecarlo;
  TubeResult tube;

  /// Exit code of product.md §3 for this result: 0 all within bounds, 1 a bound
  /// exceeded, 3 surrogate and Monte Carlo disagree (takes precedence over 1? no:
  /// a disagreement means the numbers cannot be trusted, so 3 wins).
  int verdict_exit_code() const;
};

}  // namespace sigmatube::result
