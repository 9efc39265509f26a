// SPDX-License-Identifier: MIT
#include "sigmatube/constraints/quantile_tube.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>
#include <utility>
#include <vector>

#include "sigmatube/core/distributed.h"
#include "sigmatube/core/parallel.h"
#include "sigmatube/expansion/basis_product.h"

namespace sigmatube::constraints {
namespace {

// Columns per block of Ψ·C: 64 columns of N = 50 000 samples is 25 MB per thread.
constexpr Eigen::Index kColumnBlock = 64;

Eigen::Index order_index(double level, Eigen::Index n) {
  const auto k = static_cast<Eigen::Index>(level * static_cast<double>(n));
  return std::clamp<Eigen::Index>(k, 0, n - 1);
}

// The order statistics x_(k) for the sorted levels by std::nth_element, each on
// the part above the previous one (the reference method; `values` is a copy).
void quantiles_by_selection(Eigen::VectorXd values, const std::vector<double>& levels, double* out,
                            Eigen::Index out_stride) {
  const Eigen::Index n = values.size();
  double* data = values.data();
  Eigen::Index from = 0;
  for (std::size_t l = 0; l < levels.size(); ++l) {
    const Eigen::Index k = order_index(levels[l], n);
    if (k >= from) {
      std::nth_element(data + from, data + k, data + n);
      from = k;
    }
    out[static_cast<Eigen::Index>(l) * out_stride] = data[k];
  }
}

// Below this many values the selection above is as fast as the bracketing.
constexpr Eigen::Index kMinBracketed = 4096;
// Half-width of a bracket in standard deviations of the sample rank (plus 2 ranks):
// the k-th value falls outside its bracket with probability ≈ 3e-3 per level
// (normal approximation of the binomial rank), and then costs one selection over
// all values — rare enough, and the wider bracket costs more for every column.
constexpr double kBracketSds = 3.0;

// Exact order statistics x_(k) of values[0 … n−1] for the sorted levels, found as
// Floyd & Rivest ("Expected time bounds for selection", CACM 18(3), 1975) bound
// them: order statistics of an evenly strided sample of s ≈ n^(2/3) values give,
// per level, a bracket [lo, hi] that holds x_(k) with high probability; one pass
// over the values per bracket (brackets that overlap are merged) counts the values
// below lo and collects those in [lo, hi]; if x_(k) is among them (counted below ≤
// k < below + collected) it is the (k − below)-th of the collected values, found by
// nth_element on those few. An order statistic is one value whatever the method,
// so the result has the same bits as quantiles_by_selection; a bracket that misses
// falls back to it, as do values with NaN (whose order nth_element defines).
class Quantiles {
 public:
  void operator()(const double* values, Eigen::Index n, const std::vector<double>& levels, double* out,
                  Eigen::Index out_stride) {
    if (n < kMinBracketed) {
      quantiles_by_selection(Eigen::Map<const Eigen::VectorXd>(values, n), levels, out, out_stride);
      return;
    }
    const std::size_t L = levels.size();
    const Eigen::Index s = std::clamp<Eigen::Index>(
        static_cast<Eigen::Index>(std::cbrt(static_cast<double>(n) * static_cast<double>(n))), 256, n);
    sample_.resize(static_cast<std::size_t>(s));
    for (Eigen::Index i = 0; i < s; ++i)
      sample_[static_cast<std::size_t>(i)] = values[i * n / s];
    if (std::any_of(sample_.begin(), sample_.end(), [](double v) { return std::isnan(v); })) {
      quantiles_by_selection(Eigen::Map<const Eigen::VectorXd>(values, n), levels, out, out_stride);
      return;
    }
    // Sample ranks of each level's bracket (−1: no lower end, s: no upper end).
    lo_rank_.resize(L);
    hi_rank_.resize(L);
    ranks_.clear();
    for (std::size_t l = 0; l < L; ++l) {
      const Eigen::Index k = order_index(levels[l], n);
      const double p = (static_cast<double>(k) + 0.5) / static_cast<double>(n);
      const double centre = p * static_cast<double>(s);
      const double half = kBracketSds * std::sqrt(static_cast<double>(s) * p * (1.0 - p)) + 2.0;
      lo_rank_[l] = std::max<Eigen::Index>(-1, static_cast<Eigen::Index>(std::floor(centre - half)));
      hi_rank_[l] = std::min<Eigen::Index>(s, static_cast<Eigen::Index>(std::ceil(centre + half)));
      if (lo_rank_[l] >= 0) ranks_.push_back(lo_rank_[l]);
      if (hi_rank_[l] < s) ranks_.push_back(hi_rank_[l]);
    }
    std::sort(ranks_.begin(), ranks_.end());
    ranks_.erase(std::unique(ranks_.begin(), ranks_.end()), ranks_.end());
    Eigen::Index from = 0;
    for (const Eigen::Index r : ranks_) {
      std::nth_element(sample_.begin() + from, sample_.begin() + r, sample_.end());
      from = r + 1;  // (position r keeps its value: the brackets read it below)
    }
    constexpr double kInf = std::numeric_limits<double>::infinity();
    const auto lo_of = [&](std::size_t l) { return lo_rank_[l] < 0 ? -kInf : sample_[static_cast<std::size_t>(lo_rank_[l])]; };
    const auto hi_of = [&](std::size_t l) { return hi_rank_[l] >= s ? kInf : sample_[static_cast<std::size_t>(hi_rank_[l])]; };
    // Brackets of levels that overlap or touch are merged: intervals m = 0 … M−1,
    // disjoint and ascending, interval m holding levels first_[m] … first_[m+1] − 1.
    lo_.clear();
    hi_.clear();
    first_.clear();
    for (std::size_t l = 0; l < L; ++l) {
      if (!hi_.empty() && lo_of(l) <= hi_.back()) {
        lo_.back() = std::min(lo_.back(), lo_of(l));
        hi_.back() = std::max(hi_.back(), hi_of(l));
        continue;
      }
      lo_.push_back(lo_of(l));
      hi_.push_back(hi_of(l));
      first_.push_back(l);
    }
    first_.push_back(L);
    const std::size_t M = lo_.size();
    // (A bracket's lower end can lie below the previous one's: the merged
    // intervals are then checked to be disjoint and ascending, as the filing
    // below needs.)
    bool usable = true;
    for (std::size_t m = 1; m < M; ++m) usable &= lo_[m] > hi_[m - 1];
    // A NaN is neither below, inside nor above any bracket: the whole column then
    // goes to nth_element, as before.
    for (Eigen::Index i = 0; i < n; ++i) usable &= !std::isnan(values[i]);
    if (!usable) {
      quantiles_by_selection(Eigen::Map<const Eigen::VectorXd>(values, n), levels, out, out_stride);
      return;
    }
    // Values below each interval (vectorized counts), then one pass that files the
    // values inside an interval into its bucket: x lies above the intervals
    // 0 … m − 1 with m = #{hi < x}, and in interval m if also lo_m ≤ x.
    below_.assign(M, 0);
    for (std::size_t m = 0; m < M; ++m) {
      const double lo = lo_[m];
      Eigen::Index count = 0;
      for (Eigen::Index i = 0; i < n; ++i) count += static_cast<Eigen::Index>(values[i] < lo);
      below_[m] = count;
    }
    if (buckets_.size() < M) buckets_.resize(M);
    for (std::size_t m = 0; m < M; ++m) buckets_[m].clear();
    for (Eigen::Index i = 0; i < n; ++i) {
      const double x = values[i];
      std::size_t m = 0;
      for (std::size_t j = 0; j < M; ++j) m += static_cast<std::size_t>(hi_[j] < x);
      if (m < M && x >= lo_[m]) buckets_[m].push_back(x);
    }
    for (std::size_t m = 0; m < M; ++m) {
      std::vector<double>& bucket = buckets_[m];
      const Eigen::Index inside = static_cast<Eigen::Index>(bucket.size());
      Eigen::Index done = 0;
      for (std::size_t l = first_[m]; l < first_[m + 1]; ++l) {
        const Eigen::Index k = order_index(levels[l], n);
        const Eigen::Index r = k - below_[m];
        double q;
        if (r >= 0 && r < inside) {
          if (r >= done) {
            std::nth_element(bucket.begin() + done, bucket.begin() + r, bucket.end());
            done = r;
          }
          q = bucket[static_cast<std::size_t>(r)];
        } else {  // the bracket missed: select among all values
          whole_.assign(values, values + n);
          std::nth_element(whole_.begin(), whole_.begin() + k, whole_.end());
          q = whole_[static_cast<std::size_t>(k)];
        }
        out[static_cast<Eigen::Index>(l) * out_stride] = q;
      }
    }
  }

