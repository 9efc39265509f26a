// SPDX-License-Identifier: MIT
#pragma once
// Numeric command-line options, validated like case keys: integers without
// wrap-around, no NaN or infinity, a readable range in every message.
#include <string>

namespace sigmatube {

/// Parses `text` as a decimal integer in [low, high]; throws InputError naming
/// `option` otherwise ("--seed: must be an integer in [0, 9223372036854775807], got '-1'").
long long parse_integer_option(const std::string& text, const std::string& option, long long low, long long high);

/// Parses `text` as a finite number in the interval from `low` to `high`,
/// each end open or closed as given.
double parse_real_option(const std::string& text, const std::string& option, double low, double high, bool low_open,
                         bool high_open);

/// `text` cut to at most `limit` characters ("…" marks a cut), for messages
/// that quote what a user typed.
std::string quote_for_message(const std::string& text, std::size_t limit = 40);

/// `value` with at most `digits` significant digits, as an ostream prints it
/// with that precision (1e+03, 0.0123, 42), for messages and estimates.
std::string significant_digits(double value, int digits);

}  // namespace sigmatube
