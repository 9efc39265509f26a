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
};

struct ImportanceSamplingResult {
  bool done = false;
  long long runs = 0;
  double probability = kNaN;
  double standard_error = kNaN;
  double interval[2] = {kNaN, kNaN};
  double effective_sample_size = kNaN;
  double design_point_distance = kNaN;  // ‖z*‖ in standard-normal germ space (reliability index β)
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
  std::string agreement;  // "agree" | "disagree" | "" (no cross-check)
  std::string agreement_cause;
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
  std::string agreement;                      // overall "agree" | "disagree"
  std::string agreement_cause;
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
};

struct AnalysisResult {
  // Root attributes.
  std::string tool_version;
  std::string case_sha256;
  std::string created_utc;
  unsigned long long seed = 0;
  std::string title;
  std::string case_path;
  std::string command;  // "simulate" | "run"

  std::vector<double> time;                 // [T]
  std::vector<std::string> output_names;    // [n_out]
  Eigen::MatrixXd nominal_outputs;          // [T, n_out]

  SurrogateResult surrogate;
  std::vector<ConstraintResult> constraints;
  MonteCarloResult montecarlo;

  /// Exit code of product.md §3 for this result: 0 all within bounds, 1 a bound
  /// exceeded, 3 surrogate and Monte Carlo disagree (takes precedence over 1? no:
  /// a disagreement means the numbers cannot be trusted, so 3 wins).
  int verdict_exit_code() const;
};

}  // namespace sigmatube::result
