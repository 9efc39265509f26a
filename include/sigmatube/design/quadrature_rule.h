// SPDX-License-Identifier: MIT
#pragma once
// A one-dimensional quadrature rule for a probability measure:
//   E[f(ξ)] ≈ Σ_j w_j f(x_j),  Σ_j w_j = 1.
#include <Eigen/Dense>

// Layer design/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::design {

struct QuadratureRule {
  Eigen::VectorXd nodes;    // ascending
  Eigen::VectorXd weights;  // same length, summing to 1
  /// Highest degree d such that every polynomial of degree ≤ d is integrated exactly.
  int exactness_degree = 0;
  int size() const { return static_cast<int>(nodes.size()); }
};

}  // namespace sigmatube::design
