// SPDX-License-Identifier: MIT
#include "sigmatube/constraints/surrogate_sampling.h"

#include <atomic>

#include "sigmatube/core/counter_rng.h"
#include "sigmatube/core/scrambled_sobol.h"

namespace sigmatube::constraints {
std::vector<int> constraint_columns(const std::vector<Constraint>& list, int n_times, int n_out) {
  std::vector<char> used(static_cast<std::size_t>(n_out), 0);
  for (const auto& c : list)
    for (int o : c.output_indices()) used[static_cast<std::size_t>(o)] = 1;
  std::vector<int> columns;
  for (int t = 0; t < n_times; ++t)
    for (int o = 0; o < n_out; ++o)
      if (used[static_cast<std::size_t>(o)]) columns.push_back(t * n_out + o);
  return columns;
}

ViolationResults sample_surrogate(const std::vector<Constraint>& list, const expansion::Surrogate& surrogate,
                                  const germ::Germ& germ, const Eigen::VectorXd& times_in_seconds, long long samples,
                                  unsigned long long seed, int threads,
                                  const std::function<void(long long done)>& progress) {
  if (list.empty()) return {};
  const int n_out = surrogate.n_outputs;
  const int d = germ.dimension();
  const std::vector<int> columns = constraint_columns(list, surrogate.n_times, n_out);
  const CounterRng rng(seed ^ kSurrogateStream);
  std::atomic<long long> sampled{0};
  return stream_violation_statistics(
      list, times_in_seconds, n_out, samples, kSurrogateChunk, threads,
      [&](long long begin, long long end, Eigen::MatrixXd& Y) {
        const Eigen::Index n = static_cast<Eigen::Index>(end - begin);
        expansion::surrogate_outputs(surrogate, germ::germ_points(germ, germ::standard_normal_points(rng, begin, n, d)),
                                     columns, Y);
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
  const int n_out = surrogate.n_outputs;
  const std::vector<int> columns = constraint_columns(list, surrogate.n_times, n_out);
  std::atomic<long long> sampled{0};
  const PrecisionSampling p = stream_to_precision(
      list, times_in_seconds, n_out, target, kSurrogateChunk, threads,
      [&](int replicate, long long first, long long count, Eigen::MatrixXd& Y) {
        const ScrambledSobol sobol(d, seed ^ kSurrogateStream, static_cast<std::uint64_t>(replicate));
        Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor> z(count, d);
        sobol.normals(static_cast<std::uint64_t>(first), static_cast<std::size_t>(count), z.data());
        expansion::surrogate_outputs(surrogate, germ::germ_points(germ, z), columns, Y);
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
