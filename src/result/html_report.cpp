// SPDX-License-Identifier: MIT
#include "sigmatube/result/html_report.h"

#include <algorithm>
#include <cmath>
#include <numeric>
#include <sstream>

#include "sigmatube/core/error.h"
#include "sigmatube/result/breakdown_report.h"
#include "sigmatube/result/markup_escape.h"
#include "sigmatube/result/number_format.h"
#include "sigmatube/result/summary_text.h"
#include "sigmatube/result/svg_plot.h"

namespace sigmatube::result {
namespace {

const std::vector<std::string> kPalette = {"#2f6db5", "#d9822b", "#3a9d5d", "#8e44ad",
                                           "#b83b5e", "#4a6670", "#c9a227", "#1d8f9c"};
const std::string kNominal = "#1b2430", kMean = "#2f6db5", kTube = "#6aa3e0", kRuns = "#8a939c", kZone = "#c0392b";

std::string colour(std::size_t k) { return kPalette[k % kPalette.size()]; }

int index_of(const std::vector<std::string>& names, const std::string& name) {
  const auto it = std::find(names.begin(), names.end(), name);
  return it == names.end() ? -1 : int(it - names.begin());
}

bool rows_match(const Eigen::MatrixXd& m, std::size_t T, std::size_t n) {
  return std::size_t(m.rows()) == T && std::size_t(m.cols()) == n && T > 0;
}

std::vector<double> column(const Eigen::MatrixXd& m, int j) {
  std::vector<double> v(std::size_t(m.rows()));
  for (Eigen::Index i = 0; i < m.rows(); ++i) v[std::size_t(i)] = m(i, j);
  return v;
}

std::vector<double> to_vector(const Eigen::VectorXd& v) { return {v.data(), v.data() + v.size()}; }

struct Plane {
  int ix = -1, iy = -1;  // output indices; ix = -1: time on the horizontal axis
};

Plane choose_plane(const AnalysisResult& r, const ReportOptions& o) {
  const auto& names = r.output_names;
  Plane p;
  if (!o.plane_x.empty() && !o.plane_y.empty()) return {index_of(names, o.plane_x), index_of(names, o.plane_y)};
  for (const auto& c : r.constraints)
    if (c.position.size() >= 2) {
      const int a = index_of(names, c.position[0]), b = index_of(names, c.position[1]);
      if (a >= 0 && b >= 0) return {a, b};
    }
  const int x = index_of(names, "x"), y = index_of(names, "y");
  if (x >= 0 && y >= 0) return {x, y};
  if (names.size() >= 2) return {0, 1};
  if (names.size() == 1) return {-1, 0};
  return {-1, -1};
}

// Covariance of outputs i and j at time k from an orthonormal expansion:
// Cov = Σ_{α≠0} c_iα c_jα (the constant term carries the mean only).
bool expansion_covariance(const SurrogateResult& s, std::size_t k, int i, int j, double* cii, double* cjj,
                          double* cij) {
  if (k >= s.coefficients.size()) return false;
  const Eigen::MatrixXd& c = s.coefficients[k];
  if (c.cols() != s.multi_indices.rows() || std::max(i, j) >= c.rows()) return false;
  *cii = *cjj = *cij = 0;
  for (Eigen::Index a = 0; a < c.cols(); ++a) {
    if (s.multi_indices.row(a).isZero()) continue;
    *cii += c(i, a) * c(i, a);
    *cjj += c(j, a) * c(j, a);
    *cij += c(i, a) * c(j, a);
  }
  return true;
}

// Polygon of the 3σ ellipse {m + L u : |u| = 3} with L L' = [[a, b], [b, d]].
void ellipse_points(double mx, double my, double a, double b, double d, std::vector<double>* x,
                    std::vector<double>* y) {
  const double l11 = std::sqrt(std::max(a, 0.0));
  const double l21 = l11 > 0 ? b / l11 : 0.0;
  const double l22 = std::sqrt(std::max(d - l21 * l21, 0.0));
  x->clear(), y->clear();
  constexpr int kPoints = 40;
  for (int k = 0; k < kPoints; ++k) {
    const double t = 2 * M_PI * k / kPoints, u = 3 * std::cos(t), v = 3 * std::sin(t);
    x->push_back(mx + l11 * u);
    y->push_back(my + l21 * u + l22 * v);
  }
}

// Time axes span exactly the report times (no padding before t0).
void time_range(SvgPlot& plot, const AnalysisResult& r) {
  if (r.time.size() >= 2 && r.time.back() > r.time.front()) plot.x_range(r.time.front(), r.time.back());
}

std::string paragraph(const std::string& text, const std::string& cls = "") {
  return "<p" + (cls.empty() ? std::string() : " class=\"" + cls + "\"") + ">" + xml_escape(text) + "</p>\n";
}

// ------------------------------------------------------------------ plots

std::string tube_plot(const AnalysisResult& r, const ReportOptions& o) {
  const Plane p = choose_plane(r, o);
  const std::size_t T = r.time.size(), n = r.output_names.size();
  if (p.iy < 0 || T == 0) return paragraph("No outputs to draw.", "missing");
  const bool against_time = p.ix < 0;
  const std::string xname = against_time ? "time [s]" : r.output_names[std::size_t(p.ix)];
  const std::string yname = r.output_names[std::size_t(p.iy)];
  SvgPlot plot("plot-tube", "Dispersion tube: " + yname + " vs " + xname, 900, 560);
  plot.x_axis(against_time ? xname : output_label(r, p.ix));
  plot.y_axis(output_label(r, p.iy));
  if (!against_time) plot.equal_aspect(true);
  auto xcol = [&](const Eigen::MatrixXd& m) { return against_time ? r.time : column(m, p.ix); };

  // Monte Carlo runs first, so everything else is drawn over them.
  const auto& runs = r.montecarlo.sample_outputs;
  const int kept = std::min<int>(o.max_mc_runs, int(runs.size()));
  for (int k = 0; k < kept; ++k) {
    if (!rows_match(runs[std::size_t(k)], T, n)) continue;
    SvgStyle s{kRuns, 0.8, "", "none", 1.0, 0.55};
    plot.line(xcol(runs[std::size_t(k)]), column(runs[std::size_t(k)], p.iy), s,
              k == 0 ? "Monte Carlo runs (" + std::to_string(kept) + ")" : "");
  }

  // The 3σ tube.
  const SurrogateResult& s = r.surrogate;
  const bool have_surrogate = s.done && rows_match(s.mean, T, n) && rows_match(s.std, T, n);
  const Eigen::MatrixXd* mean = have_surrogate ? &s.mean : nullptr;
  const Eigen::MatrixXd* sd = have_surrogate ? &s.std : nullptr;
  std::string tube_source = "surrogate";
  if (!mean && r.montecarlo.done && rows_match(r.montecarlo.mean, T, n) && rows_match(r.montecarlo.std, T, n)) {
    mean = &r.montecarlo.mean, sd = &r.montecarlo.std, tube_source = "Monte Carlo";
  }
  if (mean) {
    if (against_time) {
      std::vector<double> lo(T), hi(T);
      for (std::size_t k = 0; k < T; ++k) {
        lo[k] = (*mean)(Eigen::Index(k), p.iy) - 3 * (*sd)(Eigen::Index(k), p.iy);
        hi[k] = (*mean)(Eigen::Index(k), p.iy) + 3 * (*sd)(Eigen::Index(k), p.iy);
      }
      plot.band(r.time, lo, hi, SvgStyle{kTube, 0.5, "", kTube, 0.35}, "mean ± 3σ (" + tube_source + ")");
    } else {
      const std::size_t stride = std::max<std::size_t>(1, T / 300);
      std::vector<double> ex, ey;
      bool first = true;
      for (std::size_t k = 0; k < T; k += stride) {
        double a, d, b;
        if (!(have_surrogate && expansion_covariance(s, k, p.ix, p.iy, &a, &d, &b))) {
          a = std::pow((*sd)(Eigen::Index(k), p.ix), 2);
          d = std::pow((*sd)(Eigen::Index(k), p.iy), 2);
          b = 0;
        }
        ellipse_points((*mean)(Eigen::Index(k), p.ix), (*mean)(Eigen::Index(k), p.iy), a, b, d, &ex, &ey);
        plot.polygon(ex, ey, SvgStyle{kTube, 0.3, "", kTube, 0.14, 0.35},
                     first ? "3σ ellipse per time (" + tube_source + ")" : "");
        first = false;
      }
    }
  }

  // Keep-out zones lying in the plane.
  if (!against_time) {
    std::size_t zone = 0;
    for (const auto& c : r.constraints) {
      const int a = index_of(c.position, xname), b = index_of(c.position, yname);
      if (a < 0 || b < 0) continue;
      const SvgStyle zs{kZone, 1.4, "", kZone, 0.12};
      const std::string label = c.name + " (" + c.type + ")";
      if (c.type == "outside-sphere" && std::size_t(std::max(a, b)) < c.center.size() && std::isfinite(c.radius)) {
        plot.circle(c.center[std::size_t(a)], c.center[std::size_t(b)], c.radius, zs, label);
        ++zone;
      } else if (c.type == "outside-ellipsoid" &&
                 std::size_t(std::max(a, b)) < std::min(c.center.size(), c.semi_axes.size())) {
        std::vector<double> ex, ey;
        ellipse_points(c.center[std::size_t(a)], c.center[std::size_t(b)], std::pow(c.semi_axes[std::size_t(a)] / 3, 2),
                       0, std::pow(c.semi_axes[std::size_t(b)] / 3, 2), &ex, &ey);
        plot.polygon(ex, ey, zs, label);
        ++zone;
      } else if (c.type == "inside-box" && std::size_t(std::max(a, b)) < std::min(c.low.size(), c.high.size())) {
        const double x0 = c.low[std::size_t(a)], x1 = c.high[std::size_t(a)];
        const double y0 = c.low[std::size_t(b)], y1 = c.high[std::size_t(b)];
        plot.polygon({x0, x1, x1, x0}, {y0, y0, y1, y1}, SvgStyle{kZone, 1.4, "6 3", "none", 1.0}, label);
        ++zone;
      }
    }
  }
  if (mean) plot.line(xcol(*mean), column(*mean, p.iy), SvgStyle{kMean, 2.0, "", "none"}, "mean (" + tube_source + ")");
  if (rows_match(r.nominal_outputs, T, n))
    plot.line(xcol(r.nominal_outputs), column(r.nominal_outputs, p.iy), SvgStyle{kNominal, 1.4, "5 3", "none"},
              "nominal");
  return plot.render();
}

// Deviation from the nominal path vs time for the two plane outputs: the
// tube's cross-section, readable even when the dispersion is far smaller than
// the path (where the plane view shows a line).
std::string deviation_plot(const AnalysisResult& r, const ReportOptions& o) {
  const Plane p = choose_plane(r, o);
  const std::size_t T = r.time.size(), n = r.output_names.size();
  if (p.iy < 0 || T == 0 || !rows_match(r.nominal_outputs, T, n)) return "";
  const SurrogateResult& s = r.surrogate;
  const MonteCarloResult& m = r.montecarlo;
  const bool have_surrogate = s.done && rows_match(s.mean, T, n) && rows_match(s.std, T, n);
  const bool have_mc = m.done && rows_match(m.mean, T, n) && rows_match(m.std, T, n);
  if (!have_surrogate && !have_mc) return "";
  const Eigen::MatrixXd& mean = have_surrogate ? s.mean : m.mean;
  const Eigen::MatrixXd& sd = have_surrogate ? s.std : m.std;
  SvgPlot plot("plot-tube-deviation", "Tube cross-section: deviation from the nominal path", 900, 340);
  plot.x_axis("time [s]");
  time_range(plot, r);
  std::vector<int> axes;
  if (p.ix >= 0) axes.push_back(p.ix);
  axes.push_back(p.iy);
  // The axis carries the outputs' unit when they share one.
  const auto unit_suffix = [&](int j) { return output_label(r, j).substr(r.output_names[std::size_t(j)].size()); };
  plot.y_axis("output − nominal" + (unit_suffix(axes.front()) == unit_suffix(p.iy) ? unit_suffix(p.iy) : ""));
  const int kept = std::min<int>(o.max_mc_runs, int(m.sample_outputs.size()));
  for (std::size_t a = 0; a < axes.size(); ++a) {
    const int j = axes[a];
    const std::string cc = colour(a);
    const std::string name = r.output_names[std::size_t(j)];
    for (int k = 0; k < kept; ++k) {
      const Eigen::MatrixXd& run = m.sample_outputs[std::size_t(k)];
      if (!rows_match(run, T, n)) continue;
      std::vector<double> d(T);
      for (std::size_t t = 0; t < T; ++t) d[t] = run(Eigen::Index(t), j) - r.nominal_outputs(Eigen::Index(t), j);
      plot.line(r.time, d, SvgStyle{cc, 0.6, "", "none", 1.0, 0.35}, k == 0 ? name + ": Monte Carlo runs" : "");
    }
    std::vector<double> lo(T), hi(T), mid(T);
    for (std::size_t t = 0; t < T; ++t) {
      const auto i = Eigen::Index(t);
      mid[t] = mean(i, j) - r.nominal_outputs(i, j);
      lo[t] = mid[t] - 3 * sd(i, j);
      hi[t] = mid[t] + 3 * sd(i, j);
    }
    plot.band(r.time, lo, hi, SvgStyle{cc, 0.5, "", cc, 0.22}, name + ": mean ± 3σ");
    plot.line(r.time, mid, SvgStyle{cc, 1.8, "", "none"}, name + ": mean − nominal");
  }
  // The deterministic bound on ‖p − p_nominal‖ bounds each component of p too.
  if (r.tube.done && std::size_t(r.tube.radius.size()) == T &&
      std::all_of(axes.begin(), axes.end(), [&](int j) {
        return index_of(r.tube.position, r.output_names[std::size_t(j)]) >= 0;
      })) {
    std::vector<double> lo(T), hi(T);
    for (std::size_t t = 0; t < T; ++t) hi[t] = r.tube.radius[Eigen::Index(t)], lo[t] = -hi[t];
    plot.line(r.time, hi, SvgStyle{kZone, 1.4, "2 2", "none"}, "deterministic bound ±r(t)");
    plot.line(r.time, lo, SvgStyle{kZone, 1.4, "2 2", "none"}, "");
  }
  return plot.render();
}

std::string probability_plot(const AnalysisResult& r) {
  if (r.constraints.empty() || r.time.empty()) return paragraph("No constraints in this result.", "missing");
  SvgPlot plot("plot-probability", "Violation probability vs time", 900, 380);
  plot.x_axis("time [s]");
  time_range(plot, r);
  plot.y_axis("probability of violation (log)", true);
  plot.clamp_to_floor(true);
  double lo = 1, hi = 0;
  auto scan = [&](const Eigen::VectorXd& v) {
    for (Eigen::Index i = 0; i < v.size(); ++i)
      if (std::isfinite(v[i]) && v[i] > 0) lo = std::min(lo, v[i]), hi = std::max(hi, v[i]);
  };
  bool any = false;
  for (std::size_t k = 0; k < r.constraints.size(); ++k) {
    const auto& c = r.constraints[k];
    const std::string cc = colour(k);
    if (std::isfinite(c.max_probability) && c.max_probability > 0) {
      lo = std::min(lo, c.max_probability), hi = std::max(hi, c.max_probability);
      plot.hline(c.max_probability, SvgStyle{cc, 1.2, "2 3", "none"}, c.name + " bound");
    }
    if (std::size_t(c.pointwise_probability.size()) == r.time.size()) {
      scan(c.pointwise_probability);
      plot.line(r.time, to_vector(c.pointwise_probability), SvgStyle{cc, 2.0, "", "none"}, c.name + " surrogate");
      any = true;
    }
    if (c.has_montecarlo && std::size_t(c.montecarlo.pointwise_probability.size()) == r.time.size()) {
      scan(c.montecarlo.pointwise_probability);
      plot.line(r.time, to_vector(c.montecarlo.pointwise_probability), SvgStyle{cc, 1.6, "7 4", "none"},
                c.name + " Monte Carlo");
      any = true;
    }
  }
  if (!any) return paragraph("No pointwise probabilities in this result.", "missing");
  if (hi <= 0) lo = 1e-6, hi = 1e-1;
  // Six decades below the larger of bound and largest probability are enough to
  // see how a rare event builds up; anything smaller sits on the floor.
  const double floor =
      std::max(std::pow(10.0, std::floor(std::log10(lo)) - 1), std::pow(10.0, std::floor(std::log10(hi)) - 6));
  const double top = std::min(1.0, std::pow(10.0, std::ceil(std::log10(hi))));
  plot.y_range(std::max(floor, 1e-15), std::max(top, floor * 100));
  return plot.render() +
         paragraph(
             "Probabilities that are exactly zero are drawn on the lower edge of the axis. A Monte Carlo "
             "estimate cannot resolve probabilities much below 1/runs.",
             "caption");
}

std::string clearance_plots(const AnalysisResult& r) {
  std::string out;
  const std::size_t T = r.time.size();
  for (std::size_t k = 0; k < r.constraints.size(); ++k) {
    const auto& c = r.constraints[k];
    if (std::size_t(c.clearance_mean.size()) != T || T == 0) {
      out += paragraph(c.name + ": no clearance statistics in this result.", "missing");
      continue;
    }
    SvgPlot plot("plot-clearance-" + std::to_string(k + 1),
                 c.name + ": clearance (margin " + format_value(c.margin) + ")", 900, 320);
    plot.x_axis("time [s]");
    time_range(plot, r);
    plot.y_axis("clearance (≥ 0 safe)");
    const std::string cc = colour(k);
    if (std::size_t(c.clearance_std.size()) == T) {
      std::vector<double> lo(T), hi(T);
      for (std::size_t i = 0; i < T; ++i) {
        lo[i] = c.clearance_mean[Eigen::Index(i)] - 3 * c.clearance_std[Eigen::Index(i)];
        hi[i] = c.clearance_mean[Eigen::Index(i)] + 3 * c.clearance_std[Eigen::Index(i)];
      }
      plot.band(r.time, lo, hi, SvgStyle{cc, 0.4, "", cc, 0.18}, "mean ± 3σ");
    }
    plot.hline(0.0, SvgStyle{kZone, 1.4, "", "none"}, "zero (violation below)");
    plot.line(r.time, to_vector(c.clearance_mean), SvgStyle{cc, 2.0, "", "none"}, "mean");
    if (std::size_t(c.clearance_quantile.size()) == T)
      plot.line(r.time, to_vector(c.clearance_quantile), SvgStyle{kNominal, 1.6, "6 3", "none"},
                "quantile at ε = " + format_probability(c.max_probability));
    out += plot.render();
  }
  if (r.constraints.empty()) out = paragraph("No constraints in this result.", "missing");
  return out;
}

std::string sobol_plot(const AnalysisResult& r, const ReportOptions& o) {
  const SurrogateResult& s = r.surrogate;
  const std::size_t T = r.time.size(), n = r.output_names.size(), d = s.germ_names.size();
  if (!s.done || d == 0 || s.sobol_first.size() != T || T == 0 || !rows_match(s.std, T, n))
    return paragraph("No Sobol indices in this result (they need a surrogate).", "missing");
  int out = o.sobol_output.empty() ? -1 : index_of(r.output_names, o.sobol_output);
  if (out < 0) s.std.row(Eigen::Index(T - 1)).maxCoeff(&out);
  for (const auto& m : s.sobol_first)
    if (m.rows() != Eigen::Index(n) || m.cols() != Eigen::Index(d))
      return paragraph("Sobol indices have an unexpected shape.", "missing");

  auto index_at = [&](const Cube& cube, std::size_t t, std::size_t j) {
    const double v = cube[t](out, Eigen::Index(j));
    return std::isfinite(v) ? std::clamp(v, 0.0, 1.0) : 0.0;
  };
  // Rank germ dimensions by their largest index over time; the rest are pooled.
  const bool have_total = s.sobol_total.size() == T;
  std::vector<double> peak(d, 0.0);
  for (std::size_t t = 0; t < T; ++t)
    for (std::size_t j = 0; j < d; ++j)
      peak[j] =
          std::max(peak[j], have_total && s.sobol_total[t].cols() == Eigen::Index(d) ? index_at(s.sobol_total, t, j)
                                                                                     : index_at(s.sobol_first, t, j));
  std::vector<std::size_t> order(d);
  std::iota(order.begin(), order.end(), 0);
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return peak[a] > peak[b]; });
  constexpr std::size_t kShown = 6;
  const std::size_t shown = std::min(kShown, d);

