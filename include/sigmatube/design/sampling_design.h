// SPDX-License-Identifier: MIT
#pragma once
// Space-filling designs of N points in germ space. Each point is first drawn in
// the unit cube, u ∈ (0, 1)^d, then mapped per dimension through the family's
// quantile, ξ_k = F_k⁻¹(u_k) = from_standard_normal(spec_k, Φ⁻¹(u_k)).
//   Sobol:  the Sobol sequence (Sobol', USSR Comput. Math. Math. Phys. 7, 1967)
//           from boost::random::sobol, which starts after the all-zero point, so
//           every u_k is inside (0, 1). The first N points of a longer design
//           are the N-point design (nested: adaptive regression reuses runs).
//   Latin hypercube (McKay, Beckman & Conover, Technometrics 21, 1979):
//           u_ik = (π_k(i) + v_ik)/N with π_k a permutation of 0…N−1 and v_ik
//           uniform on (0, 1), both from CounterRng(seed) so the design depends
//           on (seed, N) only.
#include <cstdint>
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/germ/family.h"

// Layer design/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::design {

/// [n_points, d] Sobol design in germ space.
Eigen::MatrixXd sobol_design(const std::vector<germ::FamilySpec>& families, int n_points);

/// [n_points, d] Latin hypercube design in germ space.
Eigen::MatrixXd latin_hypercube_design(const std::vector<germ::FamilySpec>& families, int n_points,
                                       std::uint64_t seed);

/// The unit-cube Sobol points (u, before the quantile map), [n_points, d].
Eigen::MatrixXd sobol_unit_cube(int dimension, int n_points);

}  // namespace sigmatube::design
