// SPDX-License-Identifier: MIT
#include "sigmatube/model/model.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <vector>

namespace sigmatube::model {

void Model::jacobians(double t, const double* x, const double* u, const double* p, double* A,
                      double* B) const {
  // Central differences: truncation O(h²) and rounding O(eps/h) balance at
  // h ~ cbrt(eps) (Nocedal & Wright, Numerical Optimization, 2006, §8.1).
  const int n = state_count();
  const int m = input_count();
  const double h0 = std::cbrt(std::numeric_limits<double>::epsilon());
  // Jacobians are taken per plan linearization, not per integration step, so
  // allocating the work vectors here is fine.
  std::vector<double> xs(x, x + n), us(u, u + m), fp(n), fm(n);
  for (int j = 0; j < n; ++j) {
    const double h = h0 * std::max(1.0, std::abs(x[j]));
    xs[j] = x[j] + h;
    rhs(t, xs.data(), u, p, fp.data());
    xs[j] = x[j] - h;
    rhs(t, xs.data(), u, p, fm.data());
    xs[j] = x[j];
    for (int i = 0; i < n; ++i) A[i + j * n] = (fp[i] - fm[i]) / (2.0 * h);
  }
  for (int j = 0; j < m; ++j) {
    const double h = h0 * std::max(1.0, std::abs(u[j]));
    us[j] = u[j] + h;
    rhs(t, x, us.data(), p, fp.data());
    us[j] = u[j] - h;
    rhs(t, x, us.data(), p, fm.data());
    us[j] = u[j];
    for (int i = 0; i < n; ++i) B[i + j * n] = (fp[i] - fm[i]) / (2.0 * h);
  }
}

void Model::derived_outputs(double, const double*, const double*, const double*, double*) const {}

}  // namespace sigmatube::model

namespace sigmatube::model {
std::string Model::unit(const std::string&) const { return ""; }
}  // namespace sigmatube::model