  SvgPlot plot("plot-sobol", "Variance shares of " + r.output_names[std::size_t(out)] + " (first-order Sobol indices)",
               900, 380);
  plot.x_axis("time [s]");
  time_range(plot, r);
  plot.y_axis("share of variance");
  plot.y_range(0, 1);
  std::vector<double> base(T, 0.0), top(T);
  auto stack = [&](const std::vector<double>& add, const std::string& c, const std::string& label) {
    for (std::size_t t = 0; t < T; ++t) top[t] = std::min(1.0, base[t] + add[t]);
    plot.band(r.time, base, top, SvgStyle{c, 0.6, "", c, 0.75}, label);
    base = top;
  };
  for (std::size_t k = 0; k < shown; ++k) {
    std::vector<double> v(T);
    for (std::size_t t = 0; t < T; ++t) v[t] = index_at(s.sobol_first, t, order[k]);
    stack(v, colour(k), s.germ_names[order[k]]);
  }
  if (d > shown) {
    std::vector<double> v(T, 0.0);
    for (std::size_t t = 0; t < T; ++t)
      for (std::size_t k = shown; k < d; ++k) v[t] += index_at(s.sobol_first, t, order[k]);
    stack(v, "#b7bec6", "other inputs (" + std::to_string(d - shown) + ")");
  }
  std::vector<double> rest(T);
  for (std::size_t t = 0; t < T; ++t) {
    const double total_first = base[t];
    // A time with no variance (e.g. t = 0 without initial uncertainty) has no shares.
    const bool has_variance = s.std(Eigen::Index(t), out) > 0;
    rest[t] = has_variance ? std::max(0.0, 1.0 - total_first) : 0.0;
  }
  stack(rest, "#eeeeee", "interactions");
  return plot.render() + paragraph(
                             "Stacked first-order indices S_i; the grey remainder 1 − ΣS_i is the share "
                             "of variance due to interactions between inputs.",
                             "caption");
}

