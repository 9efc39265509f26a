// SPDX-License-Identifier: MIT
#pragma once
// JUnit XML, the test-report format continuous-integration servers read.
// Used by `compare --junit` and by `batch`.
#include <string>
#include <vector>

// Layer result/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::result {

struct JUnitCase {
  std::string classname;  // e.g. the case title or file
  std::string name;       // e.g. the constraint
  double time_in_seconds = 0.0;
  bool failed = false;
  std::string failure_message;  // one line, the <failure message="...">
  std::string failure_text;     // the <failure> body
  std::string failure_type = "regression";  // the <failure type="...">
  bool error = false;         // the test could not run: <error message="...">text</error>
  std::string error_message;  // one line
  std::string error_text;
  bool skipped = false;
  std::string skipped_message;
  std::string system_out;  // optional <system-out>
};

/// <?xml version="1.0" encoding="UTF-8"?>
/// <testsuites name tests failures errors skipped time>
///   <testsuite name tests failures errors skipped time>
///     <testcase classname name time> [<error message type>text</error>]
///     [<failure message type>text</failure>]
///     [<skipped message/>] [<system-out>..</system-out>] </testcase> ...
/// An error takes precedence over a failure and a skip (counted once, as an error).
/// All text escaped (markup_escape.h), so the output is always well-formed XML.
std::string junit_xml(const std::vector<JUnitCase>& cases, const std::string& suite_name);

}  // namespace sigmatube::result
