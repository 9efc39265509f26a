// SPDX-License-Identifier: MIT
#include "sigmatube/result/compare.h"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <sstream>

#include <toml++/toml.h>

#include "sigmatube/core/error.h"
#include "sigmatube/result/junit.h"
#include "sigmatube/result/markup_escape.h"
#include "sigmatube/result/number_format.h"
#include "sigmatube/result/proportion_test.h"
#include "sigmatube/result/summary_text.h"
#include "sigmatube/result/text_table.h"
#include "sigmatube/core/output_policy.h"

namespace sigmatube::result {
namespace {

// ------------------------------------------------------------ budget file

int line_of(const toml::node& node) { return static_cast<int>(node.source().begin.line); }

double number_value(const std::string& path, const std::string& key, const toml::node& node) {
  if (auto v = node.value<double>()) return *v;  // integers convert too
  throw InputError(SourceLocation{path, line_of(node), key}, "expected a number");
}

double checked_value(const std::string& path, const std::string& key, const toml::node& node, double lo, double hi,
                     bool open_lo) {
  const double v = number_value(path, key, node);
  const bool ok = std::isfinite(v) && (open_lo ? v > lo : v >= lo) && v <= hi;
  if (!ok)
    throw InputError(SourceLocation{path, line_of(node), key}, "value " + format_value(v, 6) + " out of range " +
                                                                   (open_lo ? "(" : "[") + format_value(lo) + ", " +
                                                                   format_value(hi) + "]");
  return v;
}

const toml::table& as_table(const std::string& path, const std::string& key, const toml::node& node) {
  if (const auto* t = node.as_table()) return *t;
  throw InputError(SourceLocation{path, line_of(node), key}, "expected a table");
}

[[noreturn]] void unknown_key(const std::string& path, const std::string& key, const toml::node& node,
                              const std::string& valid) {
  throw InputError(SourceLocation{path, line_of(node), key}, "unknown key (valid here: " + valid + ")");
}

constexpr double kHuge = 1e300;

// ------------------------------------------------------------ comparison

std::string label_of(const AnalysisResult& r, const char* fallback) {
  if (!r.title.empty()) return r.title;
  if (!r.case_path.empty()) return r.case_path;
  return fallback;
}

Eigen::Index argmax_finite(const Eigen::VectorXd& v) {
  Eigen::Index best = -1;
  for (Eigen::Index i = 0; i < v.size(); ++i)
    if (!std::isnan(v[i]) && (best < 0 || v[i] > v[best])) best = i;
  return best;
}

double lookup(const std::map<std::string, double>& m, const std::string& name, double fallback) {
  const auto it = m.find(name);
  return it == m.end() ? fallback : it->second;
}

// Violation count of the gate probability in the Monte Carlo sample.
long long montecarlo_count(const ConstraintResult& c, long long runs) {
  if (c.scope == "path") return c.montecarlo.path_violations;
  const Eigen::Index i = argmax_finite(c.montecarlo.pointwise_probability);
  return i < 0 ? 0 : std::llround(c.montecarlo.pointwise_probability[i] * double(runs));
}

bool montecarlo_usable(const AnalysisResult& r, const ConstraintResult& c) {
  return r.montecarlo.done && c.has_montecarlo && r.montecarlo.runs - r.montecarlo.failed_runs > 0 &&
         !std::isnan(montecarlo_gate_probability(c));
}

const ConstraintResult* find(const AnalysisResult& r, const std::string& name) {
  for (const auto& c : r.constraints)
    if (c.name == name) return &c;
  return nullptr;
}

void fill_side(const ConstraintResult& c, double* path, double* worst, double* margin) {
  *path = c.path_probability;
  *worst = c.worst_pointwise_probability;
  *margin = c.margin;
}

}  // namespace

void CompareOptions::validate() const {
  auto nonnegative = [](const std::string& key, double v) {
    if (!(v >= 0) || std::isinf(v))
      throw InputError(SourceLocation{"", 0, key}, "must be a finite number >= 0, got " + format_value(v, 6));
  };
  nonnegative("max_increase_ratio", max_increase_ratio);
  nonnegative("max_increase", max_absolute_increase);
  if (!(significance > 0 && significance < 1))
    throw InputError(SourceLocation{"", 0, "significance"}, "must lie in (0, 1), got " + format_value(significance, 6));
  for (const auto& [name, v] : max_increase_ratio_override)
    nonnegative("constraint." + name + ".max_increase_ratio", v);
  for (const auto& [name, v] : max_absolute_increase_override) nonnegative("constraint." + name + ".max_increase", v);
  for (const auto& [name, v] : max_probability_override)
    if (!(v >= 0 && v <= 1))
      throw InputError(SourceLocation{"", 0, "constraint." + name + ".max_probability"},
                       "must lie in [0, 1], got " + format_value(v, 6));
}

CompareOptions read_budget(const std::string& path) {
  const std::string problem = input_file_problem(path);
  if (problem == "no such file") throw InputError(SourceLocation{path, 0, ""}, "no such budget file");
  if (!problem.empty()) throw InputError(SourceLocation{path, 0, ""}, "budget file " + problem);
  toml::table root;
  try {
    root = toml::parse_file(path);
  } catch (const toml::parse_error& e) {
    throw InputError(SourceLocation{path, static_cast<int>(e.source().begin.line), ""}, std::string(e.description()));
  }
  CompareOptions o;
  o.source = path;
  for (auto&& [key, node] : root) {
    const std::string k(key.str());
    if (k == "defaults") {
      for (auto&& [dkey, value] : as_table(path, k, node)) {
        const std::string d(dkey.str());
        const std::string dotted = "defaults." + d;
        if (d == "max_increase")
          o.max_absolute_increase = checked_value(path, dotted, value, 0, 1, false);
        else if (d == "max_increase_ratio")
          o.max_increase_ratio = checked_value(path, dotted, value, 0, kHuge, false);
        else if (d == "significance")
          o.significance = checked_value(path, dotted, value, 0, 1, true);
        else if (d == "min_margin")
          o.min_margin = checked_value(path, dotted, value, -kHuge, kHuge, false);
        else
          unknown_key(path, dotted, value, "max_increase, max_increase_ratio, significance, min_margin");
      }
    } else if (k == "constraint") {
      for (auto&& [ckey, cnode] : as_table(path, k, node)) {
        const std::string name(ckey.str());
        for (auto&& [fkey, value] : as_table(path, "constraint." + name, cnode)) {
          const std::string f(fkey.str());
          const std::string dotted = "constraint." + name + "." + f;
          if (f == "max_probability")
            o.max_probability_override[name] = checked_value(path, dotted, value, 0, 1, false);
          else if (f == "max_increase")
            o.max_absolute_increase_override[name] = checked_value(path, dotted, value, 0, 1, false);
          else if (f == "max_increase_ratio")
            o.max_increase_ratio_override[name] = checked_value(path, dotted, value, 0, kHuge, false);
          else if (f == "min_margin")
            o.min_margin_override[name] = checked_value(path, dotted, value, -kHuge, kHuge, false);
          else
            unknown_key(path, dotted, value, "max_probability, max_increase, max_increase_ratio, min_margin");
        }
      }
    } else {
      unknown_key(path, k, node, "[defaults], [constraint.<name>]");
    }
  }
  if (!(o.significance > 0 && o.significance < 1))
    throw InputError(SourceLocation{path, 0, "defaults.significance"}, "must lie in (0, 1)");
  return o;
}

// Every [constraint.<name>] entry of a budget must name a constraint of the
// base or the candidate: a misspelt name would otherwise be ignored.
void check_budget_names(const CompareOptions& o, const AnalysisResult& base, const AnalysisResult& candidate) {
  std::vector<std::string> known;
  for (const auto* r : {&base, &candidate})
    for (const auto& c : r->constraints)
      if (std::find(known.begin(), known.end(), c.name) == known.end()) known.push_back(c.name);
  for (const auto* entries : {&o.max_probability_override, &o.max_increase_ratio_override,
                              &o.max_absolute_increase_override, &o.min_margin_override})
    for (const auto& [name, value] : *entries) {
      if (std::find(known.begin(), known.end(), name) != known.end()) continue;
      std::string list;
      for (const auto& k : known) list += (list.empty() ? "" : ", ") + k;
      throw InputError(SourceLocation{o.source, 0, "constraint." + name},
                       "no constraint '" + name + "' in the base or the candidate result (they have: " +
                           (list.empty() ? std::string("none") : list) + ")");
    }
}

CompareReport compare_results(const AnalysisResult& base, const AnalysisResult& candidate, const CompareOptions& o) {
  o.validate();
  check_budget_names(o, base, candidate);
  CompareReport report;
  report.base_label = label_of(base, "base");
  report.candidate_label = label_of(candidate, "candidate");
  report.base_sha256 = base.case_sha256;
  report.candidate_sha256 = candidate.case_sha256;
  report.base_inputs_sha256 = base.inputs_sha256;
  report.candidate_inputs_sha256 = candidate.inputs_sha256;
  report.same_inputs = !base.inputs_sha256.empty() && base.inputs_sha256 == candidate.inputs_sha256;
  report.significance = o.significance;

  std::vector<std::string> names;
  for (const auto& c : base.constraints) names.push_back(c.name);
  for (const auto& c : candidate.constraints)
    if (!find(base, c.name)) names.push_back(c.name);

  for (const auto& name : names) {
    CompareRow row;
    row.name = name;
    const ConstraintResult* b = find(base, name);
    const ConstraintResult* c = find(candidate, name);
    row.in_base = b != nullptr;
    row.in_candidate = c != nullptr;
    row.scope = c ? c->scope : b->scope;
    if (b) fill_side(*b, &row.base_path_probability, &row.base_worst_pointwise_probability, &row.base_margin);
    if (c)
      fill_side(*c, &row.candidate_path_probability, &row.candidate_worst_pointwise_probability, &row.candidate_margin);

    if (!c) {
      row.regression = true;
      row.reasons.push_back("missing in the candidate");
      report.rows.push_back(row);
      report.regression = true;
      continue;
    }

    // Monte Carlo numbers when every side present has them (a new constraint
    // has only the candidate side); never a mix of estimators.
    const bool use_mc = montecarlo_usable(candidate, *c) && (!b || montecarlo_usable(base, *b));
    if (use_mc) {
      row.source = "monte-carlo";
      row.base_runs = base.montecarlo.runs - base.montecarlo.failed_runs;
      row.candidate_runs = candidate.montecarlo.runs - candidate.montecarlo.failed_runs;
      row.candidate_count = montecarlo_count(*c, row.candidate_runs);
      if (b) {
        row.base_count = montecarlo_count(*b, row.base_runs);
        row.base_probability = double(row.base_count) / double(row.base_runs);
      } else {
        row.base_runs = 0;
      }
      row.candidate_probability = double(row.candidate_count) / double(row.candidate_runs);
    } else {
      row.candidate_probability = surrogate_gate_probability(*c);
      if (b) row.base_probability = surrogate_gate_probability(*b);
      row.source = std::isnan(row.candidate_probability) ? "" : "surrogate";
    }

    row.bound = lookup(o.max_probability_override, name, c->max_probability);
    row.min_margin = lookup(o.min_margin_override, name, o.min_margin);

    if (b && !std::isnan(row.base_probability) && !std::isnan(row.candidate_probability)) {
      row.increase = row.candidate_probability - row.base_probability;
      row.allowed_increase =
          std::max(lookup(o.max_absolute_increase_override, name, o.max_absolute_increase),
                   lookup(o.max_increase_ratio_override, name, o.max_increase_ratio) * row.base_probability);
      const ProportionTest t =
          use_mc ? one_sided_increase_test(row.base_count, row.base_runs, row.candidate_count, row.candidate_runs)
                 : normal_difference_test(row.base_probability, surrogate_gate_standard_error(*b),
                                          row.candidate_probability, surrogate_gate_standard_error(*c));
      row.test = t.method;
      row.z = t.z;
      row.p_value = t.p_value;
      row.significant = t.p_value < o.significance;
      if (row.significant && row.increase > row.allowed_increase)
        row.reasons.push_back("probability rose by " + format_probability(row.increase) + " (allowed " +
                              format_probability(row.allowed_increase) + ", one-sided p-value " +
                              format_probability(row.p_value) + ")");
    }
    if (!std::isnan(row.candidate_probability) && !std::isnan(row.bound) && row.candidate_probability > row.bound)
      row.reasons.push_back("probability " + format_probability(row.candidate_probability) + " exceeds bound " +
                            format_probability(row.bound) +
                            (row.base_probability > row.bound ? " (the base exceeded it too)" : ""));
    if (!std::isnan(row.min_margin) && !std::isnan(row.candidate_margin) && row.candidate_margin < row.min_margin)
      row.reasons.push_back("margin " + format_value(row.candidate_margin) + " below required " +
                            format_value(row.min_margin));
    row.regression = !row.reasons.empty();
    report.regression = report.regression || row.regression;
    report.rows.push_back(row);
  }
  return report;
}

namespace {

std::string row_verdict(const CompareRow& r) {
  if (r.regression) return "REGRESSION";
  if (!r.in_base) return "new";
  if (r.source.empty()) return "not compared";
  return "pass";
}

}  // namespace

std::string compare_text(const CompareReport& report) {
  std::ostringstream out;
  out << "release gate: " << report.base_label << " -> " << report.candidate_label << "\n";
  if (!report.base_sha256.empty() || !report.candidate_sha256.empty())
    out << "  base case sha256       " << (report.base_sha256.empty() ? kMissingValue : report.base_sha256) << "\n"
        << "  candidate case sha256  " << (report.candidate_sha256.empty() ? kMissingValue : report.candidate_sha256)
        << "\n";
  if (!report.base_inputs_sha256.empty() || !report.candidate_inputs_sha256.empty())
    out << "  base inputs sha256     "
        << (report.base_inputs_sha256.empty() ? kMissingValue : report.base_inputs_sha256) << "\n"
        << "  cand. inputs sha256    "
        << (report.candidate_inputs_sha256.empty() ? kMissingValue : report.candidate_inputs_sha256) << "\n";
  if (report.same_inputs)
    out << "  WARNING: base and candidate have the same inputs (case, plan and overrides); any change\n"
           "  below comes from the seed or the run sizes alone, not from a new plan\n";
  out << "  one-sided significance " << format_value(report.significance) << "\n\n";
  TextTable table;
  table.header = {"constraint", "from",    "base P",      "candidate P",  "change", "allowed",
                  "test",       "p-value", "base margin", "cand. margin", "verdict"};
  table.right_aligned = {false, false, true, true, true, true, false, true, true, true, false};
  for (const auto& r : report.rows) {
    auto probability_with_count = [](double p, long long k, long long n) {
      return k >= 0 ? format_probability(p) + " (" + std::to_string(k) + "/" + std::to_string(n) + ")"
                    : format_probability(p);
    };
    std::string change = format_probability(r.increase);
    if (!std::isnan(r.increase) && r.increase > 0) change = "+" + change;
    table.rows.push_back({r.name, r.source.empty() ? kMissingValue : r.source,
                          probability_with_count(r.base_probability, r.base_count, r.base_runs),
                          probability_with_count(r.candidate_probability, r.candidate_count, r.candidate_runs), change,
                          format_probability(r.allowed_increase), r.test.empty() ? kMissingValue : r.test,
                          format_probability(r.p_value), format_value(r.base_margin), format_value(r.candidate_margin),
                          row_verdict(r)});
  }
  out << table.render();
  std::size_t regressed = 0;
  for (const auto& r : report.rows) {
    if (!r.regression) continue;
    ++regressed;
    std::string why;
    for (const auto& reason : r.reasons) why += (why.empty() ? "" : "; ") + reason;
    out << "REGRESSION " << r.name << ": " << why << "\n";
  }
  out << (report.regression ? "release gate: REGRESSION (" + std::to_string(regressed) + " constraint" +
                                  (regressed == 1 ? "" : "s") + ")"
                            : std::string("release gate: pass"))
      << "\n";
  return out.str();
}

std::string compare_junit(const CompareReport& report, const std::string& suite_name) {
  std::vector<JUnitCase> cases;
  for (const auto& r : report.rows) {
    JUnitCase c;
    c.classname = report.candidate_label;
    c.name = r.name;
    c.failed = r.regression;
    std::string why;
    for (const auto& reason : r.reasons) why += (why.empty() ? "" : "; ") + reason;
    c.failure_message = r.name + ": " + why;
    std::ostringstream detail;
    detail << "base " << report.base_label << ", candidate " << report.candidate_label << "\n"
           << "probability (" << (r.source.empty() ? "none" : r.source)
           << "): " << format_probability(r.base_probability) << " -> " << format_probability(r.candidate_probability)
           << ", bound " << format_probability(r.bound) << "\n"
           << "test " << (r.test.empty() ? kMissingValue : r.test) << ", one-sided p-value "
           << format_probability(r.p_value) << "\n"
           << "margin " << format_value(r.base_margin) << " -> " << format_value(r.candidate_margin) << "\n";
    if (r.regression)
      c.failure_text = detail.str();
    else
      c.system_out = detail.str();
    cases.push_back(c);
  }
  return junit_xml(cases, suite_name);
}

std::string compare_json(const CompareReport& report) {
  std::ostringstream o;
  o << "{\n  \"format\": \"sigmatube-compare\",\n  \"version\": 1,\n";
  o << "  \"base\": {\"label\": " << json_string(report.base_label)
    << ", \"case_sha256\": " << json_string(report.base_sha256)
    << ", \"inputs_sha256\": " << json_string(report.base_inputs_sha256) << "},\n";
  o << "  \"candidate\": {\"label\": " << json_string(report.candidate_label)
    << ", \"case_sha256\": " << json_string(report.candidate_sha256)
    << ", \"inputs_sha256\": " << json_string(report.candidate_inputs_sha256) << "},\n";
  o << "  \"same_inputs\": " << (report.same_inputs ? "true" : "false") << ",\n";
  o << "  \"significance\": " << json_number(report.significance) << ",\n";
  o << "  \"regression\": " << (report.regression ? "true" : "false") << ",\n";
  o << "  \"exit_code\": " << (report.regression ? 1 : 0) << ",\n";
  o << "  \"constraints\": [";
  for (std::size_t k = 0; k < report.rows.size(); ++k) {
    const CompareRow& r = report.rows[k];
    o << (k ? ",\n" : "\n") << "    {";
    o << "\"name\": " << json_string(r.name) << ", \"in_base\": " << (r.in_base ? "true" : "false")
      << ", \"in_candidate\": " << (r.in_candidate ? "true" : "false") << ", \"scope\": " << json_string(r.scope)
      << ", \"source\": " << json_string(r.source)
      << ",\n      \"base_path_probability\": " << json_number(r.base_path_probability)
      << ", \"candidate_path_probability\": " << json_number(r.candidate_path_probability)
      << ",\n      \"base_worst_pointwise_probability\": " << json_number(r.base_worst_pointwise_probability)
      << ", \"candidate_worst_pointwise_probability\": " << json_number(r.candidate_worst_pointwise_probability)
      << ",\n      \"base_margin\": " << json_number(r.base_margin)
      << ", \"candidate_margin\": " << json_number(r.candidate_margin)
      << ",\n      \"base_probability\": " << json_number(r.base_probability)
      << ", \"candidate_probability\": " << json_number(r.candidate_probability)
      << ", \"base_count\": " << (r.base_count >= 0 ? std::to_string(r.base_count) : "null")
      << ", \"base_runs\": " << r.base_runs
      << ", \"candidate_count\": " << (r.candidate_count >= 0 ? std::to_string(r.candidate_count) : "null")
      << ", \"candidate_runs\": " << r.candidate_runs << ",\n      \"increase\": " << json_number(r.increase)
      << ", \"allowed_increase\": " << json_number(r.allowed_increase) << ", \"bound\": " << json_number(r.bound)
      << ", \"min_margin\": " << json_number(r.min_margin) << ", \"test\": " << json_string(r.test)
      << ", \"z\": " << json_number(r.z) << ", \"p_value\": " << json_number(r.p_value)
      << ", \"significant\": " << (r.significant ? "true" : "false")
      << ",\n      \"regression\": " << (r.regression ? "true" : "false") << ", \"reasons\": [";
    for (std::size_t i = 0; i < r.reasons.size(); ++i) o << (i ? ", " : "") << json_string(r.reasons[i]);
    o << "]}";
  }
  o << (report.rows.empty() ? "]\n" : "\n  ]\n") << "}\n";
  return o.str();
}

}  // namespace sigmatube::result
