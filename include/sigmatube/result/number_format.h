// SPDX-License-Identifier: MIT
#pragma once
// How numbers look in everything a person reads (terminal summary, compare
// table, HTML report). One place, so the three agree.
#include <string>

// Layer result/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::result {

/// The dash shown for a value that does not exist (NaN): "—" (U+2014).
inline constexpr const char* kMissingValue = "\xE2\x80\x94";

/// A probability in scientific notation with `digits` significant digits,
/// e.g. 3.2e-04; exactly 0 prints "0"; NaN prints kMissingValue.
std::string format_probability(double p, int digits = 2);

/// A general value with `digits` significant digits (%g style, no trailing
/// zeros); ±inf prints "inf"/"-inf"; NaN prints kMissingValue.
std::string format_value(double v, int digits = 4);

/// A value with a fixed number of decimals; NaN prints kMissingValue.
std::string format_fixed(double v, int decimals);

/// Number of terminal columns a UTF-8 string occupies (counts code points;
/// every character this library prints is one column wide).
std::size_t display_width(const std::string& utf8);

}  // namespace sigmatube::result
