// SPDX-License-Identifier: MIT
#include "sigmatube/design/clenshaw_curtis.h"

#include <cmath>
#include <numbers>
#include <stdexcept>

namespace sigmatube::design {

int clenshaw_curtis_points(int level) {
  if (level < 1 || level > 30) throw std::logic_error("clenshaw_curtis_points: level out of range");
  return level == 1 ? 1 : (1 << (level - 1)) + 1;
}

QuadratureRule clenshaw_curtis_rule(int level) {
  const int n = clenshaw_curtis_points(level);
  QuadratureRule rule;
  rule.nodes.resize(n);
  rule.weights.resize(n);
  rule.exactness_degree = n;  // n odd: exact to n − 1 by construction, to n by symmetry
  if (n == 1) {
    rule.nodes[0] = 0.0;
    rule.weights[0] = 1.0;
    rule.exactness_degree = 1;
    return rule;
  }
  const int big_n = n - 1;
  for (int j = 0; j < n; ++j) {
    const double theta = std::numbers::pi * j / big_n;
    double sum = 0.0;
    for (int k = 1; k <= big_n / 2; ++k) {
      const double b = (2 * k == big_n) ? 1.0 : 2.0;
      sum += b * std::cos(2.0 * k * theta) / (4.0 * k * k - 1.0);
    }
    const double c = (j == 0 || j == big_n) ? 1.0 : 2.0;
    rule.weights[j] = 0.5 * c / big_n * (1.0 - sum);
    rule.nodes[j] = -std::cos(theta);
  }
  // cos(π/2) is 6e-17, not 0: pin the midpoint and mirror the halves so that
  // nested levels share nodes bit for bit and the rule is exactly symmetric.
  for (int j = 0; j < n / 2; ++j) rule.nodes[n - 1 - j] = -rule.nodes[j];
  rule.nodes[n / 2] = 0.0;
  return rule;
}

}  // namespace sigmatube::design
