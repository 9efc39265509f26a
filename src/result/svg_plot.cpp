// SPDX-License-Identifier: MIT
#include "sigmatube/result/svg_plot.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <sstream>
#include <stdexcept>

#include "sigmatube/result/markup_escape.h"
#include "sigmatube/result/number_format.h"

namespace sigmatube::result {
namespace {

constexpr double kLeftPx = 78, kTopPx = 34, kBottomPx = 52, kLegendPx = 230;

std::string px(double v) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.1f", v);
  return buffer;
}

double nice_number(double range, bool round) {
  const double exponent = std::floor(std::log10(range));
  const double fraction = range / std::pow(10.0, exponent);
  double nice;
  if (round)
    nice = fraction < 1.5 ? 1 : fraction < 3 ? 2 : fraction < 7 ? 5 : 10;
  else
    nice = fraction <= 1 ? 1 : fraction <= 2 ? 2 : fraction <= 5 ? 5 : 10;
  return nice * std::pow(10.0, exponent);
}

std::string tick_label(double v, double step) {
  if (std::fabs(v) < step * 1e-9) v = 0;  // no "-0" or 1e-17 from rounding
  return format_value(v, 4);
}

std::string style_attributes(const SvgStyle& s, bool filled) {
  std::string a = " stroke=\"" + xml_escape(s.stroke) + "\" stroke-width=\"" + px(s.stroke_width_px) + "\"";
  if (!s.dash.empty()) a += " stroke-dasharray=\"" + xml_escape(s.dash) + "\"";
  if (s.stroke_opacity < 1) a += " stroke-opacity=\"" + px(s.stroke_opacity * 100 / 100) + "\"";
  a += " fill=\"" + xml_escape(filled ? s.fill : std::string("none")) + "\"";
  if (filled && s.fill_opacity < 1) {
    char buffer[32];
    std::snprintf(buffer, sizeof buffer, "%.3f", s.fill_opacity);
    a += std::string(" fill-opacity=\"") + buffer + "\"";
  }
  return a;
}

}  // namespace

SvgPlot::SvgPlot(std::string id, std::string title, int width_px, int height_px)
    : id_(std::move(id)), title_(std::move(title)), width_(width_px), height_(height_px) {
  if (width_ < kLeftPx + kLegendPx + 100 || height_ < kTopPx + kBottomPx + 60)
    throw std::logic_error("SvgPlot: too small");
}

void SvgPlot::x_axis(std::string label, bool log) {
  x_.label = std::move(label);
  x_.log = log;
}
void SvgPlot::y_axis(std::string label, bool log) {
  y_.label = std::move(label);
  y_.log = log;
}
void SvgPlot::x_range(double lo, double hi) { x_ = Axis{x_.label, x_.log, true, lo, hi}; }
void SvgPlot::y_range(double lo, double hi) { y_ = Axis{y_.label, y_.log, true, lo, hi}; }

void SvgPlot::line(const std::vector<double>& x, const std::vector<double>& y, const SvgStyle& s,
                   const std::string& legend) {
  if (x.size() != y.size()) throw std::logic_error("SvgPlot::line: x and y differ in length");
  items_.push_back({Kind::kLine, x, y, {}, 0, s, legend});
}
void SvgPlot::band(const std::vector<double>& x, const std::vector<double>& lo, const std::vector<double>& hi,
                   const SvgStyle& s, const std::string& legend) {
  if (x.size() != lo.size() || x.size() != hi.size()) throw std::logic_error("SvgPlot::band: lengths differ");
  items_.push_back({Kind::kBand, x, lo, hi, 0, s, legend});
}
void SvgPlot::polygon(const std::vector<double>& x, const std::vector<double>& y, const SvgStyle& s,
                      const std::string& legend) {
  if (x.size() != y.size()) throw std::logic_error("SvgPlot::polygon: x and y differ in length");
  items_.push_back({Kind::kPolygon, x, y, {}, 0, s, legend});
}
void SvgPlot::scatter(const std::vector<double>& x, const std::vector<double>& y, const SvgStyle& s, double r,
                      const std::string& legend) {
  if (x.size() != y.size()) throw std::logic_error("SvgPlot::scatter: x and y differ in length");
  items_.push_back({Kind::kScatter, x, y, {}, r, s, legend});
}
void SvgPlot::circle(double cx, double cy, double r, const SvgStyle& s, const std::string& legend) {
  items_.push_back({Kind::kCircle, {cx - r, cx, cx + r}, {cy - r, cy, cy + r}, {}, r, s, legend});
}
void SvgPlot::hline(double y, const SvgStyle& s, const std::string& legend) {
  items_.push_back({Kind::kHline, {}, {y}, {}, 0, s, legend});
}
void SvgPlot::diagonal(const SvgStyle& s, const std::string& legend) {
  items_.push_back({Kind::kDiagonal, {}, {}, {}, 0, s, legend});
}

