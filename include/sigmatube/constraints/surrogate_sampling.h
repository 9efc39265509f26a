// SPDX-License-Identifier: MIT
#pragma once
// The surrogate-sampling stage of an analysis: every constraint's violation
// statistics (violation_statistics.h) from samples of the surrogate
// (expansion/surrogate.h) at germ points drawn through the germ (germ/germ.h),
// streamed in chunks so that memory stays bounded.
#include <functional>
#include <vector>

#include <Eigen/Core>

#include "sigmatube/constraints/constraint.h"
#include "sigmatube/constraints/violation_statistics.h"
#include "sigmatube/expansion/surrogate.h"
#include "sigmatube/germ/germ.h"

// Layer constraints/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::constraints {

/// The outputs the constraints read, and the constraints rewritten to read them
/// from blocks that hold only these outputs: sampling then evaluates and keeps
/// [N, T·outputs.size()] values, never the full [N, T·n_out].
struct CompactOutputs {
  std::vector<int> outputs;          ///< output indices read by some constraint, ascending
  std::vector<int> columns;          ///< surrogate columns t·n_out + outputs[k], t-major: column t·outputs.size() + k of the block
  std::vector<Constraint> constraints;  ///< the list, reading output outputs[k] from column k of each time's block
};
CompactOutputs compact_outputs(const std::vector<Constraint>& list, int n_times, int n_out);

/// The surrogate's sampling stream must differ from the Monte Carlo stream of the
/// same seed, or the cross-check would reuse the very germ points it checks.
inline constexpr unsigned long long kSurrogateStream = 0x9E3779B97F4A7C15ULL;

/// Surrogate samples per chunk: bounds memory at chunk × (T·outputs read) doubles per thread.
inline constexpr long long kSurrogateChunk = 2048;

/// `samples` surrogate samples: sample i at the germ point of the standard-normal
/// point CounterRng(seed ^ kSurrogateStream).normal(i, j). Bit-identical for any
/// thread count. `progress` (may be empty) receives the samples done so far, from
/// any thread. Empty constraint list: default ViolationResults, nothing sampled.
ViolationResults sample_surrogate(const std::vector<Constraint>& list, const expansion::Surrogate& surrogate,
                                  const germ::Germ& germ, const Eigen::VectorXd& times_in_seconds, long long samples,
                                  unsigned long long seed, int threads,
                                  const std::function<void(long long done)>& progress);

/// The case's sampling: with `options.sampling` "precision" (and a germ of at most
/// ScrambledSobol::max_dimension() dimensions) scrambled Sobol replicates until
/// every probability meets the target, at most `cap` samples
/// (stream_to_precision); otherwise exactly `cap` pseudo-random samples
/// (sample_surrogate).
struct SurrogateSampling {
  ViolationResults results;
  long long samples = 0;    // samples used
  bool precision = false;   // drawn by "precision" sampling
  bool target_met = true;
};
SurrogateSampling sample_surrogate_to_target(const std::vector<Constraint>& list, const expansion::Surrogate& surrogate,
                                             const germ::Germ& germ, const Eigen::VectorXd& times_in_seconds,
                                             const casefile::SurrogateOptions& options, long long cap,
                                             unsigned long long seed, int threads,
                                             const std::function<void(long long done)>& progress);

}  // namespace sigmatube::constraints
