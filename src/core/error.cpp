// SPDX-License-Identifier: MIT
#include "sigmatube/core/error.h"

#include <cmath>
#include <limits>
#include <sstream>

namespace sigmatube {

std::string format_location_message(const SourceLocation& where, const std::string& message) {
  std::ostringstream out;
  if (!where.file.empty()) {
    out << where.file;
    if (where.line > 0) out << ':' << where.line;
    out << ": ";
  }
  if (!where.key.empty()) out << where.key << ": ";
  out << message;
  std::string text = out.str();
  // One line, always: a message that embeds a newline would break the contract.
  for (char& c : text)
    if (c == '\n' || c == '\r') c = ' ';
  return text;
}

InputError::InputError(const std::string& message)
    : std::runtime_error(format_location_message({}, message)) {}

InputError::InputError(SourceLocation where, const std::string& message)
    : std::runtime_error(format_location_message(where, message)), where_(std::move(where)) {}

NumericalError::NumericalError(const std::string& message)
    : std::runtime_error(message), time_in_seconds_(std::numeric_limits<double>::quiet_NaN()) {}

namespace {
std::string numerical_message(const std::string& message, long long sample, double t) {
  std::ostringstream out;
  out << message;
  if (sample >= 0) out << " (sample " << sample;
  else out << " (nominal run";
  if (!std::isnan(t)) out << ", t = " << t << " s";
  out << ')';
  return out.str();
}
}  // namespace

NumericalError::NumericalError(const std::string& message, long long sample, double time_in_seconds)
    : std::runtime_error(numerical_message(message, sample, time_in_seconds)),
      sample_(sample),
      time_in_seconds_(time_in_seconds) {}

}  // namespace sigmatube
