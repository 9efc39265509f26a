// SPDX-License-Identifier: MIT
#pragma once
// The interval of a sorted grid that holds t, found by walking from the previous
// answer: many lanes of the lane integrator (model/lane_dopri5.h) ask at times
// that move a little from stage to stage, so a walk from each lane's hint costs
// O(1) where a binary search costs log(knots). Same answer as the binary
// searches of Plan::evaluate, Controller::command and grid_segment.
#include <cstddef>
#include <vector>

// Layer model/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::model {

/// The largest k ≤ last with times[k] ≤ t (0 when there is none), walking from
/// hint. t must not be NaN; times increasing; last < times.size().
inline std::size_t walk_to_interval(const std::vector<double>& times, double t, std::size_t last, std::size_t hint) {
  std::size_t k = hint < last ? hint : last;
  while (k < last && times[k + 1] <= t) ++k;
  while (k > 0 && times[k] > t) --k;
  return k;
}

}  // namespace sigmatube::model
