// SPDX-License-Identifier: MIT
#pragma once
// Streaming violation statistics of a set of constraints on a report grid. Samples
// arrive in chunks: Y is [n, T·n_out], column c = t·n_out + o, so
// Y.middleCols(t·n_out, n_out) holds the outputs at report time t. The same
// accumulator serves surrogate samples (millions, streamed) and full-model Monte
// Carlo runs, so both are summarised by exactly the same rules:
//
//   pointwise probability  p_t = #{c_t < 0}/N, standard error √(p_t(1 − p_t)/N),
//                          NaN outside the constraint's window
//   path probability       #{min over window times of c_t < 0}/N (a violation at any
//                          report time inside the window)
//   joint probability      #{any constraint path-violated}/N
//   clearance mean, std    per time (std with N − 1), over all report times
//   clearance quantile     q_ε,t = x_(⌊εN⌋), the 0-based order statistic of the N
//                          clearances at time t, ε = max_probability. This index makes
//                          q_ε ≥ 0 exactly when p̂ ≤ ε (no rounding gap between the
//                          margin and the probability).
//   path margin            the same order statistic of the per-sample path minimum.
//
// Quantiles are exact: each accumulator keeps (at least) the k = ⌊ε·N_max⌋ + 1
// smallest values per time, in an unordered buffer of at most 2k values that is cut
// back to its k smallest by one selection when full (amortized O(1) per value,
// memory O(k·T)); values not below the buffer's k-th smallest are never kept. N_max is an upper bound on
// the total number of samples given at construction (Monte Carlo may lose failed
// runs, so the final N may be smaller; ⌊εN⌋ < k still holds).
//
// Determinism: counts and the kept smallest values do not depend on merge order;
// the floating sums behind mean and std are merged (Chan, Golub & LeVeque, "Updating
// formulae and a pairwise algorithm for computing sample variances", 1979) in the
// order merge() is called. Callers merge per-chunk accumulators in chunk order, with
// chunk boundaries fixed by count and chunk size only, so results are bit-identical
// for any thread count. stream_violation_statistics() does exactly that.
#include <cstdint>
#include <functional>
#include <limits>
#include <vector>

#include <Eigen/Core>

#include "sigmatube/constraints/constraint.h"

// Layer constraints/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::constraints {

/// Results for one constraint.
struct ConstraintStatistics {
  std::string name;
  double max_probability = 0.0;
  casefile::ConstraintScope scope = casefile::ConstraintScope::path;
  std::vector<std::uint8_t> in_window;              // [T]
  std::vector<long long> pointwise_violations;      // [T]
  Eigen::VectorXd pointwise_probability;            // [T], NaN outside the window
  Eigen::VectorXd pointwise_standard_error;         // [T], NaN outside the window
  long long path_violations = 0;
  double path_probability = 0.0;
  double path_standard_error = 0.0;                 // √(p(1 − p)/N)
  Eigen::VectorXd clearance_mean;                   // [T]
  Eigen::VectorXd clearance_std;                    // [T]
  Eigen::VectorXd clearance_quantile;               // [T], x_(⌊εN⌋) at every time
  double path_margin = 0.0;                         // x_(⌊εN⌋) of the path minimum
  double path_minimum_mean = 0.0;

  /// The probability the bound applies to: the path probability for scope = path,
  /// the largest pointwise probability in the window for scope = pointwise.
  double governing_probability() const;
};

struct ViolationResults {
  long long samples = 0;
  std::vector<ConstraintStatistics> constraints;
  long long joint_violations = 0;
  double joint_probability = 0.0;
  double joint_standard_error = 0.0;
};

class ViolationStatistics {
 public:
  /// @param constraints   kept by pointer: must outlive the accumulator
  /// @param times_in_seconds  the report grid [T]
  /// @param max_samples   an upper bound on the total N over all merged chunks
  /// @throws InputError when a constraint's window contains no report time.
  ViolationStatistics(const std::vector<Constraint>& constraints, Eigen::VectorXd times_in_seconds, int n_outputs,
                      long long max_samples);

  /// Adds n samples; first_sample is the global index of row 0 (for error messages).
  /// @throws NumericalError naming the sample and time when a clearance is NaN.
  void add(const Eigen::Ref<const Eigen::MatrixXd>& Y, long long first_sample = -1);
  /// Adds the rows of Y whose mask entry is true (failed Monte Carlo runs are skipped).
  void add(const Eigen::Ref<const Eigen::MatrixXd>& Y, const std::vector<std::uint8_t>& keep, long long first_sample);
  /// Folds in an accumulator over later samples (call in sample order).
  void merge(const ViolationStatistics& later);
  /// The same as merge(later[0]), merge(later[1]), … (bit for bit), with the
  /// report times spread over `threads` threads and the kept smallest values
  /// merged in bulk (one selection per time instead of a heap push per value).
  void merge_all(const std::vector<ViolationStatistics>& later, int threads);
  /// From now on keeps no value at or above `total`'s current limits (the k-th
  /// smallest value so far at each time and of the path minima): for a partial
  /// accumulator that will be merged into `total`, whose kept values already
  /// include k values at or below each limit, so the merged order statistics are
  /// the same. Spares partials of later waves from keeping every value of their chunk.
  void keep_below_limits_of(const ViolationStatistics& total);
  /// The accumulator's state as doubles (counts bit-copied), for sending to
  /// other MPI ranks; unpack() restores it into an accumulator built with the
  /// same constraints, times, outputs and max_samples, bit for bit.
  std::vector<double> pack() const;
  /// @throws std::logic_error when `data` does not fit this accumulator's shape.
  void unpack(const double* data, std::size_t size);
  long long samples() const { return n_; }
  ViolationResults results() const;

