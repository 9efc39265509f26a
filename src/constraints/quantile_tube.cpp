// SPDX-License-Identifier: MIT
#include "sigmatube/constraints/quantile_tube.h"

#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <utility>
#include <vector>

#include "sigmatube/core/distributed.h"
#include "sigmatube/core/parallel.h"

namespace sigmatube::constraints {
namespace {

// Columns per block of Ψ·C: 64 columns of N = 50 000 samples is 25 MB per thread.
constexpr Eigen::Index kColumnBlock = 64;

Eigen::Index order_index(double level, Eigen::Index n) {
  const auto k = static_cast<Eigen::Index>(level * static_cast<double>(n));
  return std::clamp<Eigen::Index>(k, 0, n - 1);
}

void quantiles_of(Eigen::VectorXd values, const std::vector<double>& levels,
                  Eigen::Ref<Eigen::RowVectorXd, 0, Eigen::InnerStride<>> out) {
  const Eigen::Index n = values.size();
  double* data = values.data();
  // Levels are sorted: each nth_element works on the part above the previous one.
  Eigen::Index from = 0;
  for (std::size_t l = 0; l < levels.size(); ++l) {
    const Eigen::Index k = order_index(levels[l], n);
    if (k >= from) {
      std::nth_element(data + from, data + k, data + n);
      from = k;
    }
    out[static_cast<Eigen::Index>(l)] = data[k];
  }
}

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
  for (Eigen::Index c = 0; c < samples.cols(); ++c) quantiles_of(samples.col(c), levels, out.row(c));
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
        const Eigen::MatrixXd values = basis * surrogate.coefficients.middleCols(first, count);
        for (Eigen::Index c = 0; c < count; ++c) quantiles_of(values.col(c), levels, out.row(first + c));
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
