// SPDX-License-Identifier: MIT
#include "sigmatube/constraints/surrogate_sampling.h"

#include <atomic>

#include "sigmatube/core/counter_rng.h"
#include "sigmatube/core/scrambled_sobol.h"

namespace sigmatube::constraints {
CompactOutputs compact_outputs(const std::vector<Constraint>& list, int n_times, int n_out) {
  CompactOutputs out;
  std::vector<int> column_of(static_cast<std::size_t>(n_out), -1);
  for (const auto& c : list)
    for (int o : c.output_indices()) column_of[static_cast<std::size_t>(o)] = 0;
  for (int o = 0; o < n_out; ++o)
    if (column_of[static_cast<std::size_t>(o)] == 0) {
      column_of[static_cast<std::size_t>(o)] = static_cast<int>(out.outputs.size());
      out.outputs.push_back(o);
    }
  for (int t = 0; t < n_times; ++t)
    for (int o : out.outputs) out.columns.push_back(t * n_out + o);
  out.constraints.reserve(list.size());
  for (const auto& c : list) out.constraints.push_back(c.with_output_columns(column_of));
  return out;
}

ViolationResults sample_surrogate(const std::vector<Constraint>& list, const expansion::Surrogate& surrogate,
                                  const germ::Germ& germ, const Eigen::VectorXd& times_in_seconds, long long samples,
                                  unsigned long long seed, int threads,
                                  const std::function<void(long long done)>& progress) {
  if (list.empty()) return {};
  const int d = germ.dimension();
  const CompactOutputs compact = compact_outputs(list, surrogate.n_times, surrogate.n_outputs);
  const expansion::PackedColumns packed(surrogate.coefficients, compact.columns);  // once for all chunks
  const CounterRng rng(seed ^ kSurrogateStream);
  std::atomic<long long> sampled{0};
  return stream_violation_statistics(
      compact.constraints, times_in_seconds, static_cast<int>(compact.outputs.size()), samples, kSurrogateChunk, threads,
      [&](long long begin, long long end, Eigen::MatrixXd& Y) {
        const Eigen::Index n = static_cast<Eigen::Index>(end - begin);
        surrogate.evaluate(germ::germ_points(germ, germ::standard_normal_points(rng, begin, n, d)), packed, Y);
        const long long done = sampled += n;
        if (progress) progress(done);
      });
}

SurrogateSampling sample_surrogate_to_target(const std::vector<Constraint>& list, const expansion::Surrogate& surrogate,
                                             const germ::Germ& germ, const Eigen::VectorXd& times_in_seconds,
                                             const casefile::SurrogateOptions& options, long long cap,
                                             unsigned long long seed, int threads,
                                             const std::function<void(long long done)>& progress) {
  SurrogateSampling out;
  const int d = germ.dimension();
  if (list.empty() || options.sampling != casefile::SurrogateSampling::precision || d < 1 ||
      d > ScrambledSobol::max_dimension()) {
    out.results = sample_surrogate(list, surrogate, germ, times_in_seconds, cap, seed, threads, progress);
    out.samples = cap;
    return out;
  }
  PrecisionTarget target;
  target.cap = cap;
  target.relative = options.sampling_relative_error;
  target.absolute = options.sampling_absolute_error;
  const CompactOutputs compact = compact_outputs(list, surrogate.n_times, surrogate.n_outputs);
  const expansion::PackedColumns packed(surrogate.coefficients, compact.columns);  // once for all chunks
  std::atomic<long long> sampled{0};
  const PrecisionSampling p = stream_to_precision(
      compact.constraints, times_in_seconds, static_cast<int>(compact.outputs.size()), target, kSurrogateChunk, threads,
      [&](int replicate, long long first, long long count, Eigen::MatrixXd& Y) {
        const ScrambledSobol sobol(d, seed ^ kSurrogateStream, static_cast<std::uint64_t>(replicate));
        Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor> z(count, d);
        sobol.normals(static_cast<std::uint64_t>(first), static_cast<std::size_t>(count), z.data());
        surrogate.evaluate(germ::germ_points(germ, z), packed, Y);
        const long long done = sampled += count;
        if (progress) progress(done);
      });
  out.results = p.results;
  out.samples = p.samples;
  out.precision = true;
  out.target_met = p.target_met;
  return out;
}

}  // namespace sigmatube::constraints
