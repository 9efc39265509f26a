// SPDX-License-Identifier: MIT
#include "sigmatube/app/batch.h"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <exception>
#include <filesystem>
#include <iostream>
#include <sstream>
#include <string>
#include <vector>

#include "sigmatube/app/case_loader.h"
#include "sigmatube/casefile/suite_reader.h"
#include "sigmatube/app/work_estimate.h"
#include "sigmatube/core/distributed.h"
#include "sigmatube/core/error.h"
#include "sigmatube/core/output_policy.h"
#include "sigmatube/result/junit.h"
#include "sigmatube/result/json_summary.h"
#include "sigmatube/result/markup_escape.h"
#include "sigmatube/result/number_format.h"
#include "sigmatube/result/result_file.h"
#include "sigmatube/result/summary_text.h"
#include "sigmatube/result/text_table.h"

namespace sigmatube::app {
namespace {

namespace fs = std::filesystem;

constexpr int kExitBadInput = 2;
constexpr int kExitNumerical = 4;

/// Severity of an exit code for the batch total, in the order of batch.h:
/// 2 > 4 > 3 > 1 > 0 (bad input first: nothing about such a case is known).
int severity(int exit_code) {
  switch (exit_code) {
    case 0: return 0;
    case 1: return 1;
    case 3: return 2;
    case 4: return 3;
    default: return 4;
  }
}

struct CaseOutcome {
  std::string name;
  std::string case_path;
  std::string result_path;
  int exit_code = 0;
  bool ran = false;           // analysis finished and the result file was written
  std::string error_kind;     // "bad input" | "numerical failure" | "internal error"
  std::string error_message;  // one line
  double seconds = 0.0;
  result::AnalysisResult analysis;  // valid when ran
};

/// Short per-constraint verdict for the table and JUnit: the trust problem
/// first, then the bound.
std::string constraint_verdict(const result::ConstraintResult& c) {
  if (c.agreement == "disagree") return "disagree";
  return c.within_bound ? "within" : "EXCEEDED";
}

std::string one_line(std::string text) {
  for (char& ch : text)
    if (ch == '\n' || ch == '\r') ch = ' ';
  return text;
}

// The suite and every case and plan file it names are inputs of the batch.
void declare_inputs(OutputSet& outputs, const casefile::SuiteOptions& suite) {
  outputs.input(suite.path, "SUITE");
  for (const auto& c : suite.cases) {
    outputs.input(c.path, "case " + c.name);
    outputs.input(c.plan_path, "plan of case " + c.name);
  }
}

CaseOutcome run_one(const casefile::SuiteOptions& suite, std::size_t index, const BatchOptions& options) {
  CaseOutcome out;
  const casefile::SuiteCase& entry = suite.cases[index];
  out.name = entry.name;
  out.case_path = entry.path;
  out.result_path = (fs::path(options.directory) / (entry.name + ".h5")).string();
  const auto start = std::chrono::steady_clock::now();
  try {
    const LoadedCase loaded = load_case(casefile::read_suite_case(suite, index));
    AnalysisOptions analysis = options.analysis;
    if (options.quiet) analysis.progress = false;
    enforce_limits(loaded, estimate_work(loaded, analysis.samples, analysis.mc_runs), analysis.samples.has_value(),
                   analysis.mc_runs.has_value());
    // Before any computation, so that a refused output costs nothing: the
    // result is none of the suite's inputs (core/output_policy.h).
    OutputSet outputs(options.force);
    declare_inputs(outputs, suite);
    outputs.input(loaded.options.plan.path, "plan.file");
    outputs.output(out.result_path, "-d");
    outputs.check();
    out.analysis = analyze_case(loaded, analysis);
    // Under MPI every rank takes part in every case (its runs and samples are
    // shared out); rank 0 alone writes.
    if (process_rank() == 0) {
      outputs.stage(out.result_path,
                    [&](const std::string& temporary) { result::write_result_to(out.analysis, temporary); });
      outputs.commit();
    }
    out.ran = true;
    out.exit_code = out.analysis.verdict_exit_code();
  } catch (const InputError& e) {
    out.exit_code = kExitBadInput;
    out.error_kind = "bad input";
    out.error_message = one_line(e.what());
  } catch (const NumericalError& e) {
    out.exit_code = kExitNumerical;
    out.error_kind = "numerical failure";
    out.error_message = one_line(e.what());
  } catch (const std::exception& e) {
    // An internal error is reported like a numerical failure (as `run` does):
    // the case was well formed but could not be computed.
    out.exit_code = kExitNumerical;
    out.error_kind = "internal error";
    out.error_message = one_line(e.what());
  }
  out.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return out;
}

std::string summary_table(const casefile::SuiteOptions& suite, const std::vector<CaseOutcome>& outcomes, int total) {
  result::TextTable table;
  table.header = {"case", "exit", "constraint", "scope", "bound", "P surrogate", "P Monte Carlo", "verdict", "time [s]"};
  table.right_aligned = {false, true, false, false, true, true, true, false, true};
  for (const auto& o : outcomes) {
    const std::string exit_text = std::to_string(o.exit_code);
    const std::string time_text = result::format_fixed(o.seconds, 1);
    if (!o.ran) {
      table.rows.push_back({o.name, exit_text, result::kMissingValue, "", "", "", "", o.error_kind, time_text});
      continue;
    }
    if (o.analysis.constraints.empty()) {
      table.rows.push_back({o.name, exit_text, "(no constraints)", "", "", "", "", "", time_text});
      continue;
    }
    bool first = true;
    for (const auto& c : o.analysis.constraints) {
      table.rows.push_back({first ? o.name : "", first ? exit_text : "", c.name, c.scope,
                            result::format_probability(c.max_probability),
                            result::format_probability(result::surrogate_gate_probability(c)),
                            result::format_probability(result::montecarlo_gate_probability(c)), constraint_verdict(c),
                            first ? time_text : ""});
      first = false;
    }
  }
  std::ostringstream out;
  out << "\nbatch summary" << (suite.title.empty() ? "" : ": " + suite.title) << "\n" << table.render();
  out << "  P: path probability for scope \"path\", largest pointwise probability for \"pointwise\".\n";
  bool any_error = false;
  for (const auto& o : outcomes)
    if (!o.ran) {
      if (!any_error) out << "\nfailed cases\n";
      any_error = true;
      out << "  " << o.name << " (exit " << o.exit_code << ", " << o.error_kind << "): " << o.error_message << "\n";
    }
  int counts[5] = {0, 0, 0, 0, 0};
  for (const auto& o : outcomes)
    if (o.exit_code >= 0 && o.exit_code <= 4) ++counts[o.exit_code];
  out << "\n" << outcomes.size() << " cases: " << counts[0] << " within bounds, " << counts[1] << " bound exceeded, "
      << counts[3] << " disagreement, " << counts[4] << " numerical failure, " << counts[2] << " bad input\n";
  out << "exit " << total << "\n";
  return out.str();
}

std::string junit(const casefile::SuiteOptions& suite, const std::vector<CaseOutcome>& outcomes) {
  std::vector<result::JUnitCase> cases;
  for (const auto& o : outcomes) {
    if (!o.ran) {
      result::JUnitCase j;
      j.classname = o.name;
      j.name = "analysis";
      j.time_in_seconds = o.seconds;
      j.error = true;
      j.error_message = o.error_kind + " (exit " + std::to_string(o.exit_code) + ")";
      j.error_text = o.error_message;
      cases.push_back(std::move(j));
      continue;
    }
    // Each case's time is shared among its constraints so that the suite total is right.
    const double share = o.seconds / static_cast<double>(std::max<std::size_t>(1, o.analysis.constraints.size()));
    for (const auto& c : o.analysis.constraints) {
      result::JUnitCase j;
      j.classname = o.name;
      j.name = c.name;
      j.time_in_seconds = share;
      const std::string verdict = constraint_verdict(c);
      if (verdict != "within") {
        j.failed = true;
        j.failure_type = verdict == "disagree" ? "disagreement" : "bound-exceeded";
        j.failure_message = c.name + ": P = " + result::format_probability(result::surrogate_gate_probability(c)) +
                            " (bound " + result::format_probability(c.max_probability) + "), " + verdict;
        j.failure_text = c.verdict + (c.agreement_cause.empty() ? "" : "\n" + c.agreement_cause);
      }
      j.system_out = c.verdict;
      cases.push_back(std::move(j));
    }
  }
  return result::junit_xml(cases, suite.title.empty() ? "sigmatube.batch" : suite.title);
}

std::string json(const casefile::SuiteOptions& suite, const std::vector<CaseOutcome>& outcomes, int total) {
  std::ostringstream o;
  o << "{\n  \"format\": \"sigmatube-batch\",\n  \"version\": 1,\n";
  o << "  \"suite\": " << result::json_string(suite.path) << ",\n";
  o << "  \"title\": " << result::json_string(suite.title) << ",\n";
  o << "  \"exit_code\": " << total << ",\n  \"cases\": [";
  for (std::size_t i = 0; i < outcomes.size(); ++i) {
    const auto& c = outcomes[i];
    o << (i ? "," : "") << "\n    {\"name\": " << result::json_string(c.name)
      << ", \"case_path\": " << result::json_string(c.case_path)
      << ", \"result_path\": " << (c.ran ? result::json_string(c.result_path) : "null")
      << ", \"exit_code\": " << c.exit_code << ", \"seconds\": " << result::json_number(c.seconds)
      << ", \"error\": " << (c.ran ? "null" : "{\"kind\": " + result::json_string(c.error_kind) +
                                                  ", \"message\": " + result::json_string(c.error_message) + "}")
      << ", \"summary\": " << (c.ran ? result::json_summary(c.analysis) : "null") << "}";
  }
  o << "\n  ]\n}\n";
  return o.str();
}

}  // namespace

int run_batch(const std::string& suite_path, const BatchOptions& options) {
  if (options.directory.empty()) throw InputError(SourceLocation{"", 0, "-d"}, "a result folder is required");
  const casefile::SuiteOptions suite = casefile::read_suite(suite_path);
  std::error_code ec;
  fs::create_directories(options.directory, ec);
  if (ec || !fs::is_directory(options.directory))
    throw InputError(SourceLocation{"", 0, "-d"}, "cannot create the result folder " + options.directory);
  // Side outputs are checked up front so that a long batch is not lost at the
  // end: neither may be an input or the result of a case.
  OutputSet side(options.force);
  declare_inputs(side, suite);
  for (const auto& c : suite.cases) side.input((fs::path(options.directory) / (c.name + ".h5")).string(), "result of case " + c.name);
  side.output(options.junit_path, "--junit").output(options.json_path, "--json");
  side.check();

  std::vector<CaseOutcome> outcomes;
  int total = 0;
  for (std::size_t i = 0; i < suite.cases.size(); ++i) {
    if (!options.quiet)
      std::cout << "[" << i + 1 << "/" << suite.cases.size() << "] " << suite.cases[i].name << " ("
                << suite.cases[i].file << ")\n"
                << std::flush;
    CaseOutcome outcome = run_one(suite, i, options);
    if (!outcome.ran) {
      if (process_rank() == 0)
        std::cerr << "sigmatube: case " << outcome.name << ": " << outcome.error_kind << ": " << outcome.error_message
                  << '\n';
    } else if (!options.quiet && process_rank() == 0)
      std::cout << "      exit " << outcome.exit_code << ", " << result::format_fixed(outcome.seconds, 1)
                << " s, wrote " << outcome.result_path << "\n"
                << std::flush;
    if (severity(outcome.exit_code) > severity(total)) total = outcome.exit_code;
    outcomes.push_back(std::move(outcome));
  }

  if (!options.quiet) std::cout << summary_table(suite, outcomes, total) << std::flush;
  if (process_rank() != 0) return total;
  if (!options.junit_path.empty()) side.stage_text(options.junit_path, junit(suite, outcomes));
  if (!options.json_path.empty()) side.stage_text(options.json_path, json(suite, outcomes, total));
  side.commit();
  return total;
}

}  // namespace sigmatube::app
