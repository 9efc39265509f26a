// SPDX-License-Identifier: MIT
#pragma once
// Escaping for the text formats this library writes (XML/XHTML/SVG, JSON).
#include <string>

// Layer result/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::result {

/// Escapes & < > " ' for XML text and attribute values, and drops control
/// characters other than tab, newline and carriage return, which XML 1.0 does
/// not allow at all (W3C XML 1.0, §2.2 "Characters").
std::string xml_escape(const std::string& text);

/// A JSON string literal including the quotes (RFC 8259 §7): escapes " and \,
/// writes control characters as \n, \t, ... or \u00XX; UTF-8 passes through.
std::string json_string(const std::string& text);

/// A JSON number; NaN and ±inf, which JSON cannot represent, become null.
/// The shortest digits that read back to the same double (format_shortest).
std::string json_number(double v);

}  // namespace sigmatube::result