 private:
  std::vector<double> sample_, whole_, lo_, hi_;
  std::vector<std::vector<double>> buckets_;
  std::vector<Eigen::Index> lo_rank_, hi_rank_, ranks_, below_;
  std::vector<std::size_t> first_;
};

}  // namespace

std::vector<double> quantile_levels(const std::vector<double>& epsilons) {
  std::vector<double> levels{0.025, 0.5, 0.975};
  for (double e : epsilons) {
    if (!(e > 0.0 && e < 1.0)) continue;
    levels.push_back(e);
    levels.push_back(1.0 - e);
  }
  std::sort(levels.begin(), levels.end());
  levels.erase(std::unique(levels.begin(), levels.end(), [](double a, double b) { return std::abs(a - b) < 1e-15; }),
               levels.end());
  return levels;
}

Eigen::MatrixXd column_quantiles(const Eigen::MatrixXd& samples, const std::vector<double>& levels) {
  if (samples.rows() < 1) throw std::logic_error("column_quantiles: no samples");
  if (!std::is_sorted(levels.begin(), levels.end())) throw std::logic_error("column_quantiles: levels not sorted");
  Eigen::MatrixXd out(samples.cols(), static_cast<Eigen::Index>(levels.size()));
  Quantiles quantiles;
  for (Eigen::Index c = 0; c < samples.cols(); ++c)
    quantiles(samples.col(c).data(), samples.rows(), levels, out.data() + c, out.outerStride());
  return out;
}

Eigen::MatrixXd surrogate_quantiles(const expansion::Surrogate& surrogate, const Eigen::MatrixXd& points,
                                    const std::vector<double>& levels, int threads) {
  if (points.rows() < 1) throw std::logic_error("surrogate_quantiles: no points");
  if (!std::is_sorted(levels.begin(), levels.end())) throw std::logic_error("surrogate_quantiles: levels not sorted");
  const Eigen::MatrixXd basis = surrogate.basis_matrix(points);  // [N, P]
  const Eigen::Index n_columns = surrogate.coefficients.cols();
  Eigen::MatrixXd out(n_columns, static_cast<Eigen::Index>(levels.size()));
  const std::size_t blocks = static_cast<std::size_t>((n_columns + kColumnBlock - 1) / kColumnBlock);
  const auto block_columns = [&](std::size_t b) {
    const Eigen::Index first = static_cast<Eigen::Index>(b) * kColumnBlock;
    return std::make_pair(first, std::min(kColumnBlock, n_columns - first));
  };
  // Column blocks over MPI ranks (the same blocks as one process: the product of
  // a block is then the same bit for bit) and threads; every rank gets every row.
  const Eigen::Index n_levels = static_cast<Eigen::Index>(levels.size());
  run_distributed_items(
      blocks, threads,
      [&](std::size_t b) {
        const auto [first, count] = block_columns(b);
        Eigen::MatrixXd values(basis.rows(), count);
        expansion::basis_product(basis, expansion::PackedColumns(surrogate.coefficients, first, count), values);
        Quantiles quantiles;
        for (Eigen::Index c = 0; c < count; ++c)
          quantiles(values.col(c).data(), values.rows(), levels, out.data() + first + c, out.outerStride());
      },
      [&](std::size_t b) {
        const auto [first, count] = block_columns(b);
        std::vector<double> packed;
        for (Eigen::Index c = first; c < first + count; ++c)
          for (Eigen::Index l = 0; l < n_levels; ++l) packed.push_back(out(c, l));
        return packed;
      },
      [&](std::size_t b, const double* data, std::size_t size) {
        const auto [first, count] = block_columns(b);
        if (size != static_cast<std::size_t>(count * n_levels)) throw std::logic_error("surrogate_quantiles: bad block");
        for (Eigen::Index c = 0; c < count; ++c)
          for (Eigen::Index l = 0; l < n_levels; ++l) out(first + c, l) = data[c * n_levels + l];
      });
  return out;
}

}  // namespace sigmatube::constraints
