// SPDX-License-Identifier: MIT
#include "sigmatube/result/junit.h"

#include <cmath>
#include <cstdio>
#include <sstream>

#include "sigmatube/result/markup_escape.h"

namespace sigmatube::result {
namespace {

std::string seconds(double t) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.3f", std::isfinite(t) && t > 0 ? t : 0.0);
  return buffer;
}

}  // namespace

std::string junit_xml(const std::vector<JUnitCase>& cases, const std::string& suite_name) {
  std::size_t failures = 0, errors = 0, skipped = 0;
  double total = 0;
  for (const auto& c : cases) {
    errors += c.error ? 1 : 0;
    failures += (!c.error && c.failed) ? 1 : 0;
    skipped += (!c.error && !c.failed && c.skipped) ? 1 : 0;
    total += std::isfinite(c.time_in_seconds) && c.time_in_seconds > 0 ? c.time_in_seconds : 0.0;
  }
  const std::string counts = " tests=\"" + std::to_string(cases.size()) + "\" failures=\"" + std::to_string(failures) +
                             "\" errors=\"" + std::to_string(errors) + "\" skipped=\"" + std::to_string(skipped) +
                             "\" time=\"" + seconds(total) + "\"";
  const std::string name = xml_escape(suite_name);
  std::ostringstream o;
  o << "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n";
  o << "<testsuites name=\"" << name << "\"" << counts << ">\n";
  o << "  <testsuite name=\"" << name << "\"" << counts << ">\n";
  for (const auto& c : cases) {
    o << "    <testcase classname=\"" << xml_escape(c.classname) << "\" name=\"" << xml_escape(c.name) << "\" time=\""
      << seconds(c.time_in_seconds) << "\"";
    const bool body = c.error || c.failed || c.skipped || !c.system_out.empty();
    if (!body) {
      o << "/>\n";
      continue;
    }
    o << ">\n";
    if (c.error)
      o << "      <error message=\"" << xml_escape(c.error_message) << "\" type=\"error\">" << xml_escape(c.error_text)
        << "</error>\n";
    else if (c.failed)
      o << "      <failure message=\"" << xml_escape(c.failure_message) << "\" type=\"" << xml_escape(c.failure_type) << "\">"
        << xml_escape(c.failure_text) << "</failure>\n";
    else if (c.skipped)
      o << "      <skipped message=\"" << xml_escape(c.skipped_message) << "\"/>\n";
    if (!c.system_out.empty()) o << "      <system-out>" << xml_escape(c.system_out) << "</system-out>\n";
    o << "    </testcase>\n";
  }
  o << "  </testsuite>\n</testsuites>\n";
  return o.str();
}

}  // namespace sigmatube::result
