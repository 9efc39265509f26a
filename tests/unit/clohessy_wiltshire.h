// SPDX-License-Identifier: MIT
#pragma once
// Clohessy & Wiltshire (1960) closed-form state transition matrix of free drift,
// ẍ = 3n²x + 2nẏ, ÿ = −2nẋ, z̈ = −n²z, state (x, y, z, vx, vy, vz), c = cos nt,
// s = sin nt: the reference for the integrators' accuracy tests.
#include <cmath>

#include <Eigen/Dense>

inline Eigen::Matrix<double, 6, 6> clohessy_wiltshire_transition(double n, double t) {
  const double c = std::cos(n * t), s = std::sin(n * t), nt = n * t;
  Eigen::Matrix<double, 6, 6> phi;
  phi << 4 - 3 * c, 0, 0, s / n, 2 * (1 - c) / n, 0,
         6 * (s - nt), 1, 0, -2 * (1 - c) / n, (4 * s - 3 * nt) / n, 0,
         0, 0, c, 0, 0, s / n,
         3 * n * s, 0, 0, c, 2 * s, 0,
         -6 * n * (1 - c), 0, 0, -2 * s, 4 * c - 3, 0,
         0, 0, -n * s, 0, 0, c;
  return phi;
}
