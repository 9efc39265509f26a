// SPDX-License-Identifier: MIT
#include "sigmatube/result/breakdown_report.h"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "sigmatube/result/markup_escape.h"
#include "sigmatube/result/number_format.h"
#include "sigmatube/result/svg_plot.h"

namespace sigmatube::result {
namespace {

const std::vector<std::string> kColours = {"#2f6db5", "#d9822b", "#3a9d5d", "#8e44ad",
                                           "#b83b5e", "#4a6670", "#c9a227", "#1d8f9c"};
const std::string kBound = "#c0392b", kGrey = "#8a939c", kDark = "#1b2430";

std::string p(const std::string& text, const std::string& cls = "caption") {
  return "<p class=\"" + cls + "\">" + xml_escape(text) + "</p>\n";
}

std::vector<double> as_vector(const Eigen::VectorXd& v) { return {v.data(), v.data() + v.size()}; }

std::string tube_section(const AnalysisResult& r) {
  std::string out = "<h2>Deterministic tube</h2>\n";
  const TubeResult& t = r.tube;
  const std::size_t T = r.time.size();
  if (!t.done) return out + p("No [tube] table in the case: no deterministic bound.");
  std::ostringstream text;
  text << "Worst-case bound r(t) on ‖p − p_nominal‖ for p = (";
  for (std::size_t k = 0; k < t.position.size(); ++k) text << (k ? ", " : "") << t.position[k];
  text << ") over every realisation inside the input bounds, for the loop linearized along the plan. Metric: "
       << t.metric_kind << "; smallest contraction rate " << format_value(t.rate.size() ? t.rate.minCoeff() : kNaN)
       << " 1/s.";
  if (!t.bounded) text << " " << t.no_bound_reason << ".";
  if (t.runs_checked > 0)
    text << " Checked against " << t.runs_checked << " full-model Monte Carlo runs: " << t.exceedances
         << " (run, time) pairs above the bound; largest observed deviation "
         << format_value(t.largest_observed_deviation) << (t.units.empty() ? "" : " " + t.units)
         << ", bound / largest deviation = " << format_value(t.conservatism) << ".";
  out += p(text.str());
  out += "<ul class=\"caption\">\n";
  for (const auto& a : t.assumptions) out += "<li>" + xml_escape(a) + "</li>\n";
  out += "</ul>\n";
  if (std::size_t(t.radius.size()) != T || T == 0) return out;
  SvgPlot plot("plot-tube-bound", "Deterministic tube radius and observed deviations", 900, 340);
  plot.x_axis("time [s]");
  plot.y_axis("‖p − p_nominal‖" + (t.units.empty() ? std::string() : " [" + t.units + "]"));
  // Kept runs: their deviation norm.
  std::vector<int> cols;
  for (const auto& name : t.position) {
    const auto it = std::find(r.output_names.begin(), r.output_names.end(), name);
    if (it != r.output_names.end()) cols.push_back(int(it - r.output_names.begin()));
  }
  bool first = true;
  for (const auto& run : r.montecarlo.sample_outputs) {
    if (std::size_t(run.rows()) != T || run.cols() != r.nominal_outputs.cols()) continue;
    std::vector<double> d(T);
    for (std::size_t k = 0; k < T; ++k) {
      double s = 0;
      for (int c : cols) s += std::pow(run(Eigen::Index(k), c) - r.nominal_outputs(Eigen::Index(k), c), 2);
      d[k] = std::sqrt(s);
    }
    plot.line(r.time, d, SvgStyle{kGrey, 0.7, "", "none", 1.0, 0.5}, first ? "Monte Carlo runs (kept)" : "");
    first = false;
  }
  plot.band(r.time, std::vector<double>(T, 0.0), as_vector(t.radius), SvgStyle{kBound, 0.5, "", kBound, 0.12},
            "deterministic bound r(t)");
  plot.line(r.time, as_vector(t.radius), SvgStyle{kBound, 2.0, "", "none"}, "");
  return out + plot.render() + p("Where the line stops the linearized loop does not contract: no bound there.");
}

std::string quantile_section(const AnalysisResult& r, int ix, int iy) {
  std::string out = "<h2>Quantile tubes</h2>\n";
  const SurrogateResult& s = r.surrogate;
  const std::size_t T = r.time.size(), k = s.quantile_levels.size();
  if (!s.done || s.quantiles.size() != T || k < 3 || T == 0)
    return out + p("No quantile tubes in this result (they need a surrogate).", "missing");
  std::ostringstream text;
  text << "Empirical quantiles of " << s.quantile_samples << " surrogate samples at the levels ";
  for (std::size_t l = 0; l < k; ++l) text << (l ? ", " : "") << format_probability(s.quantile_levels[l]);
  text << " (each constraint's ε and 1 − ε, the 2.5 % and 97.5 % band and the median).";
  out += p(text.str());
  const auto level_index = [&](double level) {
    std::size_t best = 0;
    for (std::size_t l = 0; l < k; ++l)
      if (std::abs(s.quantile_levels[l] - level) < std::abs(s.quantile_levels[best] - level)) best = l;
    return best;
  };
  int plot_id = 0;
  for (int j : {iy, ix}) {
    if (j < 0 || j >= int(r.output_names.size())) continue;
    SvgPlot plot("plot-quantiles-" + std::to_string(++plot_id), "Quantile tube of " + r.output_names[std::size_t(j)],
                 900, 340);
    plot.x_axis("time [s]");
    plot.y_axis(output_label(r, j));
    const auto series = [&](std::size_t l) {
      std::vector<double> v(T);
      for (std::size_t t = 0; t < T; ++t)
        v[t] = s.quantiles[t].rows() > j && s.quantiles[t].cols() == Eigen::Index(k) ? s.quantiles[t](j, Eigen::Index(l))
                                                                                      : kNaN;
      return v;
    };
    plot.band(r.time, series(0), series(k - 1), SvgStyle{kColours[0], 0.4, "", kColours[0], 0.15},
              "q" + format_probability(s.quantile_levels[0]) + " to q" + format_probability(s.quantile_levels[k - 1]));
    plot.band(r.time, series(level_index(0.025)), series(level_index(0.975)),
              SvgStyle{kColours[0], 0.4, "", kColours[0], 0.3}, "q0.025 to q0.975");
    plot.line(r.time, series(level_index(0.5)), SvgStyle{kColours[0], 2.0, "", "none"}, "median");
    if (r.nominal_outputs.cols() > j && std::size_t(r.nominal_outputs.rows()) == T) {
      std::vector<double> v(T);
      for (std::size_t t = 0; t < T; ++t) v[t] = r.nominal_outputs(Eigen::Index(t), j);
      plot.line(r.time, v, SvgStyle{kDark, 1.4, "5 3", "none"}, "nominal");
    }
    out += plot.render();
  }
  return out;
}

std::string share_section(const AnalysisResult& r) {
  std::string out = "<h2>Variance shares per uncertain input</h2>\n";
  const SurrogateResult& s = r.surrogate;
  const std::size_t T = r.time.size(), G = s.input_names.size();
  bool any = false;
  for (std::size_t c = 0; c < r.constraints.size(); ++c) {
    const auto& con = r.constraints[c];
    if (std::size_t(con.sobol_first_by_input.rows()) != T || std::size_t(con.sobol_first_by_input.cols()) != G || G == 0)
      continue;
    any = true;
    SvgPlot plot("plot-shares-" + std::to_string(c + 1), con.name + ": variance shares of the clearance per input",
                 900, 340);
    plot.x_axis("time [s]");
    plot.y_axis("share of variance");
    plot.y_range(0, 1);
    for (std::size_t g = 0; g < G; ++g) {
      const std::string col = kColours[g % kColours.size()];
      const auto series = [&](const Eigen::MatrixXd& m) {
        std::vector<double> v(T);
        for (std::size_t t = 0; t < T; ++t) v[t] = m(Eigen::Index(t), Eigen::Index(g));
        return v;
      };
      if (std::size_t(con.sobol_first_by_input_lower.rows()) == T)
        plot.band(r.time, series(con.sobol_first_by_input_lower), series(con.sobol_first_by_input_upper),
                  SvgStyle{col, 0.2, "", col, 0.15}, "");
      plot.line(r.time, series(con.sobol_first_by_input), SvgStyle{col, 1.8, "", "none"}, s.input_names[g]);
      if (std::size_t(con.sobol_total_by_input.rows()) == T)
        plot.line(r.time, series(con.sobol_total_by_input), SvgStyle{col, 1.0, "4 3", "none"}, "");
    }
    out += plot.render();
  }
  if (!any) return out + p("No variance shares of constraint clearances in this result.", "missing");
  std::ostringstream text;
  text << "Solid: closed (first-order) share of each [[uncertain]] input with its delta-method "
       << format_value(100 * s.sobol_confidence) << " % interval (shaded); dashed: total share (interactions included). "
       << "Germ dimensions of one input (vector components, Karhunen–Loève modes) count as one input.";
  return out + p(text.str());
}

}  // namespace

std::string output_label(const AnalysisResult& r, int j) {
  if (j < 0 || j >= int(r.output_names.size())) return "";
  const std::string& name = r.output_names[std::size_t(j)];
  const std::string unit = std::size_t(j) < r.output_units.size() ? r.output_units[std::size_t(j)] : "";
  return unit.empty() ? name : name + " [" + unit + "]";
}

std::string breakdown_sections(const AnalysisResult& r, int ix, int iy) {
  return tube_section(r) + quantile_section(r, ix, iy) + share_section(r);
}

}  // namespace sigmatube::result
