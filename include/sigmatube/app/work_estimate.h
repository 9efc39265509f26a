// SPDX-License-Identifier: MIT
#pragma once
// The size of an analysis, estimated from the case alone (nothing is run), and
// the [limits] every command enforces before any work (docs/case-file.md, "Limits").
#include <optional>
#include <string>

#include "sigmatube/app/case_loader.h"

namespace sigmatube::app {

struct WorkEstimate {
  long long design_runs = 0;      // surrogate design (first step when adaptive)
  long long montecarlo_runs = 0;
  long long samples = 0;          // surrogate samples for probabilities
  long long report_times = 0;
  int outputs = 0;
  double steps_per_run = 0.0;     // plan length / step (dopri5: at least this many)
  double sample_values = 0.0;     // samples × report times × outputs
  double memory_bytes = 0.0;      // estimated peak
  double seconds = 0.0;           // rough estimate on one core
};

/// Estimates the work of `run` for the case, with the command-line overrides.
WorkEstimate estimate_work(const LoadedCase& loaded, std::optional<long long> samples = std::nullopt,
                           std::optional<long long> montecarlo_runs = std::nullopt);

/// Throws InputError naming the case key (or the command-line option when an
/// override is the cause) and the limit, when the estimate exceeds [limits].
void enforce_limits(const LoadedCase& loaded, const WorkEstimate& estimate, bool samples_from_option = false,
                    bool runs_from_option = false);

/// One line for `check`: "work        265 design runs + 2000 Monte Carlo runs, …, memory ≈ 1.2 GiB, time ≈ 3 min".
std::string describe_work(const WorkEstimate& estimate);

}  // namespace sigmatube::app
