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

/// The shortest digits that read back to the same double (std::to_chars, e.g. 0.1
/// not 0.10000000000000001, 1e-05, 20261201); NaN prints "nan", ±inf "inf"/"-inf".
/// For files a program reads back (CSV, and JSON through json_number).
std::string format_shortest(double v);

/// A value with a fixed number of decimals; NaN prints kMissingValue.
std::string format_fixed(double v, int decimals);

/// Number of terminal columns a UTF-8 string occupies (counts code points;
/// every character this library prints is one column wide).
std::size_t display_width(const std::string& utf8);

}  // namespace sigmatube::result