std::string validation_plot(const AnalysisResult& r) {
  const std::size_t T = r.time.size(), n = r.output_names.size();
  const SurrogateResult& s = r.surrogate;
  const MonteCarloResult& m = r.montecarlo;
  if (!s.done || !m.done || !rows_match(s.mean, T, n) || !rows_match(s.std, T, n) || !rows_match(m.mean, T, n) ||
      !rows_match(m.std, T, n))
    return paragraph("No surrogate-versus-Monte-Carlo comparison in this result (it needs both).", "missing");
  std::vector<double> sx, sy, mx, my;
  for (std::size_t j = 0; j < n; ++j) {
    const double scale = m.std.col(Eigen::Index(j)).maxCoeff();
    if (!(scale > 0)) continue;
    for (std::size_t t = 0; t < T; ++t) {
      const auto i = Eigen::Index(t), c = Eigen::Index(j);
      sx.push_back(m.std(i, c) / scale);
      sy.push_back(s.std(i, c) / scale);
      if (rows_match(r.nominal_outputs, T, n)) {
        mx.push_back((m.mean(i, c) - r.nominal_outputs(i, c)) / scale);
        my.push_back((s.mean(i, c) - r.nominal_outputs(i, c)) / scale);
      }
    }
  }
  if (sx.empty()) return paragraph("Monte Carlo found no spread in any output.", "missing");
  SvgPlot plot("plot-validation", "Surrogate vs Monte Carlo (per time and output)", 640, 520);
  plot.x_axis("Monte Carlo value / output's largest MC std");
  plot.y_axis("surrogate value / same scale");
  plot.equal_aspect(true);
  plot.diagonal(SvgStyle{kNominal, 1.0, "5 3", "none"}, "y = x");
  plot.scatter(sx, sy, SvgStyle{kPalette[0], 0.6, "", kPalette[0], 0.55}, 3.0, "standard deviation");
  if (!mx.empty()) plot.scatter(mx, my, SvgStyle{kPalette[1], 0.6, "", kPalette[1], 0.55}, 3.0, "mean − nominal");
  return plot.render() + paragraph(
                             "Points on the dashed line mean the surrogate reproduces the full-model "
                             "statistics; the Monte Carlo values carry their own sampling error.",
                             "caption");
}

