// SPDX-License-Identifier: MIT
#include "sigmatube/expansion/tensor_projection.h"

#include <cmath>
#include <stdexcept>

#include "sigmatube/design/gauss_rule.h"
#include "sigmatube/expansion/multi_index.h"
#include "sigmatube/expansion/polynomial_basis.h"

namespace sigmatube::expansion {

double tensor_grid_size(int dimension, int degree) { return std::pow(degree + 1.0, dimension); }

LinearProjection tensor_projection(const std::vector<germ::FamilySpec>& families, int degree, double q_norm) {
  const int d = static_cast<int>(families.size());
  if (d == 0 || degree < 0) throw std::logic_error("tensor_projection: bad dimension or degree");
  if (tensor_grid_size(d, degree) > 1e8) throw std::logic_error("tensor_projection: grid too large");
  std::vector<design::QuadratureRule> rules;
  for (const auto& spec : families) rules.push_back(design::gauss_rule(spec, degree + 1));
  const int n = degree + 1;
  Eigen::Index count = 1;
  for (int k = 0; k < d; ++k) count *= n;

  LinearProjection result;
  result.points.resize(count, d);
  Eigen::VectorXd weights(count);
  std::vector<int> digit(d, 0);
  for (Eigen::Index j = 0; j < count; ++j) {
    double w = 1.0;
    for (int k = 0; k < d; ++k) {
      result.points(j, k) = rules[k].nodes[digit[k]];
      w *= rules[k].weights[digit[k]];
    }
    weights[j] = w;
    for (int k = 0; k < d; ++k) {
      if (++digit[k] < n) break;
      digit[k] = 0;
    }
  }
  result.indices = hyperbolic_set(d, degree, q_norm);
  result.matrix = (basis_matrix(families, result.indices, result.points).array().colwise() * weights.array())
                      .matrix()
                      .transpose();
  return result;
}

}  // namespace sigmatube::expansion
