// SPDX-License-Identifier: MIT
#pragma once
// Analyses beside the probabilistic tube, as stages on a result under
// construction: quantile tubes, variance shares per uncertain input (outputs and
// constraint clearances) and the deterministic tube bound with its check against
// the kept Monte Carlo runs. Each stage reads what earlier stages put into the
// result and adds its own fields (docs/result-file.md).
#include <cstdint>
#include <memory>

#include "sigmatube/app/case_loader.h"
#include "sigmatube/expansion/surrogate.h"
#include "sigmatube/result/analysis_result.h"

namespace sigmatube::app {

/// Surrogate samples used for the quantile tubes and the clearance regressions
/// (the first this many of the surrogate's sampling stream, or all if fewer).
inline constexpr long long kQuantileSamples = 50000;

/// Quantile tubes of every output at constraints::quantile_levels of the
/// constraints' ε, from the first min(samples, kQuantileSamples) points of the
/// standard-normal stream CounterRng(stream_seed) (the stream the constraint
/// probabilities use). Needs r.surrogate filled; d = 0 gives the nominal run.
void quantile_stage(const LoadedCase& loaded, const expansion::Surrogate& surrogate, unsigned long long stream_seed,
                    long long samples, int threads, result::AnalysisResult& r);

/// Variance shares per [[uncertain]] entry of every output (from the surrogate's
/// coefficients, intervals from summary.covariance) and of every constraint's
/// clearance (a least-squares fit of the clearance on the surrogate's basis over
/// the same sample points, intervals from that fit), at `confidence`, on
/// `threads` threads (the same values for any count).
void input_share_stage(const LoadedCase& loaded, const expansion::Surrogate& surrogate,
                       const expansion::SurrogateSummary& summary, unsigned long long stream_seed, long long samples,
                       double confidence, int threads, result::AnalysisResult& r);

/// The deterministic tube of the case's [tube] table into r.tube (nothing
/// without one). Needs r.time, r.output_names, r.output_units.
void tube_stage(const LoadedCase& loaded, result::AnalysisResult& r);

/// Watches full-model runs (rows [count, T·n_out], as the Monte Carlo waves
/// give them) for their largest ‖p − p_nom‖ per report time; finish() writes the
/// largest observed deviation, the conservatism (bound / largest deviation, at
/// the time of that deviation) and the number of (run, time) pairs above the
/// bound into r.tube. Inactive when r.tube is not done. Thread-safe observe().
class TubeCheck {
 public:
  explicit TubeCheck(const result::AnalysisResult& r);
  ~TubeCheck();
  TubeCheck(const TubeCheck&) = delete;
  TubeCheck& operator=(const TubeCheck&) = delete;
  void observe(const double* rows, long long count, const std::uint8_t* ok);
  void finish(result::AnalysisResult& r) const;

 private:
  struct State;
  std::unique_ptr<State> state_;
};

}  // namespace sigmatube::app
