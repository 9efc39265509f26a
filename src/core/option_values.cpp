// SPDX-License-Identifier: MIT
#include "sigmatube/core/option_values.h"

#include <cerrno>
#include <cmath>
#include <cstdlib>
#include <sstream>

#include "sigmatube/core/error.h"

namespace sigmatube {
namespace {

std::string short_number(double value) { return significant_digits(value, 6); }

}  // namespace

std::string significant_digits(double value, int digits) {
  std::ostringstream out;
  out.precision(digits);
  out << value;
  return out.str();
}

std::string quote_for_message(const std::string& text, std::size_t limit) {
  std::string shown;
  for (char c : text.substr(0, limit)) shown += (c == '\n' || c == '\r' || c == '\t') ? ' ' : c;
  return "'" + shown + (text.size() > limit ? "…'" : "'");
}

long long parse_integer_option(const std::string& text, const std::string& option, long long low, long long high) {
  const std::string range = "an integer in [" + std::to_string(low) + ", " + std::to_string(high) + "]";
  const auto refuse = [&]() {
    throw InputError(SourceLocation{"", 0, option}, "must be " + range + ", got " + quote_for_message(text));
  };
  std::size_t i = 0;
  if (i < text.size() && (text[i] == '-' || text[i] == '+')) ++i;
  if (i == text.size()) refuse();
  for (std::size_t k = i; k < text.size(); ++k)
    if (text[k] < '0' || text[k] > '9') refuse();
  errno = 0;
  char* end = nullptr;
  const long long value = std::strtoll(text.c_str(), &end, 10);
  if (errno == ERANGE || end != text.c_str() + text.size() || value < low || value > high) refuse();
  return value;
}

double parse_real_option(const std::string& text, const std::string& option, double low, double high, bool low_open,
                         bool high_open) {
  const std::string range = std::string(low_open ? "(" : "[") + short_number(low) + ", " + short_number(high) +
                            (high_open ? ")" : "]");
  const auto refuse = [&]() {
    throw InputError(SourceLocation{"", 0, option}, "must be a number in " + range + ", got " + quote_for_message(text));
  };
  if (text.empty()) refuse();
  errno = 0;
  char* end = nullptr;
  const double value = std::strtod(text.c_str(), &end);
  if (end != text.c_str() + text.size() || !std::isfinite(value)) refuse();
  if (low_open ? !(value > low) : !(value >= low)) refuse();
  if (high_open ? !(value < high) : !(value <= high)) refuse();
  return value;
}

}  // namespace sigmatube
