// SPDX-License-Identifier: MIT
#include "sigmatube/result/summary_text.h"

#include <algorithm>
#include <cmath>
#include <sstream>

#include <boost/math/special_functions/beta.hpp>

#include "sigmatube/result/number_format.h"
#include "sigmatube/result/text_table.h"

namespace sigmatube::result {
namespace {

const char* kGreen = "\x1b[32m";
const char* kRed = "\x1b[31m";
const char* kYellow = "\x1b[33m";
const char* kBold = "\x1b[1m";
const char* kReset = "\x1b[0m";

std::string paint(const std::string& text, const char* code, bool color) {
  return color ? std::string(code) + text + kReset : text;
}

// Greedy word wrap: `prefix` on the first line, `indent` (default: as many
// spaces as the prefix is wide) on the others.
std::string wrap(const std::string& text, std::size_t width, const std::string& first_prefix,
                 std::string indent = "\x01") {
  if (indent == "\x01") indent = std::string(display_width(first_prefix), ' ');
  std::string prefix = first_prefix;
  std::istringstream words(text);
  std::string out, line, word;
  while (words >> word) {
    if (!line.empty() && display_width(prefix + line + " " + word) > width) {
      out += prefix + line + "\n";
      prefix = indent;
      line.clear();
    }
    line += (line.empty() ? "" : " ") + word;
  }
  if (!line.empty()) out += prefix + line + "\n";
  return out;
}

// Indents every line after the first (multi-line causes under a label).
std::string indent_lines(const std::string& text, const std::string& indent) {
  std::string out;
  for (char ch : text) {
    out += ch;
    if (ch == '\n') out += indent;
  }
  return out;
}

bool in_window(const ConstraintResult& c, double t) {
  const bool lo = std::isnan(c.window[0]) || t >= c.window[0];
  const bool hi = std::isnan(c.window[1]) || t <= c.window[1];
  return lo && hi;
}

// Index of the largest non-NaN entry, -1 if none.
Eigen::Index argmax_finite(const Eigen::VectorXd& v) {
  Eigen::Index best = -1;
  for (Eigen::Index i = 0; i < v.size(); ++i)
    if (!std::isnan(v[i]) && (best < 0 || v[i] > v[best])) best = i;
  return best;
}

// Clopper & Pearson (1934), Biometrika 26(4): exact two-sided interval for a
// binomial proportion from beta quantiles.
void clopper_pearson(long long k, long long n, double confidence, double out[2]) {
  const double alpha = 1.0 - confidence;
  out[0] = k == 0 ? 0.0 : boost::math::ibeta_inv(double(k), double(n - k + 1), alpha / 2);
  out[1] = k == n ? 1.0 : boost::math::ibeta_inv(double(k + 1), double(n - k), 1 - alpha / 2);
}

std::string interval_text(double lo, double hi) {
  return "[" + format_probability(lo) + ", " + format_probability(hi) + "]";
}

std::string montecarlo_cell(const AnalysisResult& r, const ConstraintResult& c) {
  if (!c.has_montecarlo) return kMissingValue;
  double ci[2];
  montecarlo_gate_interval(r, c, ci);
  return format_probability(montecarlo_gate_probability(c)) + " " + interval_text(ci[0], ci[1]);
}

std::string worst_output(const AnalysisResult& r, const Eigen::VectorXd& v, double* value) {
  const Eigen::Index i = argmax_finite(v);
  *value = i < 0 ? kNaN : v[i];
  if (i < 0) return kMissingValue;
  return std::size_t(i) < r.output_names.size() ? r.output_names[std::size_t(i)] : "#" + std::to_string(i);
}

}  // namespace

void window_flag_counts(const ConstraintResult& c, const std::vector<double>& time,
                        const std::vector<std::uint8_t>& flags, int* ok, int* total) {
  *ok = *total = 0;
  for (std::size_t k = 0; k < flags.size() && k < time.size(); ++k) {
    if (!in_window(c, time[k])) continue;
    ++*total;
    *ok += flags[k] ? 1 : 0;
  }
}

double surrogate_gate_probability(const ConstraintResult& c) {
  return c.scope == "path" ? c.path_probability : c.worst_pointwise_probability;
}

double surrogate_gate_standard_error(const ConstraintResult& c) {
  if (c.scope == "path") return c.path_standard_error;
  const Eigen::Index i = argmax_finite(c.pointwise_probability);
  if (i < 0 || i >= c.pointwise_standard_error.size()) return kNaN;
  return c.pointwise_standard_error[i];
}

double montecarlo_gate_probability(const ConstraintResult& c) {
  if (!c.has_montecarlo) return kNaN;
  if (c.scope == "path") return c.montecarlo.path_probability;
  const Eigen::Index i = argmax_finite(c.montecarlo.pointwise_probability);
  return i < 0 ? kNaN : c.montecarlo.pointwise_probability[i];
}

void montecarlo_gate_interval(const AnalysisResult& r, const ConstraintResult& c, double out[2]) {
  out[0] = out[1] = kNaN;
  if (!c.has_montecarlo) return;
  if (c.scope == "path") {
    out[0] = c.montecarlo.path_interval[0];
    out[1] = c.montecarlo.path_interval[1];
    return;
  }
  const double p = montecarlo_gate_probability(c);
  const long long n = r.montecarlo.runs - r.montecarlo.failed_runs;
  if (std::isnan(p) || n <= 0) return;
  clopper_pearson(std::llround(p * double(n)), n, r.montecarlo.confidence, out);
}

std::string cautions_text() {
  const std::string text =
      "Cautions. These numbers are only as good as the model and the input "
      "distributions given in the case file: a wrong model or a wrong "
      "distribution gives confident, wrong answers. A polynomial surrogate can "
      "miss behaviour it was not built to see, such as actuator saturation, mode "
      "switching or contact; read the Monte Carlo cross-check and its verdict "
      "before using any surrogate number, and treat a disagreement as a reason "
      "to stop. Flight and release decisions follow the applicable safety "
      "standards, regulations and the licensed authority's procedures, not this "
      "tool alone.";
  std::string out = wrap(text, 78, "");
  if (!out.empty() && out.back() == '\n') out.pop_back();
  return out;
}

std::string exit_verdict_line(const AnalysisResult& r) {
  const int code = r.verdict_exit_code();
  std::string names;
  for (const auto& c : r.constraints)
    if (!c.within_bound) names += (names.empty() ? "" : ", ") + c.name;
  if (code == 3) {
    std::string cause = r.montecarlo.agreement_cause.empty() ? "" : " (" + r.montecarlo.agreement_cause + ")";
    return "exit 3: surrogate and Monte Carlo disagree" + cause + "; the probabilities cannot be trusted" +
           (names.empty() ? "" : "; bound exceeded by " + names);
  }
  if (code == 1) return "exit 1: bound exceeded by " + names;
  if (r.command == "simulate") return "exit 0: nominal run only; constraints are checked by `run`";
  if (r.constraints.empty()) return "exit 0: no constraints to check";
  if (r.montecarlo.done && r.montecarlo.agreement == "too few runs to tell")
    return "exit 0: every constraint within its bound; the Monte Carlo cross-check had too few runs to confirm " +
           std::string("the surrogate");
  return "exit 0: every constraint within its bound";
}

std::string summary_text(const AnalysisResult& r, bool color) {
  std::ostringstream out;
  out << paint("sigmatube result" + (r.title.empty() ? std::string() : ": " + r.title), kBold, color) << "\n";
  out << "  case         " << (r.case_path.empty() ? kMissingValue : r.case_path) << "\n";
  out << "  fingerprint  sha256 " << (r.case_sha256.empty() ? kMissingValue : r.case_sha256) << "\n";
  out << "  inputs       sha256 " << (r.inputs_sha256.empty() ? kMissingValue : r.inputs_sha256)
      << " (case, plan, overrides)\n";
  out << "  created      " << (r.created_utc.empty() ? kMissingValue : r.created_utc) << ", tool "
      << (r.tool_version.empty() ? kMissingValue : r.tool_version) << ", seed " << r.seed << ", command "
      << (r.command.empty() ? kMissingValue : r.command) << "\n";
  if (!r.time.empty())
    out << "  times        " << r.time.size() << " report times from " << format_value(r.time.front()) << " s to "
        << format_value(r.time.back()) << " s\n";
  out << "  outputs      " << r.output_names.size();
  if (!r.output_names.empty()) {
    out << " (";
    for (std::size_t i = 0; i < r.output_names.size(); ++i) out << (i ? ", " : "") << r.output_names[i];
    out << ")";
  }
  out << "\n";

  const SurrogateResult& s = r.surrogate;
  if (!s.done) {
    out << "\nNominal run only: no surrogate, probabilities or margins were computed.\n";
    if (r.nominal_outputs.rows() > 0 && r.nominal_outputs.cols() == Eigen::Index(r.output_names.size())) {
      out << "  final nominal outputs at t = " << format_value(r.time.empty() ? kNaN : r.time.back()) << " s:\n";
      for (std::size_t i = 0; i < r.output_names.size(); ++i)
        out << "    " << r.output_names[i] << " = "
            << format_value(r.nominal_outputs(r.nominal_outputs.rows() - 1, Eigen::Index(i)), 6) << "\n";
    }
  } else {
    out << "\nSurrogate\n";
    out << "  method       " << (s.method.empty() ? kMissingValue : s.method) << ", degree " << s.degree_reached
        << ", level " << s.level_reached << "\n";
    std::string germ = "dimension " + std::to_string(s.germ_names.size());
    if (!s.germ_names.empty()) {
      germ += " (";
      for (std::size_t i = 0; i < s.germ_names.size(); ++i)
        germ +=
            (i ? ", " : "") + s.germ_names[i] + (i < s.germ_families.size() ? " " + s.germ_families[i] : std::string());
      germ += ")";
    }
    out << wrap(germ, 78, "  germ         ");
    out << "  basis size   " << s.multi_indices.rows() << " polynomials\n";
    out << "  model runs   " << s.model_runs << "\n";
    if (s.samples > 0) {
      out << "  samples      " << s.samples << " surrogate samples for probabilities";
      if (s.sampling == "precision")
        out << (s.sampling_target_met ? " (scrambled Sobol replicates, target precision met)"
                                      : " (scrambled Sobol replicates, stopped at the samples cap before the target precision)");
      out << "\n";
    }
    double worst = kNaN;
    const std::string name = worst_output(r, s.error_estimate, &worst);
    out << "  error        estimate " << format_probability(worst) << " (worst output: " << name << ")\n";
    if (!s.tolerance_met)
      out << paint(
                 "  WARNING: the surrogate did not reach its error tolerance; trust its numbers only as far "
                 "as the Monte Carlo cross-check confirms them.",
                 kYellow, color)
          << "\n";
    for (const auto& line : s.karhunen_loeve) out << "  Karhunen-Loeve  " << line << "\n";
    for (const auto& note : s.notes) out << "  note         " << note << "\n";
  }

  if (!r.constraints.empty()) {
    bool any_is = false;
    for (const auto& c : r.constraints) any_is = any_is || c.importance_sampling.done;
    const int percent = int(std::lround(100 * r.montecarlo.confidence));
    TextTable table;
    table.header = {"constraint", "scope", "bound", "surrogate P (+/- s.e.)",
                    "Monte Carlo P [" + std::to_string(percent) + "% CI]"};
    if (any_is) table.header.push_back("importance sampling P [CI] ESS");
    table.header.insert(table.header.end(), {"margin", "verdict"});
    table.right_aligned = {false, false, true, true, true};
    if (any_is) table.right_aligned.push_back(true);
    table.right_aligned.insert(table.right_aligned.end(), {true, false});
    for (const auto& c : r.constraints) {
      const double p = surrogate_gate_probability(c);
      const double se = surrogate_gate_standard_error(c);
      std::vector<std::string> row = {
          c.name, c.scope.empty() ? kMissingValue : c.scope, format_probability(c.max_probability),
          format_probability(p) + " +/- " + format_probability(se, 1), montecarlo_cell(r, c)};
      if (any_is) {
        const auto& is = c.importance_sampling;
        row.push_back(is.done
                          ? format_probability(is.probability) + " " + interval_text(is.interval[0], is.interval[1]) +
                                " " + format_value(is.effective_sample_size, 3)
                          : std::string(kMissingValue));
      }
      row.push_back(format_value(c.margin, 4));
      row.push_back(c.within_bound ? "within" : "EXCEEDED");
      table.rows.push_back(row);
    }
    out << "\nConstraints (probability of violation; margin = clearance quantile at the bound, >= 0 is room)\n";
    std::string rendered = table.render();
    if (color) {
      // Colour the verdict word after alignment so column widths stay right.
      std::istringstream lines(rendered);
      std::string painted;
      for (std::string line; std::getline(lines, line);) {
        for (const auto& [word, code] : {std::pair{std::string("EXCEEDED"), kRed}, {std::string("within"), kGreen}})
          if (line.size() > word.size() && line.compare(line.size() - word.size(), word.size(), word) == 0) {
            line = line.substr(0, line.size() - word.size()) + paint(word, code, true);
            break;
          }
        painted += line + "\n";
      }
      rendered = painted;
    }
    out << rendered;

    out << "\nDetails\n";
    for (const auto& c : r.constraints) {
      out << "  " << c.name << " (" << (c.type.empty() ? kMissingValue : c.type) << ")";
      if (std::isfinite(c.window[0]) && std::isfinite(c.window[1]))
        out << ", window " << format_value(c.window[0]) << " to " << format_value(c.window[1]) << " s";
      out << "\n";
      if (!c.verdict.empty()) out << wrap(c.verdict, 78, "    ");
      out << "    worst time " << format_value(c.worst_time) << " s, worst pointwise P "
          << format_probability(c.worst_pointwise_probability) << ", required back-off "
          << format_value(c.required_backoff) << "\n";
      if (!std::isnan(c.tolerable_radius))
        out << "    tolerable radius " << format_value(c.tolerable_radius) << " (inflation "
            << format_value(c.radius_inflation) << ")\n";
      int gok = 0, gtot = 0, cok = 0, ctot = 0;
      window_flag_counts(c, r.time, c.gaussian_ok, &gok, &gtot);
      window_flag_counts(c, r.time, c.cantelli_ok, &cok, &ctot);
      if (gtot > 0 || ctot > 0)
        out << "    reformulations: Gaussian (mu - z*sigma >= 0) holds at " << gok << "/" << gtot
            << " window times, Cantelli (distribution-free) at " << cok << "/" << ctot << "\n";
      if (!c.reformulation_note.empty()) out << wrap(c.reformulation_note, 78, "    note: ");
      if (c.has_montecarlo) {
        out << "    Monte Carlo: " << c.montecarlo.path_violations << " path violations, agreement "
            << (c.agreement.empty() ? kMissingValue : c.agreement) << "\n";
        if (!c.agreement_cause.empty()) out << wrap(c.agreement_cause, 78, "      ");
        if (r.montecarlo.failed_runs > 0 && !std::isnan(c.montecarlo.path_interval_failures_safe[0]))
          out << "    failed runs are unknown: path P interval "
              << interval_text(c.montecarlo.path_interval_failures_safe[0], c.montecarlo.path_interval_failures_safe[1])
              << " if they were safe, "
              << interval_text(c.montecarlo.path_interval_failures_violating[0],
                               c.montecarlo.path_interval_failures_violating[1])
              << " if they were violations (the verdict uses the latter)\n";
      }
      if (c.importance_sampling.done) {
        const auto& is = c.importance_sampling;
        out << "    importance sampling: " << is.runs << " runs, P " << format_probability(is.probability) << " +/- "
            << format_probability(is.standard_error, 1) << ", ESS " << format_value(is.effective_sample_size, 4)
            << ", design point distance (beta) " << format_value(is.design_point_distance, 4) << "\n";
        if (is.design_point_distances.size() > 1 || is.defensive_share > 0.0) {
          out << "      proposal: " << is.design_point_distances.size() << " design point"
              << (is.design_point_distances.size() == 1 ? "" : "s") << " (beta";
          for (std::size_t k = 0; k < is.design_point_distances.size(); ++k)
            out << (k ? ", " : " ") << format_value(is.design_point_distances[k], 4);
          out << "), " << format_value(100 * is.defensive_share, 3) << "% defensive draws\n";
        }
        if (!std::isnan(is.coefficient_of_variation))
          out << "      CoV " << format_value(is.coefficient_of_variation, 3) << " (target "
              << format_value(is.cov_target, 3) << "): "
              << (is.converged ? "met; the estimate takes part in the verdict"
                               : "NOT met; no verdict from importance sampling")
              << "\n";
      }
    }
  }

  const MonteCarloResult& m = r.montecarlo;
  if (m.done) {
    out << "\nMonte Carlo cross-check\n";
    out << "  runs         " << m.runs << " (" << m.failed_runs << " failed), seed " << m.seed << ", confidence "
        << format_value(100 * m.confidence, 3) << "%\n";
    for (const auto& message : m.failure_messages) out << "  failed run   " << message << "\n";
    double worst = kNaN;
    const std::string name = worst_output(r, m.validation_relative_rmse, &worst);
    if (!std::isnan(worst)) {
      const Eigen::Index i = argmax_finite(m.validation_relative_rmse);
      out << "  validation   surrogate vs model RMSE, worst output " << name << ": "
          << format_value(i < m.validation_rmse.size() ? m.validation_rmse[i] : kNaN, 3) << " ("
          << format_value(100 * worst, 3) << "% of its std)\n";
    }
    if (!std::isnan(m.joint_path_probability))
      out << "  joint path P " << format_probability(m.joint_path_probability) << " "
          << interval_text(m.joint_path_interval[0], m.joint_path_interval[1]) << " (any constraint violated)\n";
    const std::string agreement = m.agreement.empty() ? std::string(kMissingValue) : m.agreement;
    out << "  agreement    "
        << paint(agreement,
                 m.agreement == "disagree" ? kRed
                 : m.agreement == "agree"  ? kGreen
                                           : kReset,
                 color)
        << "\n";
    const std::string& details = m.agreement_details.empty() ? m.agreement_cause : m.agreement_details;
    if (!details.empty()) out << "               " << indent_lines(details, "               ") << "\n";
  } else if (s.done) {
    out << "\n"
        << paint("No Monte Carlo cross-check was run: the surrogate numbers above are unconfirmed.", kYellow, color)
        << "\n";
  }

  const TubeResult& tube = r.tube;
  if (tube.done) {
    out << "\nDeterministic tube (worst case inside the input bounds, linearized loop)\n";
    std::string position;
    for (const auto& name : tube.position) position += (position.empty() ? "" : ", ") + name;
    const std::string unit = tube.units.empty() ? "" : " " + tube.units;
    out << "  position     " << position << "\n";
    out << "  metric       " << tube.metric_kind << "\n";
    if (tube.bounded && tube.radius.size() > 0)
      out << "  radius       " << format_value(tube.radius[0]) << unit << " at the start, "
          << format_value(tube.radius.maxCoeff()) << unit << " at most, rate >= "
          << format_value(tube.rate.minCoeff()) << " 1/s\n";
    else
      out << "  radius       " << tube.no_bound_reason << "\n";
    if (tube.runs_checked > 0)
      out << "  check        " << tube.runs_checked << " Monte Carlo runs, " << tube.exceedances
          << " (run, time) pairs above the bound; bound / largest deviation " << format_value(tube.conservatism)
          << "\n";
    for (const auto& a : tube.assumptions) out << "  assumes      " << a << "\n";
  }

  const int code = r.verdict_exit_code();
  out << "\n" << paint(exit_verdict_line(r), code == 0 ? kGreen : kRed, color) << "\n";
  out << "\n" << cautions_text() << "\n";
  return out.str();
}

}  // namespace sigmatube::result
