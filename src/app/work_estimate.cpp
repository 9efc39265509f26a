// SPDX-License-Identifier: MIT
#include "sigmatube/app/work_estimate.h"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "sigmatube/core/error.h"
#include "sigmatube/core/option_values.h"
#include "sigmatube/expansion/surrogate.h"
#include "sigmatube/model/plan.h"

namespace sigmatube::app {
namespace {

// Rough costs for the time estimate, from the bundled demo cases on the 2-core
// development machine (docs/performance.md): seconds per integration step and
// state, and per surrogate sample, report time, output and basis function.
// Common practice: such estimates are right within a factor of a few.
constexpr double kSecondsPerStepAndState = 4e-8;
constexpr double kSecondsPerSampleValueAndTerm = 1.5e-9;
// Surrogate samples are streamed in chunks of this many per thread (app/analysis.cpp).
constexpr double kSurrogateChunk = 2048;
constexpr double kBytesPerValue = 8;
constexpr double kGiB = 1024.0 * 1024.0 * 1024.0;

std::string rounded(double value) { return significant_digits(value, 3); }

std::string duration(double seconds) {
  if (seconds < 1) return "< 1 s";
  if (seconds < 120) return rounded(seconds) + " s";
  if (seconds < 7200) return rounded(seconds / 60) + " min";
  if (seconds < 3 * 86400) return rounded(seconds / 3600) + " h";
  return rounded(seconds / 86400) + " days";
}

std::string bytes(double value) {
  if (value < 1024.0 * 1024.0) return rounded(value / 1024.0) + " KiB";
  if (value < kGiB) return rounded(value / (1024.0 * 1024.0)) + " MiB";
  return rounded(value / kGiB) + " GiB";
}

}  // namespace

WorkEstimate estimate_work(const LoadedCase& loaded, std::optional<long long> samples,
                           std::optional<long long> montecarlo_runs) {
  const auto& o = loaded.options;
  const auto& cl = *loaded.closed_loop;
  WorkEstimate w;
  const int d = loaded.germ->dimension();
  w.design_runs = d > 0 ? expansion::planned_model_runs(loaded.germ->specs(), o.surrogate) : 1;
  if (d > 0 && o.surrogate.adaptive) w.design_runs = std::max<long long>(w.design_runs, o.surrogate.max_model_runs);
  w.montecarlo_runs = montecarlo_runs.value_or(o.montecarlo.runs);
  w.samples = d == 0 ? 1 : samples.value_or(o.surrogate.samples);
  w.report_times = static_cast<long long>(cl.report_times().size());
  w.outputs = cl.output_count();
  const double plan_length = cl.plan().end_time() - cl.plan().start_time();
  w.steps_per_run = std::max(plan_length / o.simulation.step_in_seconds, static_cast<double>(w.report_times));
  const double values_per_run = static_cast<double>(w.report_times) * w.outputs;
  w.sample_values = static_cast<double>(w.samples) * values_per_run;
  // The basis has at most as many terms as the design has runs.
  const double terms = static_cast<double>(w.design_runs);
  double quantile_buffers = 0;
  for (const auto& c : o.constraints)
    quantile_buffers += (c.max_probability * static_cast<double>(w.samples) + 2) * static_cast<double>(w.report_times);
  w.memory_bytes = kBytesPerValue * (2.0 * static_cast<double>(w.design_runs) * values_per_run  // design outputs
                                     + 3.0 * terms * values_per_run                             // coefficients, Sobol
                                     + 2.0 * kSurrogateChunk * values_per_run                   // a sample chunk
                                     + quantile_buffers                                        // margin quantiles
                                     + 4.0 * values_per_run);                                   // moments
  const double states = std::max(1, loaded.model->state_count());
  const double runs = static_cast<double>(w.design_runs + w.montecarlo_runs);
  w.seconds = runs * w.steps_per_run * states * states * kSecondsPerStepAndState +
              (w.sample_values + static_cast<double>(w.montecarlo_runs) * values_per_run) * terms *
                  kSecondsPerSampleValueAndTerm;
  return w;
}

void enforce_limits(const LoadedCase& loaded, const WorkEstimate& w, bool samples_from_option, bool runs_from_option) {
  const auto& o = loaded.options;
  const auto& limits = o.limits;
  const auto where = [&](const casefile::KeyLocations& keys, const SourceLocation& table, const std::string& key,
                         bool from_option, const std::string& option) {
    if (from_option) return SourceLocation{"", 0, option};
    return keys.of(key, table);
  };
  if (w.samples > limits.max_samples)
    throw InputError(where(o.surrogate.key_where, o.surrogate.where, "samples", samples_from_option, "--samples"),
                     std::to_string(w.samples) + " surrogate samples exceed the limit " +
                         std::to_string(limits.max_samples) + " (limits.max_samples)");
  if (w.sample_values > limits.max_sample_values)
    throw InputError(where(o.surrogate.key_where, o.surrogate.where, "samples", samples_from_option, "--samples"),
                     std::to_string(w.samples) + " samples × " + std::to_string(w.report_times) + " report times × " +
                         std::to_string(w.outputs) + " outputs = " + rounded(w.sample_values) +
                         " values exceed the limit " + rounded(limits.max_sample_values) + " (limits.max_sample_values)");
  if (w.montecarlo_runs + w.design_runs > limits.max_runs)
    throw InputError(where(o.montecarlo.key_where, o.montecarlo.where, "runs", runs_from_option, "--mc-runs"),
                     std::to_string(w.design_runs) + " design runs + " + std::to_string(w.montecarlo_runs) +
                         " Monte Carlo runs exceed the limit " + std::to_string(limits.max_runs) +
                         " model runs (limits.max_runs)");
  if (w.memory_bytes > limits.max_memory_gib * kGiB)
    throw InputError(limits.key_where.of("max_memory_gib", limits.where),
                     "the analysis needs an estimated " + bytes(w.memory_bytes) + ", more than the limit " +
                         rounded(limits.max_memory_gib) + " GiB (limits.max_memory_gib)");
}

std::string describe_work(const WorkEstimate& w) {
  std::ostringstream out;
  out << "work        " << w.design_runs << " design + " << w.montecarlo_runs << " Monte Carlo runs of "
      << rounded(w.steps_per_run) << " steps, " << w.samples << " samples × " << w.report_times << " times × "
      << w.outputs << " outputs\n";
  out << "estimate    memory ≈ " << bytes(w.memory_bytes) << ", time ≈ " << duration(w.seconds)
      << " on one core (rough; limits in [limits], docs/case-file.md)\n";
  return out.str();
}

}  // namespace sigmatube::app
