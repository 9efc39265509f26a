// SPDX-License-Identifier: MIT
#pragma once
// The whole pipeline as two library calls: the nominal run, and the full
// analysis (surrogate → constraints → Monte Carlo cross-check).
#include <optional>

#include "sigmatube/app/case_loader.h"
#include "sigmatube/result/analysis_result.h"

// Layer app/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::app {

/// Command-line overrides of the case file, and how to run.
struct AnalysisOptions {
  int threads = 0;                                  // 0 = all hardware threads
  std::optional<unsigned long long> seed;           // overrides [montecarlo].seed
  std::optional<long long> mc_runs;                 // overrides [montecarlo].runs (0 disables)
  std::optional<long long> samples;                 // overrides [surrogate].samples
  bool progress = true;                             // progress bars on a terminal stderr
  // Rare events: importance sampling of the full model when a bound is at or
  // below this probability (and the Monte Carlo cross-check is on).
  double importance_sampling_threshold = 1e-4;
  // Most full-model runs per rare-event estimate; 0 = [montecarlo].rare_event_runs.
  long long importance_sampling_runs = 0;
};

/// The nominal closed-loop run only (time, outputs, nominal outputs).
result::AnalysisResult simulate_case(const LoadedCase& loaded);

/// Surrogate, constraints, margins, Monte Carlo cross-check. Throws
/// NumericalError if the nominal run or a design run fails.
result::AnalysisResult analyze_case(const LoadedCase& loaded, const AnalysisOptions& options);

}  // namespace sigmatube::app