  /// Violation counts so far: what the replicate standard errors of
  /// stream_to_precision() are made of.
  struct Counts {
    long long samples = 0;
    std::vector<long long> path;                      // [constraints]
    std::vector<std::vector<long long>> pointwise;    // [constraints][T]
    long long joint = 0;
  };
  Counts counts() const;

  /// Per-sample minimum clearance over the window's report times ([n]); +∞ never
  /// occurs because construction rejects windows without a report time.
  static void path_minimum(const Constraint& constraint, const Eigen::VectorXd& times_in_seconds, int n_outputs,
                           const Eigen::Ref<const Eigen::MatrixXd>& Y, Eigen::Ref<Eigen::VectorXd> minimum);

 private:
  struct PerConstraint {
    std::vector<long long> violations;                  // [T]
    std::vector<double> mean, m2;                       // [T], per-accumulator running moments
    std::vector<std::vector<double>> smallest;          // [T] kept values (≤ 2k, unordered)
    std::vector<double> limit;                          // [T] keep only values below this (k-th smallest once cut)
    std::vector<double> smallest_path;                  // kept path minima (≤ 2k, unordered)
    double path_limit = std::numeric_limits<double>::infinity();
    long long path_violations = 0;
    double path_mean = 0.0;
    std::size_t k = 1;
  };
  const std::vector<Constraint>* constraints_;
  Eigen::VectorXd times_;
  int n_outputs_;
  long long max_samples_;
  long long n_ = 0;
  long long joint_violations_ = 0;
  std::vector<PerConstraint> per_;
};

/// Streams `count` samples: fill(begin, end, Y) must write the rows of samples
/// [begin, end) into Y ([end − begin, T·n_out]). Chunks of `chunk` samples run on
/// `threads` threads in waves of a fixed number of chunks; accumulators are merged
/// in chunk order, so the result is bit-identical for any thread count.
ViolationResults stream_violation_statistics(
    const std::vector<Constraint>& constraints, const Eigen::VectorXd& times_in_seconds, int n_outputs,
    long long count, long long chunk, int threads,
    const std::function<void(long long begin, long long end, Eigen::MatrixXd& Y)>& fill);

/// Sampling by target precision with randomized quasi-Monte Carlo
/// (core/scrambled_sobol.h): R independently scrambled replicates of the same
/// Sobol points are sampled side by side, n = first_points, 2·first_points, …
/// points each (powers of two keep the Sobol balance). After each doubling every
/// reported probability q — each constraint's path probability, its pointwise
/// probability at every report time in the window, and the joint probability —
/// has the replicate estimate q̄ = mean of q_r and the standard error
/// s = sd(q_r)/√R. Sampling stops at the first check where, for every q,
///   s ≤ max(relative · q̄, absolute · bound)   and   (any violation seen, or 3/N ≤ absolute · bound),
/// bound being the constraint's max_probability (the smallest one for the joint
/// probability) and N = R·n; the second condition keeps a run that has seen no
/// violation from stopping before the "rule of three" 95 % upper bound 3/N is
/// within the absolute tolerance. It also stops when the next doubling would
/// exceed `cap` samples in all (the cap is then the sample count, rounded down to
/// R times a power of two times first_points). Standard errors in the results are
/// the replicate ones.
struct PrecisionTarget {
  long long cap = 1000000;       // most samples in all
  int replicates = 16;           // R ≥ 2
  long long first_points = 1024; // per replicate at the first check
  double relative = 0.01;
  double absolute = 0.05;        // × the constraint's max_probability
};

struct PrecisionSampling {
  ViolationResults results;      // pooled over all replicates; replicate standard errors
  long long samples = 0;         // R·n used
  int replicates = 0;
  bool target_met = false;       // false: stopped at the cap
};

/// fill(replicate, first, count, Y): rows of points first … first + count − 1 of
/// that replicate into Y ([count, T·n_out]). Work items run on `threads` threads
/// and merge in a fixed order: the result is bit-identical for any thread count.
PrecisionSampling stream_to_precision(
    const std::vector<Constraint>& constraints, const Eigen::VectorXd& times_in_seconds, int n_outputs,
    const PrecisionTarget& target, long long chunk, int threads,
    const std::function<void(int replicate, long long first, long long count, Eigen::MatrixXd& Y)>& fill);

}  // namespace sigmatube::constraints
