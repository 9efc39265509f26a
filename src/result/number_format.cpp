// SPDX-License-Identifier: MIT
#include "sigmatube/result/number_format.h"

#include <charconv>
#include <cmath>
#include <cstdio>

namespace sigmatube::result {

std::string format_probability(double p, int digits) {
  if (std::isnan(p)) return kMissingValue;
  if (p == 0.0) return "0";
  if (std::isinf(p)) return p > 0 ? "inf" : "-inf";
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.*e", digits > 1 ? digits - 1 : 0, p);
  return buffer;
}

std::string format_shortest(double v) {
  if (std::isnan(v)) return "nan";
  if (std::isinf(v)) return v > 0 ? "inf" : "-inf";
  char buffer[64];
  const auto end = std::to_chars(buffer, buffer + sizeof buffer, v).ptr;
  return std::string(buffer, end);
}

std::string format_value(double v, int digits) {
  if (std::isnan(v)) return kMissingValue;
  if (std::isinf(v)) return v > 0 ? "inf" : "-inf";
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.*g", digits, v);
  return buffer;
}

std::string format_fixed(double v, int decimals) {
  if (std::isnan(v)) return kMissingValue;
  if (std::isinf(v)) return v > 0 ? "inf" : "-inf";
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.*f", decimals, v);
  return buffer;
}

std::size_t display_width(const std::string& utf8) {
  std::size_t n = 0;
  for (unsigned char c : utf8)
    if ((c & 0xC0) != 0x80) ++n;  // count lead bytes only
  return n;
}

}  // namespace sigmatube::result
