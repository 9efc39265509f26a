// SPDX-License-Identifier: MIT
#pragma once
// A keep-out sphere about the origin on outputs x, y, z, for constraint tests.
#include "sigmatube/casefile/case_options.h"

namespace sigmatube::test {

inline casefile::ConstraintOptions keep_out_sphere(double radius, double epsilon) {
  casefile::ConstraintOptions o;
  o.name = "keep-out";
  o.type = casefile::ConstraintKind::outside_sphere;
  o.position = {"x", "y", "z"};
  o.center = {0, 0, 0};
  o.radius = radius;
  o.max_probability = epsilon;
  return o;
}

}  // namespace sigmatube::test
