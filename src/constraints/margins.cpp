// SPDX-License-Identifier: MIT
#include "sigmatube/constraints/margins.h"

#include <cmath>
#include <cstdio>
#include <limits>
#include <stdexcept>

namespace sigmatube::constraints {
namespace {
std::string format(const char* pattern, double value) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, pattern, value);
  return buffer;
}
// Geometric clearances are distances in the position outputs' unit (SI: metres).
std::string unit_of(casefile::ConstraintKind kind) {
  switch (kind) {
    case casefile::ConstraintKind::input_limit:
    case casefile::ConstraintKind::expression: return "";
    default: return " m";
  }
}
}  // namespace

ConstraintMargin compute_margin(const Constraint& constraint, const ConstraintStatistics& s, const Eigen::VectorXd& times) {
  if (s.name != constraint.name() || s.clearance_quantile.size() != times.size()) {
    throw std::logic_error("compute_margin: statistics do not match the constraint or the grid");
  }
  ConstraintMargin m;
  m.name = constraint.name();
  m.max_probability = constraint.max_probability();
  const Eigen::Index T = times.size();
  m.backoff.setConstant(T, std::numeric_limits<double>::quiet_NaN());
  m.worst_quantile = std::numeric_limits<double>::infinity();
  for (Eigen::Index t = 0; t < T; ++t) {
    if (!s.in_window[static_cast<std::size_t>(t)]) continue;
    m.backoff[t] = s.clearance_mean[t] - s.clearance_quantile[t];
    if (s.clearance_quantile[t] < m.worst_quantile) {
      m.worst_quantile = s.clearance_quantile[t];
      m.worst_time_index = static_cast<int>(t);
      m.worst_time_in_seconds = times[t];
    }
  }
  m.path_margin = s.path_margin;
  m.spare = constraint.scope() == casefile::ConstraintScope::path ? m.path_margin : m.worst_quantile;
  m.governing_probability = s.governing_probability();
  m.meets = m.governing_probability <= m.max_probability;
  if (constraint.type() == casefile::ConstraintKind::outside_sphere) {
    m.tolerable_radius = constraint.options().radius + m.spare;
    m.required_inflation = -m.spare;
  }
  const std::string unit = unit_of(constraint.type());
  const std::string bound = format("%.3g", m.max_probability);
  if (m.meets) {
    m.verdict = "meets " + bound + " with " + format("%.3g", m.spare) + unit + " to spare";
  } else {
    m.verdict = "exceeds: p = " + format("%.3g", m.governing_probability) + " > " + bound + " (short by " +
                format("%.3g", -m.spare) + unit + ")";
  }
  return m;
}

}  // namespace sigmatube::constraints
