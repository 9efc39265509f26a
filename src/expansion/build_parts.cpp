// SPDX-License-Identifier: MIT
#include "build_parts.h"

#include <algorithm>

#include "sigmatube/core/counter_rng.h"
#include "sigmatube/expansion/polynomial_basis.h"

namespace sigmatube::expansion::detail {
namespace {

// Seed of the hold-out points (fixed so that a case gives the same surrogate and
// estimate on every run; common practice: fixed seeds for designs).
constexpr std::uint64_t kHoldOutSeed = 0x401d0e57ULL;
// The validation's denominator floor (montecarlo/monte_carlo.cpp).
constexpr double kScaleFloorRelative = 1e-12;
// Saturation: share of the runs at one extreme, and the least count.
constexpr double kSaturatedShare = 0.05;
constexpr int kSaturatedMinRuns = 3;
constexpr double kSameValueRelative = 1e-9;
// Stall: over the last doubling of the runs the worst estimate fell by less than
// this factor (a smooth output under spectral convergence falls by orders of
// magnitude per doubling; common practice).
constexpr double kStallRatio = 0.7;
constexpr int kStallMinSteps = 4;

}  // namespace

Eigen::VectorXd pooled_relative_rmse(const Eigen::VectorXd& column_mse, const Eigen::MatrixXd& coefficients,
                                     int n_times, int n_outputs) {
  Eigen::VectorXd result(n_outputs);
  for (int o = 0; o < n_outputs; ++o) {
    double mse = 0.0, variance = 0.0, mean_square = 0.0;
    bool nan = false;
    for (int t = 0; t < n_times; ++t) {
      const Eigen::Index c = static_cast<Eigen::Index>(t) * n_outputs + o;
      if (std::isnan(column_mse[c])) nan = true;
      mse += column_mse[c];
      variance += coefficients.col(c).tail(coefficients.rows() - 1).squaredNorm();
      mean_square += coefficients(0, c) * coefficients(0, c);
    }
    const double scale = std::max(std::sqrt(variance / n_times),
                                  kScaleFloorRelative * std::max(1.0, std::sqrt(mean_square / n_times)));
    result[o] = nan ? std::numeric_limits<double>::quiet_NaN() : std::sqrt(mse / n_times) / scale;
  }
  return result;
}

Eigen::MatrixXd hold_out_points(const std::vector<germ::FamilySpec>& families, int n) {
  const CounterRng rng(kHoldOutSeed);
  Eigen::MatrixXd points(n, static_cast<Eigen::Index>(families.size()));
  for (int i = 0; i < n; ++i)
    for (std::size_t k = 0; k < families.size(); ++k)
      points(i, static_cast<Eigen::Index>(k)) = germ::from_standard_normal(families[k], rng.normal(i, k));
  return points;
}

Eigen::VectorXd hold_out_mse(const std::vector<germ::FamilySpec>& families, const MultiIndexSet& indices,
                             const Eigen::MatrixXd& coefficients, const Eigen::MatrixXd& points,
                             const Eigen::MatrixXd& values) {
  if (points.rows() == 0) return Eigen::VectorXd::Constant(coefficients.cols(), std::numeric_limits<double>::quiet_NaN());
  const Eigen::MatrixXd fitted = basis_matrix(families, indices, points) * coefficients;
  return (fitted - values).colwise().squaredNorm().transpose() / static_cast<double>(points.rows());
}

int hold_out_size(int runs_left) {
  const int n = std::min(kHoldOutRuns, runs_left);
  return n < kMinHoldOutRuns ? 0 : n;
}

double corrected_loo_factor(int n_points, int basis_size, double trace_inverse_gram) {
  if (n_points <= basis_size) return std::numeric_limits<double>::infinity();
  return static_cast<double>(n_points) / (n_points - basis_size) * (1.0 + trace_inverse_gram);
}

std::vector<std::string> saturation_notes(const RunCache& cache, int n_times, int n_outputs) {
  const auto& runs = cache.runs();
  const int n = static_cast<int>(runs.size());
  std::vector<std::string> notes;
  if (n < 2 * kSaturatedMinRuns) return notes;
  int worst_column = -1, worst_count = 0;
  for (int c = 0; c < n_times * n_outputs; ++c) {
    double low = runs[0][c], high = runs[0][c];
    for (const auto& r : runs) low = std::min(low, r[c]), high = std::max(high, r[c]);
    const double range = high - low;
    if (!(range > kSameValueRelative * std::max(1.0, std::max(std::abs(low), std::abs(high))))) continue;
    int at_low = 0, at_high = 0;
    for (const auto& r : runs) {
      if (r[c] - low <= kSameValueRelative * range) ++at_low;
      if (high - r[c] <= kSameValueRelative * range) ++at_high;
    }
    const int count = std::max(at_low, at_high);
    if (count > worst_count) worst_count = count, worst_column = c;
  }
  if (worst_column >= 0 && worst_count >= kSaturatedMinRuns && worst_count >= kSaturatedShare * n) {
    std::ostringstream m;
    m << "saturation in the design runs: " << worst_count << " of " << n << " runs share one extreme value of output "
      << (worst_column % n_outputs) << " at report time " << (worst_column / n_outputs)
      << " (a limit, contact or switch clips it); a polynomial converges slowly across such a kink: check the "
         "Monte Carlo validation, shorten the window or split the input range";
    notes.push_back(m.str());
  }
  return notes;
}

std::string stall_note(const std::vector<std::pair<int, double>>& history) {
  if (static_cast<int>(history.size()) < kStallMinSteps) return {};
  const auto& [runs, last] = history.back();
  // The estimate when the runs were half of today's.
  int i = static_cast<int>(history.size()) - 1;
  while (i > 0 && history[static_cast<std::size_t>(i)].first * 2 > runs) --i;
  if (history[static_cast<std::size_t>(i)].first * 2 > runs) return {};
  const double before = history[static_cast<std::size_t>(i)].second;
  if (!(std::isfinite(before) && std::isfinite(last)) || !(last > kStallRatio * before)) return {};
  std::ostringstream m;
  m << "error decay stalled: from " << history[static_cast<std::size_t>(i)].first << " to " << runs
    << " model runs the estimate fell only from " << before << " to " << last
    << "; the outputs are likely nonsmooth in the inputs (saturation, switching, contact) or the horizon is too long "
       "for one global polynomial: shorten the window, split the input range, or rely on the Monte Carlo cross-check";
  return m.str();
}

std::string retained_per_input(const MultiIndexSet& indices) {
  std::ostringstream m;
  m << "retained per germ dimension (highest degree/terms):";
  for (Eigen::Index k = 0; k < indices.cols(); ++k) {
    int degree = 0, terms = 0;
    for (Eigen::Index r = 0; r < indices.rows(); ++r)
      if (indices(r, k) > 0) degree = std::max(degree, indices(r, k)), ++terms;
    m << (k ? ", " : " ") << k << ":" << degree << "/" << terms;
  }
  return m.str();
}

}  // namespace sigmatube::expansion::detail