std::vector<double> SvgPlot::nice_ticks(double lo, double hi, int target) {
  if (!(hi > lo)) return {lo};
  const double range = nice_number(hi - lo, false);
  const double step = nice_number(range / std::max(target - 1, 1), true);
  std::vector<double> ticks;
  for (double v = std::ceil(lo / step - 1e-9) * step; v <= hi + step * 1e-9; v += step) ticks.push_back(v);
  return ticks;
}

std::string SvgPlot::render() const {
  if (items_.empty()) throw std::logic_error("SvgPlot::render: nothing to draw in " + id_);
  const double plot_w = width_ - kLeftPx - kLegendPx, plot_h = height_ - kTopPx - kBottomPx;

  // ---- ranges
  auto usable = [](double v, bool log) { return std::isfinite(v) && (!log || v > 0); };
  auto data_range = [&](bool for_x, const Axis& axis) {
    double lo = std::numeric_limits<double>::infinity(), hi = -lo;
    for (const auto& item : items_) {
      std::vector<const std::vector<double>*> sources;
      if (for_x)
        sources = {&item.x};
      else
        sources = {&item.y, &item.y2};
      for (const auto* v : sources)
        for (double d : *v)
          if (usable(d, axis.log)) lo = std::min(lo, d), hi = std::max(hi, d);
    }
    return std::pair{lo, hi};
  };
  auto settle = [&](Axis a, bool for_x) {
    if (a.fixed) return a;
    auto [lo, hi] = data_range(for_x, a);
    if (!std::isfinite(lo)) lo = a.log ? 1e-6 : 0, hi = a.log ? 1 : 1;
    if (a.log) {
      a.lo = std::pow(10.0, std::floor(std::log10(lo)));
      a.hi = std::pow(10.0, std::ceil(std::log10(hi)));
      if (a.hi <= a.lo) a.hi = a.lo * 10;
    } else {
      if (hi - lo <= 0) {
        const double pad = std::fabs(lo) > 0 ? 0.1 * std::fabs(lo) : 1.0;
        lo -= pad, hi += pad;
      }
      const double pad = 0.05 * (hi - lo);
      a.lo = lo - pad, a.hi = hi + pad;
    }
    return a;
  };
  Axis xa = settle(x_, true), ya = settle(y_, false);
  if (equal_aspect_ && !xa.log && !ya.log) {
    const double sx = (xa.hi - xa.lo) / plot_w, sy = (ya.hi - ya.lo) / plot_h;
    if (sx > sy) {
      const double mid = 0.5 * (ya.lo + ya.hi), half = 0.5 * sx * plot_h;
      ya.lo = mid - half, ya.hi = mid + half;
    } else {
      const double mid = 0.5 * (xa.lo + xa.hi), half = 0.5 * sy * plot_w;
      xa.lo = mid - half, xa.hi = mid + half;
    }
  }
  auto to_unit = [](const Axis& a, double v) {
    return a.log ? (std::log10(v) - std::log10(a.lo)) / (std::log10(a.hi) - std::log10(a.lo))
                 : (v - a.lo) / (a.hi - a.lo);
  };
  auto X = [&](double v) { return kLeftPx + to_unit(xa, v) * plot_w; };
  // NaN when the value cannot be drawn (NaN, or ≤ 0 on a log axis without clamping).
  auto Y = [&](double v) {
    if (std::isnan(v)) return v;
    if (ya.log && (v <= 0 || v < ya.lo)) {
      if (!clamp_ && v <= 0) return std::numeric_limits<double>::quiet_NaN();
      v = ya.lo;
    }
    return kTopPx + (1 - to_unit(ya, v)) * plot_h;
  };
  auto Xs = [&](double v) {
    if (std::isnan(v) || (xa.log && v <= 0)) return std::numeric_limits<double>::quiet_NaN();
    return X(v);
  };

  std::ostringstream o;
  o << "<svg xmlns=\"http://www.w3.org/2000/svg\" id=\"" << xml_escape(id_) << "\" class=\"plot\" width=\"" << width_
    << "\" height=\"" << height_ << "\" viewBox=\"0 0 " << width_ << " " << height_ << "\" role=\"img\">\n";
  o << "<title>" << xml_escape(title_) << "</title>\n";
  const std::string clip = xml_escape(id_) + "-clip";
  o << "<defs><clipPath id=\"" << clip << "\"><rect x=\"" << px(kLeftPx) << "\" y=\"" << px(kTopPx) << "\" width=\""
    << px(plot_w) << "\" height=\"" << px(plot_h) << "\"/></clipPath></defs>\n";
  o << "<rect x=\"0\" y=\"0\" width=\"" << width_ << "\" height=\"" << height_ << "\" fill=\"#ffffff\"/>\n";
  o << "<text x=\"" << px(kLeftPx)
    << "\" y=\"20\" class=\"plot-title\" font-size=\"14\" font-weight=\"bold\" fill=\"#1b2430\">" << xml_escape(title_)
    << "</text>\n";
  o << "<rect x=\"" << px(kLeftPx) << "\" y=\"" << px(kTopPx) << "\" width=\"" << px(plot_w) << "\" height=\""
    << px(plot_h) << "\" fill=\"#f7f8fa\" stroke=\"#9aa3ad\" stroke-width=\"1\"/>\n";

  // ---- grid and ticks
  std::vector<double> xt, yt;
  auto log_ticks = [](const Axis& a) {
    std::vector<double> t;
    const int k0 = int(std::floor(std::log10(a.lo) + 1e-9)), k1 = int(std::ceil(std::log10(a.hi) - 1e-9));
    const int stride = std::max(1, (k1 - k0 + 7) / 8);
    for (int k = k0; k <= k1; k += stride) t.push_back(std::pow(10.0, k));
    return t;
  };
  xt = xa.log ? log_ticks(xa) : nice_ticks(xa.lo, xa.hi, 7);
  yt = ya.log ? log_ticks(ya) : nice_ticks(ya.lo, ya.hi, 6);
  const double xstep = xt.size() > 1 ? xt[1] - xt[0] : 1, ystep = yt.size() > 1 ? yt[1] - yt[0] : 1;
  o << "<g class=\"grid\" stroke=\"#dde1e6\" stroke-width=\"1\">\n";
  for (double t : xt) {
    const double x = X(t);
    if (x < kLeftPx - 0.5 || x > kLeftPx + plot_w + 0.5) continue;
    o << "<line x1=\"" << px(x) << "\" y1=\"" << px(kTopPx) << "\" x2=\"" << px(x) << "\" y2=\"" << px(kTopPx + plot_h)
      << "\"/>\n";
  }
  for (double t : yt) {
    const double y = kTopPx + (1 - to_unit(ya, t)) * plot_h;
    if (y < kTopPx - 0.5 || y > kTopPx + plot_h + 0.5) continue;
    o << "<line x1=\"" << px(kLeftPx) << "\" y1=\"" << px(y) << "\" x2=\"" << px(kLeftPx + plot_w) << "\" y2=\""
      << px(y) << "\"/>\n";
  }
  o << "</g>\n<g class=\"ticks\" font-size=\"11\" fill=\"#3a4450\">\n";
  for (double t : xt) {
    const double x = X(t);
    if (x < kLeftPx - 0.5 || x > kLeftPx + plot_w + 0.5) continue;
    o << "<text x=\"" << px(x) << "\" y=\"" << px(kTopPx + plot_h + 15) << "\" text-anchor=\"middle\">"
      << xml_escape(xa.log ? format_probability(t, 1) : tick_label(t, xstep)) << "</text>\n";
  }
  for (double t : yt) {
    const double y = kTopPx + (1 - to_unit(ya, t)) * plot_h;
    if (y < kTopPx - 0.5 || y > kTopPx + plot_h + 0.5) continue;
    o << "<text x=\"" << px(kLeftPx - 6) << "\" y=\"" << px(y + 4) << "\" text-anchor=\"end\">"
      << xml_escape(ya.log ? format_probability(t, 1) : tick_label(t, ystep)) << "</text>\n";
  }
  o << "</g>\n";
  o << "<text x=\"" << px(kLeftPx + plot_w / 2) << "\" y=\"" << px(height_ - 12)
    << "\" text-anchor=\"middle\" font-size=\"12\" fill=\"#1b2430\">" << xml_escape(x_.label) << "</text>\n";
  o << "<text transform=\"translate(16," << px(kTopPx + plot_h / 2)
    << ") rotate(-90)\" text-anchor=\"middle\" font-size=\"12\" fill=\"#1b2430\">" << xml_escape(y_.label)
    << "</text>\n";

  // ---- data
  o << "<g clip-path=\"url(#" << clip << ")\">\n";
  for (const auto& item : items_) {
    const SvgStyle& s = item.style;
    switch (item.kind) {
      case Kind::kLine: {
        std::string d;
        bool pen = false;
        for (std::size_t i = 0; i < item.x.size(); ++i) {
          const double x = Xs(item.x[i]), y = Y(item.y[i]);
          if (std::isnan(x) || std::isnan(y)) {
            pen = false;
            continue;
          }
          d += (pen ? "L" : "M") + px(x) + " " + px(y) + " ";
          pen = true;
        }
        if (!d.empty())
          o << "<path d=\"" << d << "\"" << style_attributes(s, false) << " stroke-linejoin=\"round\"/>\n";
        break;
      }
      case Kind::kBand: {
        // One closed path per run of drawable points.
        std::size_t i = 0;
        while (i < item.x.size()) {
          std::vector<std::size_t> run;
          for (; i < item.x.size(); ++i) {
            if (std::isnan(Xs(item.x[i])) || std::isnan(Y(item.y[i])) || std::isnan(Y(item.y2[i]))) {
              ++i;
              break;
            }
            run.push_back(i);
          }
          if (run.size() < 2) continue;
          std::string d;
          for (std::size_t k = 0; k < run.size(); ++k)
            d += (k ? "L" : "M") + px(X(item.x[run[k]])) + " " + px(Y(item.y2[run[k]])) + " ";
          for (std::size_t k = run.size(); k-- > 0;)
            d += "L" + px(X(item.x[run[k]])) + " " + px(Y(item.y[run[k]])) + " ";
          o << "<path d=\"" << d << "Z\"" << style_attributes(s, true) << "/>\n";
        }
        break;
      }
      case Kind::kPolygon: {
        std::string d;
        for (std::size_t i = 0; i < item.x.size(); ++i) {
          const double x = Xs(item.x[i]), y = Y(item.y[i]);
          if (std::isnan(x) || std::isnan(y)) continue;
          d += (d.empty() ? "M" : "L") + px(x) + " " + px(y) + " ";
        }
        if (!d.empty()) o << "<path d=\"" << d << "Z\"" << style_attributes(s, true) << "/>\n";
        break;
      }
      case Kind::kScatter:
        for (std::size_t i = 0; i < item.x.size(); ++i) {
          const double x = Xs(item.x[i]), y = Y(item.y[i]);
          if (std::isnan(x) || std::isnan(y)) continue;
          o << "<circle cx=\"" << px(x) << "\" cy=\"" << px(y) << "\" r=\"" << px(item.r) << "\""
            << style_attributes(s, true) << "/>\n";
        }
        break;
      case Kind::kCircle: {
        const double cx = X(item.x[1]), cy = Y(item.y[1]);
        const double rx = std::fabs(X(item.x[2]) - cx), ry = std::fabs(Y(item.y[2]) - cy);
        if (std::isnan(cx) || std::isnan(cy)) break;
        if (std::fabs(rx - ry) < 0.05)
          o << "<circle cx=\"" << px(cx) << "\" cy=\"" << px(cy) << "\" r=\"" << px(rx) << "\""
            << style_attributes(s, true) << "/>\n";
        else
          o << "<ellipse cx=\"" << px(cx) << "\" cy=\"" << px(cy) << "\" rx=\"" << px(rx) << "\" ry=\"" << px(ry)
            << "\"" << style_attributes(s, true) << "/>\n";
        break;
      }
      case Kind::kHline: {
        const double y = Y(item.y[0]);
        if (std::isnan(y)) break;
        o << "<path d=\"M" << px(kLeftPx) << " " << px(y) << " L" << px(kLeftPx + plot_w) << " " << px(y) << "\""
          << style_attributes(s, false) << "/>\n";
        break;
      }
      case Kind::kDiagonal: {
        const double lo = std::max(xa.lo, ya.lo), hi = std::min(xa.hi, ya.hi);
        if (!(hi > lo)) break;
        o << "<path d=\"M" << px(X(lo)) << " " << px(Y(lo)) << " L" << px(X(hi)) << " " << px(Y(hi)) << "\""
          << style_attributes(s, false) << "/>\n";
        break;
      }
    }
  }
  o << "</g>\n";

  // ---- legend
  o << "<g class=\"legend\" font-size=\"11\" fill=\"#1b2430\">\n";
  double ly = kTopPx + 8;
  const double lx = width_ - kLegendPx + 12;
  for (const auto& item : items_) {
    if (item.legend.empty()) continue;
    const SvgStyle& s = item.style;
    switch (item.kind) {
      case Kind::kBand:
      case Kind::kPolygon:
      case Kind::kCircle:
        o << "<rect x=\"" << px(lx) << "\" y=\"" << px(ly - 6) << "\" width=\"22\" height=\"10\""
          << style_attributes(s, true) << "/>\n";
        break;
      case Kind::kScatter:
        o << "<circle cx=\"" << px(lx + 11) << "\" cy=\"" << px(ly - 1) << "\" r=\"" << px(std::max(item.r, 2.5))
          << "\"" << style_attributes(s, true) << "/>\n";
        break;
      default:
        o << "<path d=\"M" << px(lx) << " " << px(ly - 1) << " L" << px(lx + 22) << " " << px(ly - 1) << "\""
          << style_attributes(s, false) << "/>\n";
    }
    std::string text = item.legend;
    if (display_width(text) > 33) {
      // Cut on a character boundary.
      std::size_t cut = 0, count = 0;
      while (cut < text.size() && count < 32) {
        ++cut;
        while (cut < text.size() && (static_cast<unsigned char>(text[cut]) & 0xC0) == 0x80) ++cut;
        ++count;
      }
      text = text.substr(0, cut) + "\xE2\x80\xA6";
    }
    o << "<text x=\"" << px(lx + 28) << "\" y=\"" << px(ly + 3) << "\">" << xml_escape(text) << "</text>\n";
    ly += 18;
    if (ly > height_ - 10) break;
  }
  o << "</g>\n</svg>\n";
  return o.str();
}

}  // namespace sigmatube::result
