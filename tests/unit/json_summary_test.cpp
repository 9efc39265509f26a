// SPDX-License-Identifier: MIT
#include "sigmatube/result/json_summary.h"

#include <gtest/gtest.h>

#include <cstdio>
#include <fstream>

#include "python_reference.h"
#include "result_fixture.h"
#include "sigmatube/result/markup_escape.h"
#include "sigmatube/result/result_file.h"

namespace sigmatube::result {
namespace {

using testing::make_fixture_result;
using testing::run_python;
using testing::TemporaryFolder;

TEST(JsonSummary, ParsesWithPythonJsonAndCarriesEveryConstraint) {
  TemporaryFolder folder;
  AnalysisResult r = make_fixture_result();
  r.constraints[0].margin = kNaN;
  r.constraints[1].verdict = "exceeds \"its\" bound\\\n\ttab \x01 control";
  std::ofstream(folder.path / "s.json") << json_summary(r);
  // Reference parser: Python's json module (RFC 8259), which rejects NaN only
  // when asked to; parse_constant makes a bare NaN fail the test.
  const std::string out = run_python(
      "import json\n"
      "def bad(x): raise ValueError('not JSON: ' + x)\n"
      "d = json.load(open('" +
          (folder.path / "s.json").string() +
          "'), parse_constant=bad)\n"
          "c = {k['name']: k for k in d['constraints']}\n"
          "print(d['exit_code'], d['title'], sorted(c), c['keep-out']['margin'] is None)\n"
          "print(c['corridor']['verdict'] == 'exceeds \"its\" bound\\\\\\n\\ttab \\x01 control')\n"
          "print(c['keep-out']['montecarlo']['path_violations'], c['keep-out']['bound'], "
          "c['corridor']['within_bound'])\n"
          "print(d['montecarlo']['runs'], d['surrogate']['germ_dimension'], d['surrogate']['basis_size'])\n",
      folder.path);
  const long long violations = r.constraints[0].montecarlo.path_violations;
  EXPECT_EQ(out, "1 Invented fly-by <A&B> \"test\" ['corridor', 'keep-out'] True\nTrue\n" + std::to_string(violations) +
                     " 0.01 False\n20000 3 4\n");
}

TEST(JsonSummary, NominalOnlyResultHasNullSections) {
  TemporaryFolder folder;
  AnalysisResult r = make_fixture_result(false);
  r.surrogate = SurrogateResult{};
  r.constraints.clear();
  std::ofstream(folder.path / "s.json") << json_summary(r);
  const std::string out = run_python(
      "import json\n"
      "d = json.load(open('" +
          (folder.path / "s.json").string() +
          "'))\n"
          "print(d['surrogate'], d['montecarlo'], d['constraints'], d['exit_code'])\n",
      folder.path);
  EXPECT_EQ(out, "None None [] 0\n");
}

TEST(JsonNumber, WritesNonFiniteAsNullAndRoundTripsDoubles) {
  EXPECT_EQ(json_number(kNaN), "null");
  EXPECT_EQ(json_number(std::numeric_limits<double>::infinity()), "null");
  // 17 significant digits read back exactly (IEEE 754-2008 §5.12.2).
  const double v = 0.1 + 0.2;
  EXPECT_EQ(std::stod(json_number(v)), v);
}

TEST(JsonNumber, PrintsTheShortestDigitsThatReadBackExactly) {
  // Reference: Python's repr of a float, the shortest string that round-trips
  // (Python 3.1+ float repr), run through /usr/bin/python3 at test time; for
  // these values (no integers, |v| < 1e16) it has the digits and form of
  // std::to_chars' shortest round-trip output.
  for (const double v : {0.1, 0.95, 8e-05, 3.41218e-05, 0.0018427397934059366, 9.8271789753288772, 0.1 + 0.2, -2.5e-300}) {
    char code[128];
    std::snprintf(code, sizeof code, "print(repr(%.17g))", v);
    std::string expected = sigmatube::test::python_output(code);
    ASSERT_FALSE(expected.empty()) << "python did not run";
    while (!expected.empty() && (expected.back() == '\n' || expected.back() == '\r')) expected.pop_back();
    EXPECT_EQ(json_number(v), expected);
    EXPECT_EQ(std::stod(json_number(v)), v);
  }
  // Exact output, never a binary-float artefact (from the definition above).
  EXPECT_EQ(json_number(0.95), "0.95");
  EXPECT_EQ(json_number(8e-05), "8e-05");
  EXPECT_EQ(json_number(20261201.0), "20261201");
}

TEST(JsonSummary, IsTheSameAfterARoundTripThroughTheResultFile) {
  TemporaryFolder folder;
  const AnalysisResult r = make_fixture_result();
  const std::string path = (folder.path / "r.h5").string();
  write_result_file(r, path, false);
  EXPECT_EQ(json_summary(read_result_file(path)), json_summary(r));
}

}  // namespace
}  // namespace sigmatube::result
