// SPDX-License-Identifier: MIT
#include "sigmatube/montecarlo/clopper_pearson.h"

#include <boost/math/special_functions/beta.hpp>
#include <stdexcept>

namespace sigmatube::montecarlo {

BinomialInterval clopper_pearson(long long k, long long n, double confidence) {
  if (k < 0 || n < 0 || k > n) throw std::logic_error("clopper_pearson: need 0 ≤ k ≤ n");
  if (!(confidence > 0.0 && confidence < 1.0)) throw std::logic_error("clopper_pearson: confidence must lie in (0, 1)");
  BinomialInterval interval;
  if (n == 0) return interval;
  const double alpha = 1.0 - confidence;
  const double kd = static_cast<double>(k), nd = static_cast<double>(n);
  interval.lower = k == 0 ? 0.0 : boost::math::ibeta_inv(kd, nd - kd + 1.0, alpha / 2.0);
  // The upper limit through the complement keeps digits when 1 − α/2 is close to 1.
  interval.upper = k == n ? 1.0 : boost::math::ibetac_inv(kd + 1.0, nd - kd, alpha / 2.0);
  return interval;
}

}  // namespace sigmatube::montecarlo
