// SPDX-License-Identifier: MIT
#pragma once
#include <cstdint>
// The rare-event stage of an analysis: a crude Monte Carlo of a few thousand
// runs cannot resolve a bound ≤ 1e-4, so for such a constraint the design points
// are found on the surrogate (find_design_points, multi-start HL-RF from the closest
// well-separated violating points of screening samples, nominal then wider until 50
// violate) and the full model is importance-sampled from the defensive mixture over
// them (mixture_over with α₀ = kDefensiveShare; importance_sample_constraint).
#include <optional>
#include <vector>

#include <Eigen/Core>

#include "sigmatube/constraints/constraint.h"
#include "sigmatube/expansion/surrogate.h"
#include "sigmatube/germ/germ.h"
#include "sigmatube/montecarlo/importance_sampling.h"
#include "sigmatube/montecarlo/monte_carlo.h"

// Layer montecarlo/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::montecarlo {

// Share of plain N(0, I) draws in the proposal: bounds every weight by 1/α₀ = 10 whatever
// region the design points miss, at ≤ 10 % of the runs (Hesterberg 1995 suggests
// α₀ of 0.1 to 0.5; the low end here because p is small and nominal draws rarely violate).
inline constexpr double kDefensiveShare = 0.1;

struct RareEventOptions {
  double threshold = 1e-4;   // constraints with max_probability ≤ threshold get an estimate
  long long samples = 5000;  // most full-model importance-sampling runs per constraint
  unsigned long long seed = 0;
  double confidence = 0.95;
  int threads = 0;
  double cov_target = 0.1;   // adaptive: stop when the CoV is at most this (importance_sampling.h)
  // Per constraint (may be empty): 1 = a violation is already shown by the surrogate
  // or the Monte Carlo runs, so no estimate is spent on it (it could not change the verdict).
  std::vector<std::uint8_t> skip;
};

struct RareEventEstimate {
  MostProbablePoint design_point;  // the most probable of design_points
  std::vector<MostProbablePoint> design_points;  // on the surrogate, in standard-normal germ space
  MixtureProposal proposal;        // the importance-sampling density over them
  ImportanceSamplingResult sampling;
};

/// The estimate for one constraint. `run_sample` runs the full model at a germ point.
RareEventEstimate rare_event_estimate(const germ::Germ& germ, const expansion::Surrogate& surrogate,
                                      const constraints::Constraint& constraint,
                                      const Eigen::VectorXd& times_in_seconds, const RareEventOptions& options,
                                      const RunSample& run_sample);

/// One entry per constraint: the estimate where max_probability ≤ options.threshold,
/// nullopt elsewhere.
std::vector<std::optional<RareEventEstimate>> rare_events(const germ::Germ& germ,
                                                          const expansion::Surrogate& surrogate,
                                                          const std::vector<constraints::Constraint>& constraints,
                                                          const Eigen::VectorXd& times_in_seconds,
                                                          const RareEventOptions& options,
                                                          const RunSample& run_sample);

}  // namespace sigmatube::montecarlo
