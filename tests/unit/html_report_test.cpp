// SPDX-License-Identifier: MIT
#include "sigmatube/result/html_report.h"

#include <gtest/gtest.h>

#include <fstream>
#include <regex>

#include "result_fixture.h"
#include "sigmatube/core/error.h"
#include "sigmatube/result/result_file.h"
#include "sigmatube/result/summary_text.h"
#include "sigmatube/result/svg_plot.h"

namespace sigmatube::result {
namespace {

using testing::make_fixture_result;
using testing::run_python;
using testing::TemporaryFolder;

// Parses the page as XML with Python's xml.etree.ElementTree and prints, per
// <svg>, its id and the number of drawn elements (path with a non-empty d,
// polyline with points, circle/ellipse with a positive radius).
std::string inspect_report(const std::string& html, const TemporaryFolder& folder) {
  std::ofstream(folder.path / "report.html") << html;
  return run_python(
      "import xml.etree.ElementTree as ET\n"
      "root = ET.parse('" +
          (folder.path / "report.html").string() +
          "').getroot()\n"
          "X = '{http://www.w3.org/1999/xhtml}'\n"
          "S = '{http://www.w3.org/2000/svg}'\n"
          "assert root.tag == X + 'html', root.tag\n"
          "for svg in root.iter(S + 'svg'):\n"
          "    n = 0\n"
          "    for e in svg.iter():\n"
          "        if e.tag == S + 'path' and e.get('d', '').strip(): n += 1\n"
          "        if e.tag == S + 'polyline' and e.get('points', '').strip(): n += 1\n"
          "        if e.tag == S + 'circle' and float(e.get('r', '0')) > 0: n += 1\n"
          "        if e.tag == S + 'ellipse' and float(e.get('rx', '0')) > 0: n += 1\n"
          "    circles = sum(1 for e in svg.iter(S + 'circle'))\n"
          "    print(svg.get('id'), n, circles)\n"
          "print('tables', sum(1 for _ in root.iter(X + 'table')))\n"
          "print('title', root.find(X + 'head').find(X + 'title').text)\n",
      folder.path);
}

std::map<std::string, std::pair<int, int>> drawn_per_plot(const std::string& inspection) {
  std::map<std::string, std::pair<int, int>> out;
  std::istringstream in(inspection);
  for (std::string id; in >> id;) {
    if (id == "tables" || id == "title") break;
    int n = 0, circles = 0;
    in >> n >> circles;
    out[id] = {n, circles};
  }
  return out;
}

TEST(HtmlReport, IsWellFormedXhtmlWithEveryPlotDrawn) {
  TemporaryFolder folder;
  const AnalysisResult r = make_fixture_result();
  const std::string html = html_report(r, ReportOptions{});
  const std::string inspection = inspect_report(html, folder);
  const auto plots = drawn_per_plot(inspection);
  for (const char* id : {"plot-tube", "plot-tube-deviation", "plot-probability", "plot-clearance-1", "plot-clearance-2",
                         "plot-sobol", "plot-validation"}) {
    ASSERT_TRUE(plots.count(id)) << id << "\n" << inspection;
    EXPECT_GT(plots.at(id).first, 0) << id;
  }
  // The keep-out sphere lies in the x–y plane and is drawn as a circle.
  EXPECT_GE(plots.at("plot-tube").second, 1);
  EXPECT_NE(inspection.find("tables 2"), std::string::npos) << inspection;
  EXPECT_NE(inspection.find("title sigmatube report: Invented fly-by <A&B> \"test\""), std::string::npos) << inspection;
  EXPECT_EQ(html.rfind("<!DOCTYPE html>", 0), 0u);
  // The cautions, escaped the same way as all other text, are on the page.
  std::string cautions = cautions_text();
  std::replace(cautions.begin(), cautions.end(), '\n', ' ');
  std::string page = html;
  std::replace(page.begin(), page.end(), '\n', ' ');
  EXPECT_NE(page.find(std::regex_replace(cautions, std::regex("'"), "&#39;")), std::string::npos);
}

TEST(HtmlReport, ReferencesNothingOnTheNetwork) {
  const std::string html = html_report(make_fixture_result(), ReportOptions{});
  const std::regex url("(https?)://[^\"' <]*");
  for (auto it = std::sregex_iterator(html.begin(), html.end(), url); it != std::sregex_iterator(); ++it) {
    const std::string u = it->str();
    EXPECT_TRUE(u == "http://www.w3.org/1999/xhtml" || u == "http://www.w3.org/2000/svg") << u;
  }
  EXPECT_EQ(html.find("<script"), std::string::npos);
  EXPECT_EQ(html.find("@import"), std::string::npos);
  EXPECT_EQ(html.find("@font-face"), std::string::npos);
}

TEST(HtmlReport, DrawsTheZoneFromGeometryReadBackFromTheResultFile) {
  TemporaryFolder folder;
  const std::string path = (folder.path / "r.h5").string();
  write_result_file(make_fixture_result(), path, false);
  const AnalysisResult back = read_result_file(path);
  ASSERT_EQ(back.constraints[0].position, (std::vector<std::string>{"x", "y"}));
  ASSERT_EQ(back.constraints[0].center, (std::vector<double>{0.0, 0.0}));
  ASSERT_EQ(back.constraints[0].radius, 15.0);
  EXPECT_TRUE(back.constraints[1].center.empty());
  EXPECT_TRUE(std::isnan(back.constraints[1].radius));
  EXPECT_EQ(html_report(back, ReportOptions{}), html_report(make_fixture_result(), ReportOptions{}));
  // Independent reader (h5py): the geometry is stored where docs say.
  const std::string out = run_python(
      "import h5py\n"
      "f = h5py.File('" +
          path +
          "', 'r')\n"
          "g = f['constraints/keep-out']\n"
          "print(float(g['radius'][()]), list(g['center'][()]), [s.decode() for s in g['position'][()]])\n",
      folder.path);
  EXPECT_EQ(out, "15.0 [0.0, 0.0] ['x', 'y']\n");
}

TEST(HtmlReport, ChosenPlaneWithoutTheZoneDrawsNoCircle) {
  TemporaryFolder folder;
  AnalysisResult r = make_fixture_result();
  r.output_names = {"x", "y"};
  ReportOptions o;
  o.plane_x = "y";
  o.plane_y = "x";
  o.max_mc_runs = 0;
  // Swapped axes still hold the sphere (its position is {x, y}), so still one circle.
  EXPECT_GE(drawn_per_plot(inspect_report(html_report(r, o), folder)).at("plot-tube").second, 1);
  r.constraints[0].position = {"x", "z"};
  EXPECT_EQ(drawn_per_plot(inspect_report(html_report(r, o), folder)).at("plot-tube").second, 0);
}

TEST(HtmlReport, UnknownPlaneOutputIsAnInputError) {
  ReportOptions o;
  o.plane_x = "x";
  o.plane_y = "altitude";
  try {
    html_report(make_fixture_result(), o);
    FAIL() << "no error";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().key, "--plane");
  }
}

TEST(HtmlReport, NominalOnlyResultStillRendersWithNotes) {
  TemporaryFolder folder;
  AnalysisResult r = make_fixture_result(false);
  r.surrogate = SurrogateResult{};
  r.constraints.clear();
  const std::string html = html_report(r, ReportOptions{});
  const auto plots = drawn_per_plot(inspect_report(html, folder));
  EXPECT_GT(plots.at("plot-tube").first, 0);
  EXPECT_EQ(plots.count("plot-sobol"), 0u);
  EXPECT_NE(html.find("No Sobol indices"), std::string::npos);
}

TEST(SvgPlot, NiceTicksAreOneTwoOrFiveTimesAPowerOfTen) {
  // Heckbert (Graphics Gems, 1990), worked by hand: range 660 rounds up to
  // 1000; 1000/(7 − 1) ≈ 167 rounds to the step 200; ticks 0, 200, ..., 600.
  const auto t = SvgPlot::nice_ticks(-30, 630, 7);
  ASSERT_EQ(t.size(), 4u);
  EXPECT_DOUBLE_EQ(t[1] - t[0], 200.0);
  EXPECT_DOUBLE_EQ(t.front(), 0.0);
  EXPECT_DOUBLE_EQ(t.back(), 600.0);
  // Range 0.0081 rounds up to 0.01; 0.01/4 = 0.0025 rounds to the step 0.002.
  const auto u = SvgPlot::nice_ticks(0.0012, 0.0093, 5);
  EXPECT_NEAR(u[1] - u[0], 0.002, 1e-15);
}

}  // namespace
}  // namespace sigmatube::result