// ------------------------------------------------------------------ tables

std::string summary_table(const AnalysisResult& r) {
  if (r.constraints.empty()) return paragraph("No constraints in this result.", "missing");
  std::ostringstream o;
  const int percent = int(std::lround(100 * r.montecarlo.confidence));
  o << "<table class=\"summary\">\n<thead><tr><th>constraint</th><th>type</th><th>scope</th><th>bound</th>"
    << "<th>surrogate P ± s.e.</th><th>Monte Carlo P [" << percent
    << "% CI]</th><th>importance sampling P [CI], ESS, CoV</th>"
    << "<th>margin</th><th>worst time [s]</th><th>Gaussian / "
       "Cantelli</th><th>agreement</th><th>verdict</th></tr></thead>\n<tbody>\n";
  for (const auto& c : r.constraints) {
    auto cell = [&](const std::string& text, const std::string& cls = "") {
      o << "<td" << (cls.empty() ? std::string() : " class=\"" + cls + "\"") << ">" << xml_escape(text) << "</td>";
    };
    o << "<tr>";
    cell(c.name);
    cell(c.type.empty() ? kMissingValue : c.type);
    cell(c.scope.empty() ? kMissingValue : c.scope);
    cell(format_probability(c.max_probability), "num");
    cell(format_probability(surrogate_gate_probability(c)) + " ± " +
             format_probability(surrogate_gate_standard_error(c), 1),
         "num");
    if (c.has_montecarlo) {
      double ci[2];
      montecarlo_gate_interval(r, c, ci);
      cell(format_probability(montecarlo_gate_probability(c)) + " [" + format_probability(ci[0]) + ", " +
               format_probability(ci[1]) + "]",
           "num");
    } else {
      cell(kMissingValue, "num");
    }
    const auto& is = c.importance_sampling;
    cell(is.done ? format_probability(is.probability) + " [" + format_probability(is.interval[0]) + ", " +
                       format_probability(is.interval[1]) + "], " + format_value(is.effective_sample_size, 3) +
                       (std::isnan(is.coefficient_of_variation)
                            ? std::string()
                            : ", CoV " + format_value(is.coefficient_of_variation, 2) +
                                  (is.converged ? "" : " (target not met: no verdict)"))
                 : std::string(kMissingValue),
         "num");
    cell(format_value(c.margin), "num");
    cell(format_value(c.worst_time), "num");
    // Counted over the report times in the window, like the text summary.
    int g = 0, gt = 0, ct = 0, ctt = 0;
    window_flag_counts(c, r.time, c.gaussian_ok, &g, &gt);
    window_flag_counts(c, r.time, c.cantelli_ok, &ct, &ctt);
    cell(c.gaussian_ok.empty() ? std::string(kMissingValue)
                               : std::to_string(g) + "/" + std::to_string(gt) + " · " + std::to_string(ct) + "/" +
                                     std::to_string(ctt),
         "num");
    cell(
        c.agreement.empty() ? kMissingValue : c.agreement + (c.agreement_cause.empty() ? "" : ": " + c.agreement_cause),
        c.agreement == "disagree" ? "bad" : "");
    cell(c.within_bound ? "within bound" : "bound exceeded", c.within_bound ? "good" : "bad");
    o << "</tr>\n";
    std::string notes = c.verdict;
    if (!c.reformulation_note.empty()) notes += (notes.empty() ? "" : " \xE2\x80\x94 ") + c.reformulation_note;
    if (!notes.empty()) o << "<tr class=\"note\"><td colspan=\"12\">" << xml_escape(notes) << "</td></tr>\n";
  }
  o << "</tbody>\n</table>\n";
  return o.str();
}

