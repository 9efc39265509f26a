// SPDX-License-Identifier: MIT
#pragma once
// A small SVG chart writer for the HTML report: linear or log axes with ticks
// and labels, lines, filled bands and polygons, scatter points, circles in
// data units, horizontal reference lines, and a legend. Output is a single
// <svg> element (XML-clean, all text escaped) with no scripts, fonts or
// external references.
#include <string>
#include <vector>

// Layer result/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::result {

struct SvgStyle {
  std::string stroke = "#1f3a5f";
  double stroke_width_px = 1.6;
  std::string dash;  // SVG stroke-dasharray, e.g. "6 3"; empty: solid
  std::string fill = "none";
  double fill_opacity = 1.0;
  double stroke_opacity = 1.0;
};

class SvgPlot {
 public:
  SvgPlot(std::string id, std::string title, int width_px = 660, int height_px = 380);

  void x_axis(std::string label, bool log = false);
  void y_axis(std::string label, bool log = false);
  /// Fixed axis range; without it the range covers all data (5 % padding on
  /// linear axes, whole decades on log axes).
  void x_range(double lo, double hi);
  void y_range(double lo, double hi);
  /// Same data units per pixel on both axes (for plots of a plane).
  void equal_aspect(bool on) { equal_aspect_ = on; }
  /// On a log axis, draw values ≤ 0 or below the axis at its lower edge
  /// instead of leaving a gap (probabilities that are exactly 0).
  void clamp_to_floor(bool on) { clamp_ = on; }

  /// Polyline through the points; a NaN breaks the line.
  void line(const std::vector<double>& x, const std::vector<double>& y, const SvgStyle& style,
            const std::string& legend = "");
  /// Filled area between lo(x) and hi(x); NaN splits the band.
  void band(const std::vector<double>& x, const std::vector<double>& lo, const std::vector<double>& hi,
            const SvgStyle& style, const std::string& legend = "");
  /// Closed polygon in data units.
  void polygon(const std::vector<double>& x, const std::vector<double>& y, const SvgStyle& style,
               const std::string& legend = "");
  /// Points drawn as circles of radius_px pixels.
  void scatter(const std::vector<double>& x, const std::vector<double>& y, const SvgStyle& style, double radius_px,
               const std::string& legend = "");
  /// A circle of radius r in data units (an ellipse when the aspect is not equal).
  void circle(double cx, double cy, double r, const SvgStyle& style, const std::string& legend = "");
  /// A horizontal reference line across the plot.
  void hline(double y, const SvgStyle& style, const std::string& legend = "");
  /// A dashed diagonal y = x across the plot (for predicted-vs-observed plots).
  void diagonal(const SvgStyle& style, const std::string& legend = "");

  /// The <svg> element. Throws std::logic_error if nothing was added.
  std::string render() const;

  /// "Nice" tick positions covering [lo, hi] with about `target` ticks:
  /// steps of 1, 2 or 5 × 10^k (Heckbert, "Nice numbers for graph labels",
  /// Graphics Gems, 1990).
  static std::vector<double> nice_ticks(double lo, double hi, int target = 6);

 private:
  enum class Kind { kLine, kBand, kPolygon, kScatter, kCircle, kHline, kDiagonal };
  struct Item {
    Kind kind;
    std::vector<double> x, y, y2;
    double r = 0;
    SvgStyle style;
    std::string legend;
  };
  struct Axis {
    std::string label;
    bool log = false;
    bool fixed = false;
    double lo = 0, hi = 1;
  };
  std::string id_, title_;
  int width_, height_;
  Axis x_, y_;
  bool equal_aspect_ = false, clamp_ = false;
  std::vector<Item> items_;
};

}  // namespace sigmatube::result
