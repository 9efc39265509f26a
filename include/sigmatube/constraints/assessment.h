// SPDX-License-Identifier: MIT
#pragma once
// The constraint stage of an analysis: from one constraint's sampled violation
// statistics, the moment reformulations (reformulations.h), the margins and the
// verdict (margins.h), everything the result file keeps of that constraint
// beyond the statistics themselves.
#include <cstdint>
#include <string>
#include <vector>

#include <Eigen/Core>

#include "sigmatube/constraints/constraint.h"
#include "sigmatube/constraints/margins.h"
#include "sigmatube/constraints/violation_statistics.h"

// Layer constraints/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::constraints {

struct ConstraintAssessment {
  std::vector<std::uint8_t> gaussian_ok;   // [T], gaussian_check at ε = max_probability
  std::vector<std::uint8_t> cantelli_ok;   // [T], cantelli_check at ε
  std::string reformulation_note;          // where they disagree with sampling, or ""
  double worst_pointwise_probability = 0;  // largest non-NaN pointwise probability (0 if none)
  double required_backoff = 0;             // max over the window of μ − q_ε (NaN if none is finite)
  ConstraintMargin margin;                 // compute_margin
};

ConstraintAssessment assess_constraint(const Constraint& constraint, const ConstraintStatistics& statistics,
                                       const Eigen::VectorXd& times_in_seconds);

/// assess_constraint for every constraint, in order (statistics from the same list).
std::vector<ConstraintAssessment> assess_constraints(const std::vector<Constraint>& list,
                                                     const ViolationResults& statistics,
                                                     const Eigen::VectorXd& times_in_seconds);

}  // namespace sigmatube::constraints