std::string facts_table(const AnalysisResult& r) {
  std::vector<std::pair<std::string, std::string>> rows;
  rows.emplace_back("case", r.case_path.empty() ? kMissingValue : r.case_path);
  rows.emplace_back("case fingerprint (SHA-256)", r.case_sha256.empty() ? kMissingValue : r.case_sha256);
  rows.emplace_back("created (UTC)", r.created_utc.empty() ? kMissingValue : r.created_utc);
  rows.emplace_back("tool version / seed",
                    (r.tool_version.empty() ? kMissingValue : r.tool_version) + " / " + std::to_string(r.seed));
  if (!r.time.empty())
    rows.emplace_back("report times", std::to_string(r.time.size()) + " from " + format_value(r.time.front()) +
                                          " s to " + format_value(r.time.back()) + " s");
  const SurrogateResult& s = r.surrogate;
  if (s.done) {
    rows.emplace_back("surrogate", s.method + ", degree " + std::to_string(s.degree_reached) + ", level " +
                                       std::to_string(s.level_reached));
    rows.emplace_back("germ dimension / basis size",
                      std::to_string(s.germ_names.size()) + " / " + std::to_string(s.multi_indices.rows()));
    rows.emplace_back("model runs", std::to_string(s.model_runs));
    Eigen::Index i = -1;
    double worst = kNaN;
    for (Eigen::Index k = 0; k < s.error_estimate.size(); ++k)
      if (std::isfinite(s.error_estimate[k]) && (i < 0 || s.error_estimate[k] > worst))
        i = k, worst = s.error_estimate[k];
    rows.emplace_back(
        "error estimate (worst output)",
        format_probability(worst) +
            (i >= 0 && std::size_t(i) < r.output_names.size() ? " (" + r.output_names[std::size_t(i)] + ")" : "") +
            (s.tolerance_met ? "" : " — tolerance NOT met"));
    for (const auto& line : s.karhunen_loeve) rows.emplace_back("Karhunen–Loève", line);
    // What the build did: runs per refinement, retained indices, why it stopped.
    for (const auto& note : s.notes) rows.emplace_back("surrogate build", note);
  } else {
    rows.emplace_back("surrogate", "none (nominal run only)");
  }
  const MonteCarloResult& m = r.montecarlo;
  if (m.done) {
    rows.emplace_back("Monte Carlo runs (failed)", std::to_string(m.runs) + " (" + std::to_string(m.failed_runs) + ")");
    rows.emplace_back("agreement", (m.agreement.empty() ? kMissingValue : m.agreement) +
                                       (m.agreement_cause.empty() ? "" : ": " + m.agreement_cause));
  } else {
    rows.emplace_back("Monte Carlo", "not run: surrogate numbers are unconfirmed");
  }
  std::ostringstream o;
  o << "<table class=\"facts\">\n<tbody>\n";
  for (const auto& [k, v] : rows)
    o << "<tr><th>" << xml_escape(k) << "</th><td class=\"lines\">" << xml_escape(v) << "</td></tr>\n";
  o << "</tbody>\n</table>\n";
  return o.str();
}

