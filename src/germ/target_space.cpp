// SPDX-License-Identifier: MIT
// Kept apart from germ.cpp so that only this file needs ClosedLoop: the germ
// itself (and its tests) works on a TargetSpace made by hand.
#include "sigmatube/germ/germ.h"

namespace sigmatube::germ {

TargetSpace targets_of(const model::ClosedLoop& closed_loop) {
  const model::Model& model = closed_loop.model();
  TargetSpace space;
  space.states = model.state_names();
  space.inputs = model.input_names();
  space.parameters = model.parameter_names();
  space.disturbance_times = closed_loop.disturbance_times();
  return space;
}

}  // namespace sigmatube::germ
