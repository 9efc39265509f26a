// SPDX-License-Identifier: MIT
#include "sigmatube/constraints/assessment.h"

#include <algorithm>
#include <cmath>
#include <limits>

#include "sigmatube/constraints/reformulations.h"

namespace sigmatube::constraints {

ConstraintAssessment assess_constraint(const Constraint& constraint, const ConstraintStatistics& st,
                                       const Eigen::VectorXd& times) {
  ConstraintAssessment a;
  const double epsilon = constraint.max_probability();
  a.gaussian_ok = gaussian_check(st.clearance_mean, st.clearance_std, epsilon);
  a.cantelli_ok = cantelli_check(st.clearance_mean, st.clearance_std, epsilon);
  a.reformulation_note = reformulation_note(
      find_reformulation_disagreements(times, a.gaussian_ok, a.cantelli_ok, st.pointwise_probability, epsilon));
  double worst = 0.0;
  for (Eigen::Index t = 0; t < st.pointwise_probability.size(); ++t)
    if (!std::isnan(st.pointwise_probability[t])) worst = std::max(worst, st.pointwise_probability[t]);
  a.worst_pointwise_probability = worst;
  a.margin = compute_margin(constraint, st, times);
  double backoff = -std::numeric_limits<double>::infinity();
  for (Eigen::Index t = 0; t < a.margin.backoff.size(); ++t)
    if (!std::isnan(a.margin.backoff[t])) backoff = std::max(backoff, a.margin.backoff[t]);
  a.required_backoff = std::isfinite(backoff) ? backoff : std::numeric_limits<double>::quiet_NaN();
  return a;
}

std::vector<ConstraintAssessment> assess_constraints(const std::vector<Constraint>& list,
                                                     const ViolationResults& statistics,
                                                     const Eigen::VectorXd& times) {
  std::vector<ConstraintAssessment> out;
  out.reserve(list.size());
  for (std::size_t k = 0; k < list.size(); ++k) out.push_back(assess_constraint(list[k], statistics.constraints[k], times));
  return out;
}

}  // namespace sigmatube::constraints