const char* kStyle = R"(
body { font-family: "DejaVu Sans", "Liberation Sans", Arial, sans-serif; color: #1b2430; background: #eef1f4;
       margin: 0; }
main { max-width: 1240px; margin: 0 auto; padding: 24px 32px 48px; background: #ffffff; }
h1 { font-size: 24px; margin: 0 0 4px; }
h2 { font-size: 18px; margin: 32px 0 8px; border-bottom: 2px solid #d5dbe1; padding-bottom: 4px; }
p { line-height: 1.45; max-width: 70em; }
.verdict { font-size: 17px; font-weight: bold; padding: 10px 14px; border-radius: 4px; margin: 14px 0; }
.verdict.ok { background: #e3f3e8; border-left: 6px solid #3a9d5d; }
.verdict.fail { background: #fbe5e1; border-left: 6px solid #c0392b; }
.verdict.untrusted { background: #fdf1d8; border-left: 6px solid #d9822b; }
table { border-collapse: collapse; font-size: 13px; margin: 8px 0; }
th, td { border: 1px solid #d5dbe1; padding: 4px 8px; text-align: left; vertical-align: top; }
thead th { background: #e8edf2; }
table.facts th { background: #f4f6f8; font-weight: normal; color: #4a5866; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.good { color: #23753f; font-weight: bold; }
td.bad { color: #b02a1a; font-weight: bold; }
tr.note td { color: #4a5866; font-size: 12px; border-top: none; }
.cautions { background: #fff7e0; border: 1px solid #e6c36a; padding: 10px 14px; border-radius: 4px; }
td.lines { white-space: pre-line; }
.caption { font-size: 12px; color: #4a5866; margin-top: 2px; }
.missing { color: #6a7682; font-style: italic; }
svg.plot { display: block; margin: 8px 0; border: 1px solid #e1e5ea; }
footer { font-size: 11px; color: #6a7682; margin-top: 32px; }
)";

}  // namespace

void ReportOptions::validate(const AnalysisResult& r) const {
  if ((plane_x.empty()) != (plane_y.empty()))
    throw InputError(SourceLocation{"", 0, "--plane"}, "give both plane outputs or neither");
  for (const auto* name : {&plane_x, &plane_y})
    if (!name->empty() && index_of(r.output_names, *name) < 0)
      throw InputError(SourceLocation{"", 0, "--plane"}, "no output named '" + *name + "' in this result");
  if (!sobol_output.empty() && index_of(r.output_names, sobol_output) < 0)
    throw InputError(SourceLocation{"", 0, "--sobol-output"}, "no output named '" + sobol_output + "' in this result");
  if (max_mc_runs < 0) throw InputError(SourceLocation{"", 0, "max_mc_runs"}, "must be >= 0");
}

std::string html_report(const AnalysisResult& r, const ReportOptions& options) {
  options.validate(r);
  const std::string title = r.title.empty() ? std::string("sigmatube result") : r.title;
  const int code = r.verdict_exit_code();
  std::ostringstream o;
  o << "<!DOCTYPE html>\n<html xmlns=\"http://www.w3.org/1999/xhtml\" lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n"
    << "<title>" << xml_escape("sigmatube report: " + title) << "</title>\n<style>" << kStyle
    << "</style>\n</head>\n<body>\n<main>\n";
  o << "<h1>" << xml_escape(title) << "</h1>\n";
  o << paragraph("Uncertainty analysis of a closed-loop trajectory (" +
                     (r.command.empty() ? std::string("run") : r.command) + ").",
                 "caption");
  o << "<div class=\"verdict "
    << (code == 0   ? "ok"
        : code == 3 ? "untrusted"
                    : "fail")
    << "\">" << xml_escape(exit_verdict_line(r)) << "</div>\n";
  o << "<h2>Summary</h2>\n" << facts_table(r) << summary_table(r);
  o << "<div class=\"cautions\"><strong>Read before use.</strong> " << xml_escape(cautions_text()) << "</div>\n";
  o << "<h2>Dispersion tube</h2>\n"
    << paragraph(
           "Nominal path, surrogate mean and the 3σ covariance ellipse at each report time (their union is the "
           "tube; for a Gaussian position each ellipse holds about 98.9% of the probability). Keep-out zones "
           "are drawn when their position outputs are the two axes; spheres appear as their projected circle.",
           "caption")
    << tube_plot(r, options) << deviation_plot(r, options);
  {
    const Plane plane = choose_plane(r, options);
    o << breakdown_sections(r, plane.ix, plane.iy);
  }
  o << "<h2>Violation probability</h2>\n" << probability_plot(r);
  o << "<h2>Clearance and margin</h2>\n"
    << paragraph(
           "Clearance c(t) ≥ 0 is safe. The dashed line is the ε-quantile of the clearance at the constraint's "
           "bound; the margin is the ε-quantile of the path-minimum clearance.",
           "caption")
    << clearance_plots(r);
  o << "<h2>Sensitivity</h2>\n" << sobol_plot(r, options);
  o << "<h2>Surrogate versus Monte Carlo</h2>\n" << validation_plot(r);
  o << "<footer>"
    << xml_escape("Written by sigmatube " + r.tool_version +
                  ". Self-contained page: no scripts, no network "
                  "access.")
    << "</footer>\n";
  o << "</main>\n</body>\n</html>\n";
  return o.str();
}

}  // namespace sigmatube::result
