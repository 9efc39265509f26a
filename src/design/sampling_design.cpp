// SPDX-License-Identifier: MIT
#include "sigmatube/design/sampling_design.h"

#include <algorithm>
#include <boost/math/special_functions/erf.hpp>
#include <boost/random/sobol.hpp>
#include <cmath>
#include <numeric>
#include <stdexcept>

#include "sigmatube/core/counter_rng.h"
#include "sigmatube/core/error.h"

namespace sigmatube::design {
namespace {

double standard_normal_quantile(double u) { return -std::sqrt(2.0) * boost::math::erfc_inv(2.0 * u); }

void map_to_germ(const std::vector<germ::FamilySpec>& families, Eigen::MatrixXd& u) {
  for (Eigen::Index i = 0; i < u.rows(); ++i)
    for (Eigen::Index k = 0; k < u.cols(); ++k)
      u(i, k) = germ::from_standard_normal(families[k], standard_normal_quantile(u(i, k)));
}

}  // namespace

Eigen::MatrixXd sobol_unit_cube(int dimension, int n_points) {
  if (dimension < 1 || n_points < 0) throw std::logic_error("sobol_unit_cube: bad size");
  constexpr int kMaxSobolDimension = 3667;  // boost's default direction-number table
  if (dimension > kMaxSobolDimension)
    throw InputError(SourceLocation{"", 0, "surrogate.design"},
                     "the Sobol design supports at most 3667 germ dimensions");
  // boost's engine starts at sequence index 1: the all-zero point never appears,
  // so every u_k lies in (0, 1) and the quantile maps stay finite.
  boost::random::sobol engine(dimension);
  const double scale = std::ldexp(1.0, -64);
  Eigen::MatrixXd u(n_points, dimension);
  for (int i = 0; i < n_points; ++i)
    for (int k = 0; k < dimension; ++k) u(i, k) = static_cast<double>(engine()) * scale;
  return u;
}

Eigen::MatrixXd sobol_design(const std::vector<germ::FamilySpec>& families, int n_points) {
  Eigen::MatrixXd u = sobol_unit_cube(static_cast<int>(families.size()), n_points);
  map_to_germ(families, u);
  return u;
}

Eigen::MatrixXd latin_hypercube_design(const std::vector<germ::FamilySpec>& families, int n_points,
                                       std::uint64_t seed) {
  const int d = static_cast<int>(families.size());
  if (d < 1 || n_points < 1) throw std::logic_error("latin_hypercube_design: bad size");
  const CounterRng rng(seed);
  Eigen::MatrixXd u(n_points, d);
  std::vector<int> order(n_points);
  std::vector<double> key(n_points);
  for (int k = 0; k < d; ++k) {
    // A random permutation: sort the stratum indices by counter-based keys.
    for (int i = 0; i < n_points; ++i) key[i] = rng.uniform(i, 2 * static_cast<std::uint64_t>(k));
    std::iota(order.begin(), order.end(), 0);
    std::stable_sort(order.begin(), order.end(), [&](int x, int y) { return key[x] < key[y]; });
    for (int i = 0; i < n_points; ++i) {
      const double v = rng.uniform(i, 2 * static_cast<std::uint64_t>(k) + 1);
      u(i, k) = (order[i] + v) / n_points;
    }
  }
  map_to_germ(families, u);
  return u;
}

}  // namespace sigmatube::design
