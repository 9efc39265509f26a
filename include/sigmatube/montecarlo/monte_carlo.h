// SPDX-License-Identifier: MIT
#pragma once
// Full-model Monte Carlo cross-check, written against callbacks so that it does not
// depend on the model code.
//
// Sample i uses the germ point ξ_j = F_j⁻¹(Φ(z_ij)), z_ij = CounterRng(seed).normal(i, j)
// (germ::from_standard_normal), so it depends on the seed and i only. Runs are
// processed in chunks of fixed size on several threads; per-chunk accumulators are
// merged in chunk order, so every number is bit-identical for any thread count.
//
// Failed runs (run_sample returns false) are counted, their first messages kept,
// and they are excluded from the moments and the validation — never dropped
// silently. For probabilities a failed run is unknown: each constraint carries its
// interval both ways over all N = successful + failed runs, Clopper–Pearson for
// k of N (failures counted safe) and for k + f of N (failures counted as
// violations); the pessimistic estimate (k + f)/N is what a verdict uses.
//
// Statistics over the n successful runs:
//   mean, std             per [T, n_out], std with n − 1
//   standard errors       mean: σ/√n; std: σ/√(2(n − 1)) (normal approximation, exact
//                         only for Gaussian outputs)
//   violation statistics  the same accumulator as for surrogate samples
//                         (constraints/violation_statistics.h)
//   path / joint intervals  Clopper–Pearson at `confidence` (clopper_pearson.h)
//   validation            surrogate vs model on the same ξ: RMSE_o = √(Σ_i Σ_t (ŷ − y)² / (n·T))
//                         and RMSE_o / s_o with s_o = √(mean_t σ²_{t,o}) (the output's
//                         RMS standard deviation over time; 1e-12·max(1, RMS|mean|) is
//                         used instead when the output does not vary)
//   validation by time    RMSE_{t,o} = √(Σ_i (ŷ − y)² / n), to name the worst time
//   paired counts         with a surrogate: per constraint the 2×2 table of surrogate
//                         and model violations on the same runs (paired.h)
//   saturation            runs where any commanded input left its [low, high] limit
#include <cstdint>
#include <functional>
#include <string>
#include <utility>
#include <vector>

#include <Eigen/Core>

#include "sigmatube/casefile/case_options.h"
#include "sigmatube/constraints/constraint.h"
#include "sigmatube/constraints/violation_statistics.h"
#include "sigmatube/germ/family.h"
#include "sigmatube/montecarlo/clopper_pearson.h"
#include "sigmatube/montecarlo/paired.h"

// Layer montecarlo/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::montecarlo {

/// One model run: fill outputs[t·n_out + o] (row-major by time) for germ point xi.
/// Return false (with *error set) when the integration failed.
using RunSample = std::function<bool(const double* xi, long long sample, double* outputs, std::string* error)>;
/// Surrogate at germ points xi [n, d] → values [n, T·n_out] (column c = t·n_out + o).
using SurrogateEvaluator = std::function<void(const Eigen::MatrixXd& xi, Eigen::MatrixXd& values)>;
/// Many model runs at once: samples [begin, end) at germ points xi ([end − begin, d],
/// row i − begin for sample i). Writes outputs[(i − begin)·T·n_out + c] and
/// ok[i − begin] (1 = success, 0 = failed). Called from the calling thread, once
/// per wave of chunks; it parallelizes (threads, MPI ranks, batched propagation)
/// as it likes. For failed rows run_sample is called again for the message.
using RunRows = std::function<void(long long begin, long long end, const Eigen::MatrixXd& xi, double* outputs,
                                   std::uint8_t* ok)>;
/// Called from the calling thread after each wave of chunks.
using Progress = std::function<void(long long done, long long total)>;

/// A commanded-input limit to watch for saturation: output column and its limits.
struct SaturationLimit {
  int output = 0;
  double low = 0.0;
  double high = 0.0;
};

/// Saturation limits for the outputs "cmd.<input>" named in the control limits.
/// @throws InputError at the limit's location when "cmd.<input>" is not an output.
std::vector<SaturationLimit> saturation_limits(const std::vector<casefile::InputLimit>& limits,
                                               const std::vector<std::string>& output_names);

struct MonteCarloRunOptions {
  int threads = 0;                  // 0 = hardware count
  long long chunk_size = 32;        // runs per chunk; fixes the merge order
  int kept_runs = 40;               // first K sample indices kept for plots
  int reported_failures = 5;        // failure messages kept (lowest sample indices)
  std::vector<SaturationLimit> saturation;
  // Optional: runs a whole wave through this instead of run_sample per run. The
  // accumulators see the same rows in the same chunk order, so every number is
  // the same as without it.
  RunRows run_rows;
};

struct ConstraintMonteCarlo {
  std::string name;
  Eigen::VectorXd pointwise_probability;  // [T], NaN outside the window
  long long path_violations = 0;
  double path_probability = 0.0;
  BinomialInterval path_interval;
  // Over all N runs, failed runs counted safe / counted as violations.
  BinomialInterval path_interval_failures_safe, path_interval_failures_violating;
  double pessimistic_path_probability = 0.0;       // (k + f)/N
  double pessimistic_pointwise_probability = 0.0;  // max over window times of (k_t + f)/N
};

struct MonteCarloResult {
  long long runs = 0;             // requested
  long long successful_runs = 0;
  long long failed_runs = 0;
  std::vector<std::pair<long long, std::string>> first_failures;  // (sample, message)
  double confidence = 0.95;
  Eigen::MatrixXd mean, std, mean_standard_error, std_standard_error;  // [T, n_out]
  std::vector<ConstraintMonteCarlo> constraints;
  long long joint_violations = 0;
  double joint_probability = 0.0;
  BinomialInterval joint_interval;
  constraints::ViolationResults violations;
  bool validated = false;                // a surrogate evaluator was given
  Eigen::VectorXd validation_rmse;       // [n_out]
  Eigen::VectorXd validation_relative_rmse;  // [n_out]
  Eigen::MatrixXd validation_rmse_by_time;   // [T, n_out]
  std::vector<PairedCounts> paired;          // per constraint, when validated
  long long saturated_runs = 0;
  double saturation_fraction = 0.0;      // saturated / successful
  Eigen::MatrixXd kept_outputs;          // [K, T·n_out]; failed runs are NaN rows
  std::vector<long long> kept_samples;   // [K]

  /// Plain-words summary: runs, failures (with the first messages), probabilities.
  std::string summary() const;
};

/// Germ point of sample i: ξ_j = from_standard_normal(spec_j, CounterRng(seed).normal(i, j)).
void germ_point(const std::vector<germ::FamilySpec>& families, unsigned long long seed, long long sample, double* xi);

/// @throws std::logic_error for inconsistent sizes; exceptions thrown by the
///   callbacks propagate (the lowest sample's first).
MonteCarloResult run_monte_carlo(const casefile::MonteCarloOptions& options, const std::vector<germ::FamilySpec>& families,
                                 const Eigen::VectorXd& times_in_seconds, int n_outputs,
                                 const std::vector<constraints::Constraint>& constraints, const RunSample& run_sample,
                                 const MonteCarloRunOptions& run_options = {},
                                 const SurrogateEvaluator& surrogate = nullptr, const Progress& progress = nullptr);

}  // namespace sigmatube::montecarlo
