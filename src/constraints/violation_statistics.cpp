// SPDX-License-Identifier: MIT
#include "sigmatube/constraints/violation_statistics.h"

#include "sigmatube/core/running_moments.h"

#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <memory>
#include <mutex>
#include <sstream>
#include <stdexcept>

#include "sigmatube/core/distributed.h"
#include "sigmatube/core/error.h"
#include "sigmatube/core/parallel.h"

namespace sigmatube::constraints {
namespace {
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
// Chunks handed to the threads at once; fixed so that the merge order never
// depends on the thread count, small so that at most this many accumulators live.
constexpr long long kChunksPerWave = 16;

// Index m of the order statistic x_(m) used as the ε-quantile: the largest m with
// m/N ≤ ε, computed with the same double division as p̂ = V/N so that
// x_(m) ≥ 0 ⟺ V ≤ m ⟺ p̂ ≤ ε holds without a rounding gap.
long long quantile_index(double epsilon, long long n) {
  if (n <= 0) return 0;
  const double dn = static_cast<double>(n);
  long long m = static_cast<long long>(std::floor(epsilon * dn));
  m = std::clamp<long long>(m, 0, n - 1);
  while (m + 1 <= n - 1 && static_cast<double>(m + 1) / dn <= epsilon) ++m;
  while (m > 0 && static_cast<double>(m) / dn > epsilon) --m;
  return m;
}

// Cuts `kept` back to its k smallest values and sets `limit` to the largest of
// them (+∞ while fewer than k are kept).
void cut_to_smallest(std::vector<double>& kept, double& limit, std::size_t k) {
  if (kept.size() > k) {
    std::nth_element(kept.begin(), kept.begin() + static_cast<std::ptrdiff_t>(k - 1), kept.end());
    kept.resize(k);
    limit = kept[k - 1];
  } else if (kept.size() == k) {
    limit = *std::max_element(kept.begin(), kept.end());
  }
}

// Keeps x when it may be among the k smallest values seen: appends, and cuts the
// buffer back to k when it reaches 2k. The kept values always contain the k
// smallest of every value offered (ties at the limit are equal values).
void push_bounded(std::vector<double>& kept, double& limit, std::size_t k, double x) {
  if (!(x < limit)) return;
  kept.push_back(x);
  if (kept.size() >= 2 * k) cut_to_smallest(kept, limit, k);
}

// The k smallest of kept ∪ parts' kept values: the same multiset as pushing
// every value with push_bounded, in any order.
template <class Get>
void merge_bounded(std::vector<double>& kept, double& limit, std::size_t k, std::size_t parts, const Get& get) {
  std::size_t total = kept.size();
  for (std::size_t q = 0; q < parts; ++q) total += get(q).size();
  kept.reserve(total);
  for (std::size_t q = 0; q < parts; ++q)
    for (double x : get(q))
      if (x < limit) kept.push_back(x);
  cut_to_smallest(kept, limit, k);
}

double order_statistic(std::vector<double> heap, long long m) {
  if (static_cast<std::size_t>(m) >= heap.size()) throw std::logic_error("ViolationStatistics: quantile heap too small");
  std::nth_element(heap.begin(), heap.begin() + m, heap.end());
  return heap[static_cast<std::size_t>(m)];
}

}  // namespace

double ConstraintStatistics::governing_probability() const {
  if (scope == casefile::ConstraintScope::path) return path_probability;
  double worst = kNaN;
  for (Eigen::Index t = 0; t < pointwise_probability.size(); ++t) {
    if (!in_window[static_cast<std::size_t>(t)]) continue;
    if (std::isnan(worst) || pointwise_probability[t] > worst) worst = pointwise_probability[t];
  }
  return worst;
}

ViolationStatistics::ViolationStatistics(const std::vector<Constraint>& constraints, Eigen::VectorXd times_in_seconds,
                                         int n_outputs, long long max_samples)
    : constraints_(&constraints), times_(std::move(times_in_seconds)), n_outputs_(n_outputs), max_samples_(max_samples) {
  if (n_outputs <= 0 || max_samples < 0) throw std::logic_error("ViolationStatistics: bad sizes");
  const std::size_t T = static_cast<std::size_t>(times_.size());
  per_.resize(constraints.size());
  for (std::size_t j = 0; j < constraints.size(); ++j) {
    const Constraint& constraint = constraints[j];
    bool any = false;
    for (Eigen::Index t = 0; t < times_.size(); ++t) any = any || constraint.in_window(times_[t]);
    if (!any) {
      std::ostringstream msg;
      msg << "constraint '" << constraint.name() << "': its window [" << constraint.window().first << ", "
          << constraint.window().second << "] s contains no report time";
      SourceLocation where = constraint.where();
      where.key = where.key.empty() ? "window" : where.key + ".window";
      throw InputError(where, msg.str());
    }
    PerConstraint& p = per_[j];
    p.violations.assign(T, 0);
    p.mean.assign(T, 0.0);
    p.m2.assign(T, 0.0);
    p.smallest.assign(T, {});
    p.limit.assign(T, std::numeric_limits<double>::infinity());
    p.k = static_cast<std::size_t>(quantile_index(constraint.max_probability(), std::max<long long>(max_samples, 1)) + 1);
  }
}

void ViolationStatistics::path_minimum(const Constraint& constraint, const Eigen::VectorXd& times, int n_outputs,
                                       const Eigen::Ref<const Eigen::MatrixXd>& Y, Eigen::Ref<Eigen::VectorXd> minimum) {
  minimum.setConstant(std::numeric_limits<double>::infinity());
  Eigen::VectorXd c(Y.rows());
  for (Eigen::Index t = 0; t < times.size(); ++t) {
    if (!constraint.in_window(times[t])) continue;
    constraint.clearance(Y.middleCols(t * n_outputs, n_outputs), times[t], c);
    minimum = minimum.cwiseMin(c);
  }
}

void ViolationStatistics::add(const Eigen::Ref<const Eigen::MatrixXd>& Y, long long first_sample) {
  add(Y, std::vector<std::uint8_t>(static_cast<std::size_t>(Y.rows()), 1), first_sample);
}

void ViolationStatistics::add(const Eigen::Ref<const Eigen::MatrixXd>& Y, const std::vector<std::uint8_t>& keep,
                              long long first_sample) {
  const Eigen::Index T = times_.size();
  if (Y.cols() != T * n_outputs_) throw std::logic_error("ViolationStatistics::add: Y has the wrong number of columns");
  if (static_cast<Eigen::Index>(keep.size()) != Y.rows()) throw std::logic_error("ViolationStatistics::add: mask size");
  const Eigen::Index rows = Y.rows();
  long long nb = 0;
  for (auto k : keep) nb += k ? 1 : 0;
  if (n_ + nb > max_samples_) throw std::logic_error("ViolationStatistics::add: more samples than max_samples");
  if (nb == 0) return;
  std::vector<std::uint8_t> joint(static_cast<std::size_t>(rows), 0);
  Eigen::VectorXd path_min(rows);
  const bool every_row = nb == rows;
  // Report times go kTimesAtOnce at a time: their sums run as independent chains
  // (each in its own row order, so the same bits as one time after the other).
  constexpr Eigen::Index kTimesAtOnce = 4;
  Eigen::MatrixXd C(rows, kTimesAtOnce);
  for (std::size_t j = 0; j < per_.size(); ++j) {
    const Constraint& constraint = (*constraints_)[j];
    PerConstraint& p = per_[j];
    path_min.setConstant(std::numeric_limits<double>::infinity());
    for (Eigen::Index t0 = 0; t0 < T; t0 += kTimesAtOnce) {
      const Eigen::Index g = std::min(kTimesAtOnce, T - t0);
      for (Eigen::Index q = 0; q < g; ++q)
        constraint.clearance(Y.middleCols((t0 + q) * n_outputs_, n_outputs_), times_[t0 + q], C.col(q));
      const auto nan_at = [&](Eigen::Index q) {
        for (Eigen::Index i = 0; i < rows; ++i) {
          if (!keep[static_cast<std::size_t>(i)] || !std::isnan(C(i, q))) continue;
          std::ostringstream msg;
          msg << "constraint '" << constraint.name() << "': clearance is NaN";
          throw NumericalError(msg.str(), first_sample < 0 ? -1 : first_sample + i, times_[t0 + q]);
        }
      };
      double sum[kTimesAtOnce] = {0.0, 0.0, 0.0, 0.0};
      if (every_row && g == kTimesAtOnce) {
        const double *c0 = C.col(0).data(), *c1 = C.col(1).data(), *c2 = C.col(2).data(), *c3 = C.col(3).data();
        for (Eigen::Index i = 0; i < rows; ++i) {
          sum[0] += c0[i];
          sum[1] += c1[i];
          sum[2] += c2[i];
          sum[3] += c3[i];
        }
      } else {
        for (Eigen::Index q = 0; q < g; ++q)
          for (Eigen::Index i = 0; i < rows; ++i)
            if (keep[static_cast<std::size_t>(i)]) sum[q] += C(i, q);
      }
      // A NaN clearance makes its sum NaN (the sum can also be NaN from +∞ − ∞: then no NaN is found).
      for (Eigen::Index q = 0; q < g; ++q)
        if (std::isnan(sum[q])) nan_at(q);
      double chunk_mean[kTimesAtOnce], chunk_m2[kTimesAtOnce] = {0.0, 0.0, 0.0, 0.0};
      for (Eigen::Index q = 0; q < g; ++q) {
        const std::size_t ts = static_cast<std::size_t>(t0 + q);
        const double* c = C.col(q).data();
        chunk_mean[q] = sum[q] / static_cast<double>(nb);
        std::vector<double>& kept = p.smallest[ts];
        double& limit = p.limit[ts];
        for (Eigen::Index i = 0; i < rows; ++i)
          if (c[i] < limit && keep[static_cast<std::size_t>(i)]) push_bounded(kept, limit, p.k, c[i]);
        if (constraint.in_window(times_[t0 + q])) {
          long long violations = 0;
          for (Eigen::Index i = 0; i < rows; ++i) {
            if (!every_row && !keep[static_cast<std::size_t>(i)]) continue;
            violations += c[i] < 0.0 ? 1 : 0;
            path_min[i] = std::min(path_min[i], c[i]);
          }
          p.violations[ts] += violations;
        }
      }
      // Two passes within the chunk, then one Chan merge per time into the running moments.
      if (every_row && g == kTimesAtOnce) {
        const double *c0 = C.col(0).data(), *c1 = C.col(1).data(), *c2 = C.col(2).data(), *c3 = C.col(3).data();
        for (Eigen::Index i = 0; i < rows; ++i) {
          const double d0 = c0[i] - chunk_mean[0], d1 = c1[i] - chunk_mean[1], d2 = c2[i] - chunk_mean[2],
                       d3 = c3[i] - chunk_mean[3];
          chunk_m2[0] += d0 * d0;
          chunk_m2[1] += d1 * d1;
          chunk_m2[2] += d2 * d2;
          chunk_m2[3] += d3 * d3;
        }
      } else {
        for (Eigen::Index q = 0; q < g; ++q)
          for (Eigen::Index i = 0; i < rows; ++i) {
            if (!keep[static_cast<std::size_t>(i)]) continue;
            const double d = C(i, q) - chunk_mean[q];
            chunk_m2[q] += d * d;
          }
      }
      for (Eigen::Index q = 0; q < g; ++q) {
        const std::size_t ts = static_cast<std::size_t>(t0 + q);
        merge_moments(n_, p.mean[ts], p.m2[ts], nb, chunk_mean[q], chunk_m2[q]);
      }
    }
    double path_sum = 0.0;
    for (Eigen::Index i = 0; i < rows; ++i) {
      if (!keep[static_cast<std::size_t>(i)]) continue;
      path_sum += path_min[i];
      push_bounded(p.smallest_path, p.path_limit, p.k, path_min[i]);
      if (path_min[i] < 0.0) {
        ++p.path_violations;
        joint[static_cast<std::size_t>(i)] = 1;
      }
    }
    double unused_m2 = 0.0;
    merge_moments(n_, p.path_mean, unused_m2, nb, path_sum / static_cast<double>(nb), 0.0);
  }
  for (Eigen::Index i = 0; i < rows; ++i) joint_violations_ += (keep[static_cast<std::size_t>(i)] && joint[static_cast<std::size_t>(i)]) ? 1 : 0;
  n_ += nb;
}

void ViolationStatistics::keep_below_limits_of(const ViolationStatistics& total) {
  if (total.per_.size() != per_.size() || total.times_.size() != times_.size())
    throw std::logic_error("ViolationStatistics::keep_below_limits_of: accumulators of different shape");
  for (std::size_t j = 0; j < per_.size(); ++j) {
    PerConstraint& p = per_[j];
    const PerConstraint& q = total.per_[j];
    for (std::size_t t = 0; t < p.limit.size(); ++t) p.limit[t] = std::min(p.limit[t], q.limit[t]);
    p.path_limit = std::min(p.path_limit, q.path_limit);
  }
}

void ViolationStatistics::merge(const ViolationStatistics& later) {
  if (later.per_.size() != per_.size() || later.times_.size() != times_.size()) {
    throw std::logic_error("ViolationStatistics::merge: accumulators of different shape");
  }
  if (n_ + later.n_ > max_samples_) throw std::logic_error("ViolationStatistics::merge: more samples than max_samples");
  for (std::size_t j = 0; j < per_.size(); ++j) {
    PerConstraint& a = per_[j];
    const PerConstraint& b = later.per_[j];
    for (std::size_t t = 0; t < a.violations.size(); ++t) {
      a.violations[t] += b.violations[t];
      merge_moments(n_, a.mean[t], a.m2[t], later.n_, b.mean[t], b.m2[t]);
      for (double x : b.smallest[t]) push_bounded(a.smallest[t], a.limit[t], a.k, x);
    }
    for (double x : b.smallest_path) push_bounded(a.smallest_path, a.path_limit, a.k, x);
    a.path_violations += b.path_violations;
    double unused_m2 = 0.0;
    merge_moments(n_, a.path_mean, unused_m2, later.n_, b.path_mean, 0.0);
  }
  joint_violations_ += later.joint_violations_;
  n_ += later.n_;
}

void ViolationStatistics::merge_all(const std::vector<ViolationStatistics>& later, int threads) {
  long long added = 0;
  for (const auto& b : later) {
    if (b.per_.size() != per_.size() || b.times_.size() != times_.size())
      throw std::logic_error("ViolationStatistics::merge_all: accumulators of different shape");
    added += b.n_;
  }
  if (n_ + added > max_samples_) throw std::logic_error("ViolationStatistics::merge_all: more samples than max_samples");
  const std::size_t T = static_cast<std::size_t>(times_.size()), J = per_.size();
  // Work item (j, t) for t < T, and (j, T) for the path minimum and counts.
  parallel_for(J * (T + 1), threads, [&](std::size_t item) {
    const std::size_t j = item / (T + 1), t = item % (T + 1);
    PerConstraint& a = per_[j];
    long long n = n_;
    if (t < T) {
      for (const auto& part : later) {
        const PerConstraint& b = part.per_[j];
        a.violations[t] += b.violations[t];
        merge_moments(n, a.mean[t], a.m2[t], part.n_, b.mean[t], b.m2[t]);
        n += part.n_;
      }
      merge_bounded(a.smallest[t], a.limit[t], a.k, later.size(), [&](std::size_t q) -> const std::vector<double>& { return later[q].per_[j].smallest[t]; });
    } else {
      for (const auto& part : later) {
        const PerConstraint& b = part.per_[j];
        a.path_violations += b.path_violations;
        double unused_m2 = 0.0;
        merge_moments(n, a.path_mean, unused_m2, part.n_, b.path_mean, 0.0);
        n += part.n_;
      }
      merge_bounded(a.smallest_path, a.path_limit, a.k, later.size(), [&](std::size_t q) -> const std::vector<double>& { return later[q].per_[j].smallest_path; });
    }
  });
  for (const auto& b : later) joint_violations_ += b.joint_violations_;
  n_ += added;
}

ViolationResults ViolationStatistics::results() const {
  ViolationResults out;
  out.samples = n_;
  const double n = static_cast<double>(n_);
  const Eigen::Index T = times_.size();
  auto standard_error = [n](double p) { return std::sqrt(p * (1.0 - p) / n); };
  for (std::size_t j = 0; j < per_.size(); ++j) {
    const Constraint& constraint = (*constraints_)[j];
    const PerConstraint& p = per_[j];
    ConstraintStatistics s;
    s.name = constraint.name();
    s.max_probability = constraint.max_probability();
    s.scope = constraint.scope();
    s.in_window.resize(static_cast<std::size_t>(T));
    s.pointwise_violations = p.violations;
    s.pointwise_probability.setConstant(T, kNaN);
    s.pointwise_standard_error.setConstant(T, kNaN);
    s.clearance_mean.setConstant(T, kNaN);
    s.clearance_std.setConstant(T, kNaN);
    s.clearance_quantile.setConstant(T, kNaN);
    s.path_violations = p.path_violations;
    s.path_probability = n_ > 0 ? static_cast<double>(p.path_violations) / n : kNaN;
    s.path_standard_error = n_ > 0 ? standard_error(s.path_probability) : kNaN;
    s.path_margin = kNaN;
    s.path_minimum_mean = n_ > 0 ? p.path_mean : kNaN;
    const long long m = quantile_index(constraint.max_probability(), n_);
    for (Eigen::Index t = 0; t < T; ++t) {
      const std::size_t ts = static_cast<std::size_t>(t);
      s.in_window[ts] = constraint.in_window(times_[t]) ? 1 : 0;
      if (n_ == 0) continue;
      if (s.in_window[ts]) {
        s.pointwise_probability[t] = static_cast<double>(p.violations[ts]) / n;
        s.pointwise_standard_error[t] = standard_error(s.pointwise_probability[t]);
      }
      s.clearance_mean[t] = p.mean[ts];
      s.clearance_std[t] = n_ > 1 ? std::sqrt(p.m2[ts] / (n - 1.0)) : kNaN;
      s.clearance_quantile[t] = order_statistic(p.smallest[ts], m);
    }
    if (n_ > 0) s.path_margin = order_statistic(p.smallest_path, m);
    out.constraints.push_back(std::move(s));
  }
  out.joint_violations = joint_violations_;
  out.joint_probability = n_ > 0 ? static_cast<double>(joint_violations_) / n : kNaN;
  out.joint_standard_error = n_ > 0 ? standard_error(out.joint_probability) : kNaN;
  return out;
}

namespace {
// Output blocks of the chunks, reused from chunk to chunk: a fresh
// [chunk × T·n_out] matrix per chunk is mapped and page-faulted anew each time.
class BlockPool {
 public:
  std::unique_ptr<Eigen::MatrixXd> take() {
    std::lock_guard<std::mutex> lock(mutex_);
    if (free_.empty()) return std::make_unique<Eigen::MatrixXd>();
    auto block = std::move(free_.back());
    free_.pop_back();
    return block;
  }
  void give(std::unique_ptr<Eigen::MatrixXd> block) {
    std::lock_guard<std::mutex> lock(mutex_);
    free_.push_back(std::move(block));
  }

