// SPDX-License-Identifier: MIT
#pragma once
// Margins that meet each constraint's risk bound ε = max_probability, from the
// sampled clearance statistics (violation_statistics.h):
//
//   back-off at t        b_t = μ_t − q_ε,t        how far the mean must stay from 0
//   worst time           argmin over window times of q_ε,t
//   path margin          q_ε of the per-sample path-minimum clearance
//   spare                path margin (scope = path) or worst q_ε,t (scope = pointwise);
//                        spare ≥ 0 ⟺ the sampled probability ≤ ε
//   outside-sphere       clearance = d − r, so the largest radius the plan tolerates
//                        at ε is r + spare and the inflation needed is −spare
//                        (negative = margin to spare)
//
// The verdict is one line, e.g. "meets 1e-03 with 2.3 m to spare" or
// "exceeds: p = 2.1e-03 > 1e-03 (short by 0.4 m)".
#include <optional>
#include <string>

#include <Eigen/Core>

#include "sigmatube/constraints/constraint.h"
#include "sigmatube/constraints/violation_statistics.h"

// Layer constraints/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::constraints {

struct ConstraintMargin {
  std::string name;
  double max_probability = 0.0;
  Eigen::VectorXd backoff;              // [T], NaN outside the window
  int worst_time_index = -1;
  double worst_time_in_seconds = 0.0;
  double worst_quantile = 0.0;          // min over the window of q_ε,t
  double path_margin = 0.0;
  double spare = 0.0;                   // see above
  double governing_probability = 0.0;
  bool meets = false;                   // governing probability ≤ max_probability
  std::optional<double> tolerable_radius;    // outside-sphere only
  std::optional<double> required_inflation;  // outside-sphere only, −spare
  std::string verdict;
};

/// @throws std::logic_error when the statistics do not belong to the constraint.
ConstraintMargin compute_margin(const Constraint& constraint, const ConstraintStatistics& statistics,
                                const Eigen::VectorXd& times_in_seconds);

}  // namespace sigmatube::constraints
