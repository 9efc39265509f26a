// SPDX-License-Identifier: MIT
#include "sigmatube/montecarlo/paired.h"

#include <boost/math/distributions/binomial.hpp>
#include <boost/math/distributions/normal.hpp>
#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>
#include <stdexcept>

namespace sigmatube::montecarlo {

double exact_mcnemar_p(long long b, long long c) {
  if (b < 0 || c < 0) throw std::logic_error("exact_mcnemar_p: negative count");
  const long long m = b + c;
  if (m == 0) return 1.0;
  const boost::math::binomial_distribution<double> binomial(static_cast<double>(m), 0.5);
  const double tail = boost::math::cdf(binomial, static_cast<double>(std::min(b, c)));
  return std::min(1.0, 2.0 * tail);
}

std::vector<double> holm_adjusted(const std::vector<double>& p) {
  std::vector<std::size_t> order;
  for (std::size_t i = 0; i < p.size(); ++i)
    if (!std::isnan(p[i])) order.push_back(i);
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return p[a] < p[b]; });
  std::vector<double> adjusted(p.size(), std::numeric_limits<double>::quiet_NaN());
  const double m = static_cast<double>(order.size());
  double running = 0.0;
  for (std::size_t j = 0; j < order.size(); ++j) {
    running = std::max(running, std::min(1.0, (m - static_cast<double>(j)) * p[order[j]]));
    adjusted[order[j]] = running;
  }
  return adjusted;
}

long long smallest_detectable_discordance(double level) {
  if (!(level > 0.0 && level < 1.0)) throw std::logic_error("smallest_detectable_discordance: level not in (0, 1)");
  // 2·2^−m ≤ level  ⇔  m ≥ log2(2/level).
  long long m = static_cast<long long>(std::ceil(std::log2(2.0 / level) - 1e-12));
  while (exact_mcnemar_p(m, 0) > level) ++m;
  while (m > 1 && exact_mcnemar_p(m - 1, 0) <= level) --m;
  return m;
}

PairedDifference paired_difference(long long b, long long c, long long n, double confidence) {
  if (b < 0 || c < 0 || b + c > n || !(confidence > 0.0 && confidence < 1.0))
    throw std::logic_error("paired_difference: bad counts or confidence");
  PairedDifference d;
  if (n == 0) {
    d.estimate = std::numeric_limits<double>::quiet_NaN();
    d.lower = -1.0;
    d.upper = 1.0;
    return d;
  }
  const double nd = static_cast<double>(n);
  d.estimate = static_cast<double>(b - c) / nd;
  const double n2 = nd + 2.0;
  const double diff = static_cast<double>(b - c);
  const double centre = diff / n2;
  const double variance = std::max(0.0, (static_cast<double>(b + c) + 1.0 - diff * diff / n2) / (n2 * n2));
  const boost::math::normal_distribution<double> normal(0.0, 1.0);
  const double z = boost::math::quantile(normal, 0.5 * (1.0 + confidence));
  d.lower = std::max(-1.0, centre - z * std::sqrt(variance));
  d.upper = std::min(1.0, centre + z * std::sqrt(variance));
  return d;
}

void PairedCounts::merge(const PairedCounts& later) {
  runs += later.runs;
  both += later.both;
  surrogate_only += later.surrogate_only;
  model_only += later.model_only;
  if (both_t.empty()) {
    both_t.assign(later.both_t.size(), 0);
    surrogate_only_t.assign(later.both_t.size(), 0);
    model_only_t.assign(later.both_t.size(), 0);
  }
  for (std::size_t t = 0; t < later.both_t.size(); ++t) {
    both_t[t] += later.both_t[t];
    surrogate_only_t[t] += later.surrogate_only_t[t];
    model_only_t[t] += later.model_only_t[t];
  }
  discordant_saturated += later.discordant_saturated;
  sum_e2 += later.sum_e2;
  sum_e4 += later.sum_e4;
  tail_runs += later.tail_runs;
  tail_sum_e2 += later.tail_sum_e2;
}

void add_paired_runs(const std::vector<constraints::Constraint>& constraints, const Eigen::VectorXd& times,
                     int n_outputs, const Eigen::Ref<const Eigen::MatrixXd>& model,
                     const Eigen::Ref<const Eigen::MatrixXd>& surrogate, const std::vector<std::uint8_t>& saturated,
                     std::vector<PairedCounts>& counts) {
  const Eigen::Index n = model.rows();
  const Eigen::Index T = times.size();
  if (surrogate.rows() != n || model.cols() != T * n_outputs || surrogate.cols() != model.cols() ||
      (!saturated.empty() && static_cast<Eigen::Index>(saturated.size()) != n)) {
    throw std::logic_error("add_paired_runs: inconsistent sizes");
  }
  if (counts.empty()) counts.resize(constraints.size());
  if (counts.size() != constraints.size()) throw std::logic_error("add_paired_runs: constraint count differs");
  Eigen::VectorXd cm(n), cs(n);
  for (std::size_t k = 0; k < constraints.size(); ++k) {
    const auto& constraint = constraints[k];
    PairedCounts& p = counts[k];
    if (p.both_t.empty()) {
      p.both_t.assign(static_cast<std::size_t>(T), 0);
      p.surrogate_only_t.assign(static_cast<std::size_t>(T), 0);
      p.model_only_t.assign(static_cast<std::size_t>(T), 0);
    }
    Eigen::VectorXd min_m = Eigen::VectorXd::Constant(n, std::numeric_limits<double>::infinity());
    Eigen::VectorXd min_s = min_m;
    for (Eigen::Index t = 0; t < T; ++t) {
      if (!constraint.in_window(times[t])) continue;
      constraint.clearance(model.middleCols(t * n_outputs, n_outputs), times[t], cm);
      constraint.clearance(surrogate.middleCols(t * n_outputs, n_outputs), times[t], cs);
      const auto ts = static_cast<std::size_t>(t);
      for (Eigen::Index i = 0; i < n; ++i) {
        const bool vm = cm[i] < 0.0, vs = cs[i] < 0.0;
        if (vm && vs) ++p.both_t[ts];
        else if (vs) ++p.surrogate_only_t[ts];
        else if (vm) ++p.model_only_t[ts];
      }
      min_m = min_m.cwiseMin(cm);
      min_s = min_s.cwiseMin(cs);
    }
    p.runs += n;
    for (Eigen::Index i = 0; i < n; ++i) {
      const bool vm = min_m[i] < 0.0, vs = min_s[i] < 0.0;
      if (vm && vs) ++p.both;
      else if (vs) ++p.surrogate_only;
      else if (vm) ++p.model_only;
      if (vm != vs && !saturated.empty() && saturated[static_cast<std::size_t>(i)]) ++p.discordant_saturated;
      const double e = min_s[i] - min_m[i];
      if (std::isfinite(e)) {
        p.sum_e2 += e * e;
        p.sum_e4 += e * e * e * e;
        if (vm || vs) {
          ++p.tail_runs;
          p.tail_sum_e2 += e * e;
        }
      }
    }
  }
}

}  // namespace sigmatube::montecarlo