 private:
  std::mutex mutex_;
  std::vector<std::unique_ptr<Eigen::MatrixXd>> free_;
};

// One wave of `in_wave` chunks: chunk w's block of rows(w) samples is filled by
// fill(w, Y) and added to its own partial accumulator (sample index first(w) for
// messages). The partials are computed over MPI ranks (each rank its block of
// chunks, on its threads) and shared, so that every rank merges the same partials
// in the same order: the single-process result for any rank count. They keep only
// values below total's limits (keep_below_limits_of).
std::vector<ViolationStatistics> wave_partials(const ViolationStatistics& total, const std::vector<Constraint>& constraints,
                                               const Eigen::VectorXd& times, int n_outputs, long long max_samples,
                                               std::size_t in_wave, int threads, BlockPool& pool,
                                               const std::function<long long(std::size_t)>& rows,
                                               const std::function<long long(std::size_t)>& first,
                                               const std::function<void(std::size_t, Eigen::MatrixXd&)>& fill) {
  std::vector<ViolationStatistics> partial;
  partial.reserve(in_wave);
  for (std::size_t w = 0; w < in_wave; ++w) {
    partial.emplace_back(constraints, times, n_outputs, max_samples);
    partial.back().keep_below_limits_of(total);
  }
  run_distributed_items(
      in_wave, threads,
      [&](std::size_t w) {
        std::unique_ptr<Eigen::MatrixXd> Y = pool.take();
        Y->resize(rows(w), times.size() * n_outputs);
        fill(w, *Y);
        partial[w].add(*Y, first(w));
        pool.give(std::move(Y));
      },
      [&](std::size_t w) { return partial[w].pack(); },
      [&](std::size_t w, const double* data, std::size_t size) { partial[w].unpack(data, size); });
  return partial;
}
}  // namespace

ViolationResults stream_violation_statistics(
    const std::vector<Constraint>& constraints, const Eigen::VectorXd& times, int n_outputs, long long count,
    long long chunk, int threads, const std::function<void(long long, long long, Eigen::MatrixXd&)>& fill) {
  if (count < 0 || chunk <= 0) throw std::logic_error("stream_violation_statistics: bad count or chunk");
  ViolationStatistics total(constraints, times, n_outputs, count);
  const long long n_chunks = (count + chunk - 1) / chunk;
  BlockPool pool;
  for (long long wave = 0; wave < n_chunks; wave += kChunksPerWave) {
    const long long in_wave = std::min(kChunksPerWave, n_chunks - wave);
    const auto begin = [&](std::size_t w) { return (wave + static_cast<long long>(w)) * chunk; };
    const auto end = [&](std::size_t w) { return std::min(count, begin(w) + chunk); };
    const std::vector<ViolationStatistics> partial = wave_partials(
        total, constraints, times, n_outputs, count, static_cast<std::size_t>(in_wave), threads, pool,
        [&](std::size_t w) { return end(w) - begin(w); }, begin,
        [&](std::size_t w, Eigen::MatrixXd& Y) { fill(begin(w), end(w), Y); });
    total.merge_all(partial, threads);
  }
  return total.results();
}

}  // namespace sigmatube::constraints

