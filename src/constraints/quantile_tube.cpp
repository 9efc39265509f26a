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
      from = r;
    }
    constexpr double kInf = std::numeric_limits<double>::infinity();
    const auto lo_of = [&](std::size_t l) { return lo_rank_[l] < 0 ? -kInf : sample_[static_cast<std::size_t>(lo_rank_[l])]; };
    const auto hi_of = [&](std::size_t l) { return hi_rank_[l] >= s ? kInf : sample_[static_cast<std::size_t>(hi_rank_[l])]; };
    collected_.resize(static_cast<std::size_t>(n) + 1);
    bool checked = false;
    for (std::size_t first = 0; first < L;) {
      // Levels first … last − 1 share one bracket (theirs overlap or touch).
      const double lo = lo_of(first);
      double hi = hi_of(first);
      std::size_t last = first + 1;
      while (last < L && lo_of(last) <= hi) hi = std::max(hi, hi_of(last++));
      Eigen::Index below = 0, inside = 0, above = 0;
      double* buffer = collected_.data();
      for (Eigen::Index i = 0; i < n; ++i) {
        const double x = values[i];
        buffer[inside] = x;
        inside += static_cast<Eigen::Index>((x >= lo) & (x <= hi));
        below += static_cast<Eigen::Index>(x < lo);
        above += static_cast<Eigen::Index>(x > hi);
      }
      if (!checked && below + inside + above != n) {  // a NaN: neither below, inside nor above
        quantiles_by_selection(Eigen::Map<const Eigen::VectorXd>(values, n), levels, out, out_stride);
        return;
      }
      checked = true;
      Eigen::Index done = 0;
      for (std::size_t l = first; l < last; ++l) {
        const Eigen::Index r = order_index(levels[l], n) - below;
        double q;
        if (r >= 0 && r < inside) {
          if (r >= done) {
            std::nth_element(buffer + done, buffer + r, buffer + inside);
            done = r;
          }
          q = buffer[r];
        } else {  // the bracket missed: select among all values
          whole_.assign(values, values + n);
          const Eigen::Index k = order_index(levels[l], n);
          std::nth_element(whole_.begin(), whole_.begin() + k, whole_.end());
          q = whole_[static_cast<std::size_t>(k)];
        }
        out[static_cast<Eigen::Index>(l) * out_stride] = q;
      }
      first = last;
    }
  }

 private:
  std::vector<double> sample_, collected_, whole_;
  std::vector<Eigen::Index> lo_rank_, hi_rank_, ranks_;
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
