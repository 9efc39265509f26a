// SPDX-License-Identifier: MIT
#include "sigmatube/result/proportion_test.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>

#include <boost/math/distributions/hypergeometric.hpp>

namespace sigmatube::result {
namespace {

void check_counts(long long x, long long n) {
  if (n < 1 || x < 0 || x > n)
    throw std::invalid_argument("proportion test: need 0 <= x <= n and n >= 1, got x = " + std::to_string(x) +
                                ", n = " + std::to_string(n));
}

// 1 − Φ(z) without cancellation in the upper tail.
double normal_upper_tail(double z) { return 0.5 * std::erfc(z / std::sqrt(2.0)); }

}  // namespace

ProportionTest pooled_z_test(long long xb, long long nb, long long xc, long long nc) {
  check_counts(xb, nb);
  check_counts(xc, nc);
  ProportionTest t;
  t.method = "pooled z";
  const double pooled = double(xb + xc) / double(nb + nc);
  const double variance = pooled * (1 - pooled) * (1.0 / double(nb) + 1.0 / double(nc));
  const double difference = double(xc) / double(nc) - double(xb) / double(nb);
  t.z = variance > 0 ? difference / std::sqrt(variance) : 0.0;
  t.p_value = normal_upper_tail(t.z);
  return t;
}

ProportionTest fisher_exact_greater(long long xb, long long nb, long long xc, long long nc) {
  check_counts(xb, nb);
  check_counts(xc, nc);
  constexpr long long kLimit = std::numeric_limits<unsigned>::max();
  if (nb + nc > kLimit) throw std::invalid_argument("fisher_exact_greater: sample too large");
  ProportionTest t;
  t.method = "Fisher exact";
  t.z = std::numeric_limits<double>::quiet_NaN();
  if (xc == 0) {
    t.p_value = 1.0;
    return t;
  }
  const boost::math::hypergeometric_distribution<double> h(unsigned(xb + xc), unsigned(nc), unsigned(nb + nc));
  t.p_value = boost::math::cdf(boost::math::complement(h, unsigned(xc - 1)));
  return t;
}

ProportionTest one_sided_increase_test(long long xb, long long nb, long long xc, long long nc) {
  check_counts(xb, nb);
  check_counts(xc, nc);
  const double pooled = double(xb + xc) / double(nb + nc);
  const double smallest_expected = std::min(double(std::min(nb, nc)) * pooled, double(std::min(nb, nc)) * (1 - pooled));
  return smallest_expected < 5.0 ? fisher_exact_greater(xb, nb, xc, nc) : pooled_z_test(xb, nb, xc, nc);
}

ProportionTest normal_difference_test(double pb, double seb, double pc, double sec) {
  ProportionTest t;
  t.method = "normal z";
  const double a = std::isnan(seb) ? 0.0 : seb, b = std::isnan(sec) ? 0.0 : sec;
  const double scale = std::sqrt(a * a + b * b);
  const double difference = pc - pb;
  if (std::isnan(difference)) {
    t.z = std::numeric_limits<double>::quiet_NaN();
    t.p_value = std::numeric_limits<double>::quiet_NaN();
    return t;
  }
  if (scale > 0)
    t.z = difference / scale;
  else
    t.z = difference > 0   ? std::numeric_limits<double>::infinity()
          : difference < 0 ? -std::numeric_limits<double>::infinity()
                           : 0.0;
  t.p_value = normal_upper_tail(t.z);
  return t;
}

}  // namespace sigmatube::result