namespace sigmatube::constraints {

namespace {
// Packing: integers travel as the bits of a double (memcpy, exact).
void put_integer(std::vector<double>& out, long long v) {
  double d;
  std::memcpy(&d, &v, sizeof d);
  out.push_back(d);
}
class Reader {
 public:
  Reader(const double* data, std::size_t size) : data_(data), size_(size) {}
  double value() {
    if (at_ >= size_) throw std::logic_error("ViolationStatistics::unpack: data too short");
    return data_[at_++];
  }
  long long integer() {
    const double d = value();
    long long v;
    std::memcpy(&v, &d, sizeof v);
    return v;
  }
  std::size_t length(std::size_t most) {
    const long long v = integer();
    if (v < 0 || static_cast<unsigned long long>(v) > most) throw std::logic_error("ViolationStatistics::unpack: bad length");
    return static_cast<std::size_t>(v);
  }
  void values(std::vector<double>& out, std::size_t n) {
    if (n > size_ - at_) throw std::logic_error("ViolationStatistics::unpack: data too short");
    out.assign(data_ + at_, data_ + at_ + n);
    at_ += n;
  }
  bool done() const { return at_ == size_; }

 private:
  const double* data_;
  std::size_t size_, at_ = 0;
};
}  // namespace

std::vector<double> ViolationStatistics::pack() const {
  std::vector<double> out;
  put_integer(out, n_);
  put_integer(out, joint_violations_);
  for (const PerConstraint& p : per_) {
    put_integer(out, static_cast<long long>(p.violations.size()));
    for (long long v : p.violations) put_integer(out, v);
    out.insert(out.end(), p.mean.begin(), p.mean.end());
    out.insert(out.end(), p.m2.begin(), p.m2.end());
    out.insert(out.end(), p.limit.begin(), p.limit.end());
    for (const auto& kept : p.smallest) {
      put_integer(out, static_cast<long long>(kept.size()));
      out.insert(out.end(), kept.begin(), kept.end());
    }
    put_integer(out, static_cast<long long>(p.smallest_path.size()));
    out.insert(out.end(), p.smallest_path.begin(), p.smallest_path.end());
    out.push_back(p.path_limit);
    put_integer(out, p.path_violations);
    out.push_back(p.path_mean);
  }
  return out;
}

void ViolationStatistics::unpack(const double* data, std::size_t size) {
  Reader in(data, size);
  const long long n = in.integer(), joint = in.integer();
  if (n < 0 || n > max_samples_ || joint < 0 || joint > n) throw std::logic_error("ViolationStatistics::unpack: bad counts");
  std::vector<PerConstraint> per = per_;
  for (PerConstraint& p : per) {
    const std::size_t T = p.violations.size();
    if (in.length(T) != T) throw std::logic_error("ViolationStatistics::unpack: report times differ");
    for (auto& v : p.violations) v = in.integer();
    in.values(p.mean, T);
    in.values(p.m2, T);
    in.values(p.limit, T);
    for (auto& kept : p.smallest) in.values(kept, in.length(2 * p.k));
    in.values(p.smallest_path, in.length(2 * p.k));
    p.path_limit = in.value();
    p.path_violations = in.integer();
    p.path_mean = in.value();
  }
  if (!in.done()) throw std::logic_error("ViolationStatistics::unpack: data too long");
  n_ = n;
  joint_violations_ = joint;
  per_ = std::move(per);
}

ViolationStatistics::Counts ViolationStatistics::counts() const {
  Counts c;
  c.samples = n_;
  c.joint = joint_violations_;
  for (const auto& p : per_) {
    c.path.push_back(p.path_violations);
    c.pointwise.push_back(p.violations);
  }
  return c;
}

namespace {

// Replicate mean and standard error of counts[r] / n.
std::pair<double, double> replicate_estimate(const std::vector<long long>& counts, long long n) {
  const double R = static_cast<double>(counts.size()), dn = static_cast<double>(n);
  double mean = 0.0;
  for (long long c : counts) mean += static_cast<double>(c) / dn;
  mean /= R;
  double ss = 0.0;
  for (long long c : counts) {
    const double d = static_cast<double>(c) / dn - mean;
    ss += d * d;
  }
  return {mean, std::sqrt(ss / (R - 1.0) / R)};
}

}  // namespace

PrecisionSampling stream_to_precision(
    const std::vector<Constraint>& constraints, const Eigen::VectorXd& times, int n_outputs,
    const PrecisionTarget& target, long long chunk, int threads,
    const std::function<void(int, long long, long long, Eigen::MatrixXd&)>& fill) {
  const int R = target.replicates;
  if (R < 2 || target.first_points < 1 || chunk <= 0 || target.cap < 0 || !(target.relative >= 0.0) ||
      !(target.absolute >= 0.0))
    throw std::logic_error("stream_to_precision: bad target");
  const auto T = static_cast<std::size_t>(times.size());
  const std::size_t J = constraints.size();
  PrecisionSampling out;
  out.replicates = R;
  const long long cap = std::max<long long>(target.cap, R);
  ViolationStatistics total(constraints, times, n_outputs, cap);
  // Per replicate counts so far.
  std::vector<ViolationStatistics::Counts> per_replicate(static_cast<std::size_t>(R));
  for (auto& c : per_replicate) {
    c.path.assign(J, 0);
    c.pointwise.assign(J, std::vector<long long>(T, 0));
  }
  double smallest_bound = std::numeric_limits<double>::infinity();
  for (const auto& c : constraints) smallest_bound = std::min(smallest_bound, c.max_probability());

  BlockPool pool;
  long long done = 0;  // points per replicate so far
  long long next = std::min(target.first_points, cap / R);
  while (static_cast<long long>(R) * next <= cap) {
    // Work items of this doubling: (replicate, begin, end), chunks inside a replicate.
    struct Item {
      int replicate;
      long long begin, end;
    };
    std::vector<Item> items;
    for (int r = 0; r < R; ++r)
      for (long long b = done; b < next; b += chunk) items.push_back({r, b, std::min(next, b + chunk)});
    for (std::size_t wave = 0; wave < items.size(); wave += static_cast<std::size_t>(kChunksPerWave)) {
      const std::size_t in_wave = std::min<std::size_t>(static_cast<std::size_t>(kChunksPerWave), items.size() - wave);
      const std::vector<ViolationStatistics> partial = wave_partials(
          total, constraints, times, n_outputs, cap, in_wave, threads, pool,
          [&](std::size_t w) { return items[wave + w].end - items[wave + w].begin; },
          // Global sample index for messages: replicate-major within the doubling.
          [&](std::size_t w) { return static_cast<long long>(items[wave + w].replicate) * cap + items[wave + w].begin; },
          [&](std::size_t w, Eigen::MatrixXd& Y) {
            const Item& item = items[wave + w];
            fill(item.replicate, item.begin, item.end - item.begin, Y);
          });
      for (std::size_t w = 0; w < in_wave; ++w) {
        const ViolationStatistics::Counts c = partial[w].counts();
        auto& acc = per_replicate[static_cast<std::size_t>(items[wave + w].replicate)];
        acc.samples += c.samples;
        acc.joint += c.joint;
        for (std::size_t j = 0; j < J; ++j) {
          acc.path[j] += c.path[j];
          for (std::size_t t = 0; t < T; ++t) acc.pointwise[j][t] += c.pointwise[j][t];
        }
      }
      total.merge_all(partial, threads);
    }
    done = next;
    out.samples = static_cast<long long>(R) * done;

    // The stopping rule on every reported probability.
    const double N = static_cast<double>(out.samples);
    bool met = true;
    auto accept = [&](const std::vector<long long>& counts, double bound) {
      const auto [mean, se] = replicate_estimate(counts, done);
      const double absolute = target.absolute * bound;
      const bool seen = mean > 0.0;
      return se <= std::max(target.relative * mean, absolute) && (seen || 3.0 / N <= absolute);
    };
    std::vector<long long> counts(static_cast<std::size_t>(R));
    for (std::size_t j = 0; j < J && met; ++j) {
      const double bound = constraints[j].max_probability();
      for (int r = 0; r < R; ++r) counts[static_cast<std::size_t>(r)] = per_replicate[static_cast<std::size_t>(r)].path[j];
      met = met && accept(counts, bound);
      for (std::size_t t = 0; t < T && met; ++t) {
        if (!constraints[j].in_window(times[static_cast<Eigen::Index>(t)])) continue;
        for (int r = 0; r < R; ++r) counts[static_cast<std::size_t>(r)] = per_replicate[static_cast<std::size_t>(r)].pointwise[j][t];
        met = met && accept(counts, bound);
      }
    }
    if (met && J > 0) {
      for (int r = 0; r < R; ++r) counts[static_cast<std::size_t>(r)] = per_replicate[static_cast<std::size_t>(r)].joint;
      met = accept(counts, smallest_bound);
    }
    out.target_met = met;
    if (met) break;
    next *= 2;
  }

  out.results = total.results();
  // Replicate standard errors in place of the binomial ones.
  if (done > 0) {
    std::vector<long long> counts(static_cast<std::size_t>(R));
    for (std::size_t j = 0; j < J; ++j) {
      auto& s = out.results.constraints[j];
      for (int r = 0; r < R; ++r) counts[static_cast<std::size_t>(r)] = per_replicate[static_cast<std::size_t>(r)].path[j];
      s.path_standard_error = replicate_estimate(counts, done).second;
      for (std::size_t t = 0; t < T; ++t) {
        if (!s.in_window[t]) continue;
        for (int r = 0; r < R; ++r) counts[static_cast<std::size_t>(r)] = per_replicate[static_cast<std::size_t>(r)].pointwise[j][t];
        s.pointwise_standard_error[static_cast<Eigen::Index>(t)] = replicate_estimate(counts, done).second;
      }
    }
    for (int r = 0; r < R; ++r) counts[static_cast<std::size_t>(r)] = per_replicate[static_cast<std::size_t>(r)].joint;
    out.results.joint_standard_error = replicate_estimate(counts, done).second;
  }
  return out;
}

}  // namespace sigmatube::constraints
