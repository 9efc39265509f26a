// SPDX-License-Identifier: MIT
#include "sigmatube/germ/family.h"

#include <boost/math/distributions/beta.hpp>
#include <boost/math/distributions/gamma.hpp>
#include <boost/math/distributions/normal.hpp>
#include <charconv>
#include <cmath>
#include <sstream>
#include <stdexcept>

namespace sigmatube::germ {
namespace {
const boost::math::normal_distribution<double> kStandardNormal(0.0, 1.0);

// Φ(z) and 1 - Φ(z) computed without cancellation in either tail.
double lower_tail(double z) { return boost::math::cdf(kStandardNormal, z); }
double upper_tail(double z) { return boost::math::cdf(boost::math::complement(kStandardNormal, z)); }
}  // namespace

namespace {
std::string shortest(double v) {
  char buffer[64];
  const auto [end, ec] = std::to_chars(buffer, buffer + sizeof buffer, v);
  if (ec != std::errc()) throw std::logic_error("to_string: number does not print");
  return std::string(buffer, end);
}
}  // namespace

std::string to_string(const FamilySpec& spec) {
  switch (spec.family) {
    case Family::hermite: return "hermite";
    case Family::legendre: return "legendre";
    case Family::jacobi: return "jacobi(a=" + shortest(spec.a) + ", b=" + shortest(spec.b) + ")";
    case Family::laguerre: return "laguerre(a=" + shortest(spec.a) + ")";
  }
  throw std::logic_error("to_string: unknown family");
}

FamilySpec family_from_string(const std::string& text) {
  if (text == "hermite") return {Family::hermite, 0.0, 0.0};
  if (text == "legendre") return {Family::legendre, 0.0, 0.0};
  // Reads "<prefix><number><suffix>" exactly, the number with from_chars.
  auto number_between = [&](std::size_t& at, const std::string& prefix, const std::string& suffix) {
    if (text.compare(at, prefix.size(), prefix) != 0) throw std::invalid_argument("unknown germ family '" + text + "'");
    at += prefix.size();
    double value = 0.0;
    const auto [end, ec] = std::from_chars(text.data() + at, text.data() + text.size(), value);
    if (ec != std::errc()) throw std::invalid_argument("unknown germ family '" + text + "'");
    at = static_cast<std::size_t>(end - text.data());
    if (text.compare(at, suffix.size(), suffix) != 0) throw std::invalid_argument("unknown germ family '" + text + "'");
    at += suffix.size();
    return value;
  };
  std::size_t at = 0;
  FamilySpec spec;
  if (text.rfind("jacobi(", 0) == 0) {
    spec.family = Family::jacobi;
    spec.a = number_between(at, "jacobi(a=", ", ");
    spec.b = number_between(at, "b=", ")");
  } else {
    spec.family = Family::laguerre;
    spec.a = number_between(at, "laguerre(a=", ")");
  }
  if (at != text.size()) throw std::invalid_argument("unknown germ family '" + text + "'");
  return spec;
}

double from_standard_normal(const FamilySpec& spec, double z) {
  switch (spec.family) {
    case Family::hermite: return z;
    case Family::legendre:
      // ξ = 2Φ(z) - 1 = Φ(z) - (1 - Φ(z)), the difference of two tails keeps digits at |z| large.
      return lower_tail(z) - upper_tail(z);
    case Family::jacobi: {
      // (ξ + 1)/2 ~ Beta(b + 1, a + 1) for density ∝ (1-ξ)^a (1+ξ)^b.
      const boost::math::beta_distribution<double> beta(spec.b + 1.0, spec.a + 1.0);
      const double u = z <= 0 ? boost::math::quantile(beta, lower_tail(z))
                              : boost::math::quantile(boost::math::complement(beta, upper_tail(z)));
      return 2.0 * u - 1.0;
    }
    case Family::laguerre: {
      const boost::math::gamma_distribution<double> gamma(spec.a + 1.0, 1.0);
      return z <= 0 ? boost::math::quantile(gamma, lower_tail(z))
                    : boost::math::quantile(boost::math::complement(gamma, upper_tail(z)));
    }
  }
  throw std::logic_error("from_standard_normal: unknown family");
}

double to_standard_normal(const FamilySpec& spec, double xi) {
  switch (spec.family) {
    case Family::hermite: return xi;
    case Family::legendre: {
      const double p = 0.5 * (xi + 1.0);
      return p <= 0.5 ? boost::math::quantile(kStandardNormal, p)
                      : boost::math::quantile(boost::math::complement(kStandardNormal, 0.5 * (1.0 - xi)));
    }
    case Family::jacobi: {
      const boost::math::beta_distribution<double> beta(spec.b + 1.0, spec.a + 1.0);
      const double u = 0.5 * (xi + 1.0);
      const double p = boost::math::cdf(beta, u);
      return p <= 0.5 ? boost::math::quantile(kStandardNormal, p)
                      : boost::math::quantile(boost::math::complement(kStandardNormal,
                                                                      boost::math::cdf(boost::math::complement(beta, u))));
    }
    case Family::laguerre: {
      const boost::math::gamma_distribution<double> gamma(spec.a + 1.0, 1.0);
      const double p = boost::math::cdf(gamma, xi);
      return p <= 0.5 ? boost::math::quantile(kStandardNormal, p)
                      : boost::math::quantile(boost::math::complement(
                            kStandardNormal, boost::math::cdf(boost::math::complement(gamma, xi))));
    }
  }
  throw std::logic_error("to_standard_normal: unknown family");
}

}  // namespace sigmatube::germ
