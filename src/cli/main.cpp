// SPDX-License-Identifier: MIT
// The sigmatube command line: a thin layer over the library. Exit codes
// (product.md §3): 0 within bounds / no regression, 1 a bound exceeded / a
// regression, 2 bad input or usage, 3 surrogate and Monte Carlo disagree,
// 4 numerical failure.
#include <CLI/CLI.hpp>

#include <cstdio>
#include <cstdlib>
#include <exception>
#include <filesystem>
#include <limits>
#include <fstream>
#include <iostream>
#include <optional>
#include <sstream>
#include <string>

#include "sigmatube/app/analysis.h"
#include "sigmatube/app/batch.h"
#include "sigmatube/app/case_loader.h"
#include "sigmatube/core/distributed.h"
#include "sigmatube/app/work_estimate.h"
#include "sigmatube/core/error.h"
#include "sigmatube/core/option_values.h"
#include "sigmatube/core/output_policy.h"
#include "sigmatube/result/compare.h"
#include "sigmatube/result/csv_export.h"
#include "sigmatube/result/html_report.h"
#include "sigmatube/result/json_summary.h"
#include "sigmatube/result/result_file.h"
#include "sigmatube/result/summary_text.h"

namespace {

using namespace sigmatube;

constexpr int kExitBadInput = 2;
constexpr int kExitNumerical = 4;

// Numeric options are taken as text and validated like case keys
// (core/option_values.h): no wrap-around, no NaN, a readable range.
constexpr long long kMaxThreads = 4096;
constexpr long long kMaxSeed = std::numeric_limits<long long>::max();  // as [montecarlo].seed, a TOML integer
constexpr long long kMaxCount = 1'000'000'000'000LL;                   // further bounded by [limits]

struct Common {
  std::string threads, seed, mc_runs;
  bool force = false;
  bool quiet = false;
  std::string json;
};

void add_common(CLI::App* command, Common& common, bool with_analysis) {
  command->add_option("--threads", common.threads, "worker threads (0 = all cores)");
  if (with_analysis) {
    command->add_option("--seed", common.seed, "Monte Carlo seed (overrides [montecarlo].seed)");
    command->add_option("--mc-runs", common.mc_runs, "Monte Carlo runs (0 disables the cross-check)");
  }
  command->add_flag("--force", common.force, "overwrite existing output files (never an input of the command)");
  command->add_flag("--quiet", common.quiet, "print nothing but errors");
  command->add_option("--json", common.json, "also write a machine-readable summary to FILE");
}

std::optional<long long> integer_option(const std::string& text, const std::string& option, long long low,
                                        long long high) {
  if (text.empty()) return std::nullopt;
  return parse_integer_option(text, option, low, high);
}

app::AnalysisOptions analysis_options(const Common& common) {
  app::AnalysisOptions options;
  options.threads = static_cast<int>(integer_option(common.threads, "--threads", 0, kMaxThreads).value_or(0));
  if (const auto seed = integer_option(common.seed, "--seed", 0, kMaxSeed))
    options.seed = static_cast<unsigned long long>(*seed);
  options.mc_runs = integer_option(common.mc_runs, "--mc-runs", 0, kMaxCount);
  options.progress = !common.quiet;
  return options;
}

// Notes stale temporaries (of processes no longer running) beside `path` on stderr.
void note_stale_temporaries(const std::string& path) {
  const std::filesystem::path p(path);
  std::cerr << stale_temporaries_note(p.has_parent_path() ? p.parent_path().string() : ".");
}

void say(const Common& common, const std::string& text) {
  if (!common.quiet) std::cout << text << std::flush;
}

std::string run_help_footer() {
  return "\nCAUTION\n" + result::cautions_text() +
         "\n\nExit codes: 0 every constraint within its bound, 1 a constraint exceeds its bound,\n"
         "2 bad input or usage, 3 surrogate and Monte Carlo disagree, 4 numerical failure.\n";
}

}  // namespace

int main(int argc, char** argv) {
  // muparser's bulk mode parallelizes with OpenMP; our own worker threads already
  // use every core, so nested OpenMP threads would only oversubscribe them.
  ::setenv("OMP_NUM_THREADS", "1", 0);
  // Under mpirun every rank runs this program; model runs are shared out inside
  // the library, and only rank 0 prints and writes files.
  const DistributedSession session(&argc, &argv);
  const bool leader = process_rank() == 0;
  CLI::App cli{"sigmatube: chance-constraint analysis of closed-loop trajectory plans by polynomial chaos,\n"
               "cross-checked with Monte Carlo."};
  cli.require_subcommand(1);
  cli.set_version_flag("--version", std::string(SIGMATUBE_VERSION));

  Common common;
  std::string case_path, output, csv_path, base_path, candidate_path, suite_path, directory, junit, budget;
  std::string plane_x, plane_y;
  std::string samples, max_increase, significance;

  auto* check = cli.add_subcommand("check", "Validate a case and say what it will compute; computes nothing.");
  check->add_option("CASE", case_path, "case file (TOML)")->required();
  check->add_flag("--quiet", common.quiet, "print nothing but errors");

  auto* simulate = cli.add_subcommand("simulate", "The nominal closed-loop run only.");
  simulate->add_option("CASE", case_path, "case file (TOML)")->required();
  simulate->add_option("-o,--output", output, "result file (HDF5)")->required();
  simulate->add_option("--csv", csv_path, "also write the nominal outputs as CSV");
  add_common(simulate, common, false);

  auto* run = cli.add_subcommand("run", "The whole analysis: surrogate, constraints, margins, Monte Carlo cross-check.");
  run->add_option("CASE", case_path, "case file (TOML)")->required();
  run->add_option("-o,--output", output, "result file (HDF5)")->required();
  run->add_option("--samples", samples, "surrogate samples for probabilities (overrides [surrogate].samples)");
  add_common(run, common, true);
  run->footer(run_help_footer());

  auto* show = cli.add_subcommand("show", "Print the summary of a result file.");
  show->add_option("RESULT", case_path, "result file (HDF5)")->required();
  show->add_option("--json", common.json, "also write a machine-readable summary to FILE");
  show->add_flag("--force", common.force, "overwrite existing output files (never an input of the command)");

  auto* compare = cli.add_subcommand("compare", "Release gate: risk and margin changes from BASE to CAND, pass or fail.");
  compare->add_option("BASE", base_path, "baseline result file")->required();
  compare->add_option("CAND", candidate_path, "candidate result file")->required();
  compare->add_option("--budget", budget, "budget TOML: bounds, allowed increase, minimum margin");
  compare->add_option("--max-increase", max_increase, "largest allowed absolute increase of a path probability");
  compare->add_option("--significance", significance, "one-sided significance level of the noise test");
  compare->add_option("--junit", junit, "write JUnit XML to FILE");
  add_common(compare, common, false);

  auto* batch = cli.add_subcommand("batch", "Run every case of a suite: one result each, one summary.");
  batch->add_option("SUITE", suite_path, "suite file (TOML)")->required();
  batch->add_option("-d,--directory", directory, "folder for the result files")->required();
  batch->add_option("--junit", junit, "write JUnit XML to FILE");
  batch->add_option("--samples", samples, "surrogate samples for probabilities (overrides the suite and cases)");
  add_common(batch, common, true);

  auto* report = cli.add_subcommand("report", "Write a self-contained HTML page with plots of a result.");
  report->add_option("RESULT", case_path, "result file (HDF5)")->required();
  report->add_option("-o,--output", output, "HTML file")->required();
  report->add_option("--plane", plane_x, "output on the horizontal axis of the path plot (e.g. y)");
  report->add_option("--plane-y", plane_y, "output on the vertical axis of the path plot (e.g. x)");
  report->add_flag("--force", common.force, "overwrite existing output files (never an input of the command)");

  auto* export_csv = cli.add_subcommand("export", "Write the time series of a result as CSV files into a folder.");
  export_csv->add_option("RESULT", case_path, "result file (HDF5)")->required();
  export_csv->add_option("-d,--directory", directory, "folder for the CSV files (created if missing)")->required();
  export_csv->add_flag("--force", common.force, "overwrite existing output files");
  export_csv->add_flag("--quiet", common.quiet, "print nothing but errors");

  try {
    cli.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    return cli.exit(e);
  } catch (const CLI::CallForAllHelp& e) {
    return cli.exit(e);
  } catch (const CLI::CallForVersion& e) {
    return cli.exit(e);
  } catch (const CLI::ParseError& e) {
    if (leader) std::cerr << "sigmatube: error: " << e.what() << " (see --help)\n";
    return kExitBadInput;
  }

  if (!leader) common.quiet = true;
  // `run` and `batch` share their model runs and samples over ranks; every other
  // command is done by rank 0 alone.
  if (!run->parsed() && !batch->parsed()) {
    if (!leader) return 0;
    use_single_process();
  }
  // Unfinished outputs of this process are removed on SIGINT/SIGTERM (exit 130/143).
  install_interrupt_cleanup();
  try {
    if (check->parsed()) {
      const app::LoadedCase loaded = app::load_case(case_path);
      say(common, app::describe_case(loaded));
      note_stale_temporaries(case_path);
      return 0;
    }
    if (simulate->parsed()) {
      (void)analysis_options(common);
      const app::LoadedCase loaded = app::load_case(case_path);
      OutputSet outputs(common.force);
      outputs.input(case_path, "CASE").input(loaded.options.plan.path, "plan.file");
      outputs.output(output, "-o").output(csv_path, "--csv").output(common.json, "--json");
      outputs.check();
      const result::AnalysisResult nominal = app::simulate_case(loaded);
      outputs.stage(output, [&](const std::string& temporary) { result::write_result_to(nominal, temporary); });
      if (!csv_path.empty()) outputs.stage_text(csv_path, result::nominal_csv(nominal));
      if (!common.json.empty()) outputs.stage_text(common.json, result::json_summary(nominal));
      outputs.commit();
      say(common, result::summary_text(nominal));
      say(common, "wrote " + output + "\n");
      return 0;
    }
    if (run->parsed()) {
      app::AnalysisOptions options = analysis_options(common);
      options.samples = integer_option(samples, "--samples", 1, kMaxCount);
      const app::LoadedCase loaded = app::load_case(case_path);
      app::enforce_limits(loaded, app::estimate_work(loaded, options.samples, options.mc_runs),
                          options.samples.has_value(), options.mc_runs.has_value());
      OutputSet outputs(common.force);
      outputs.input(case_path, "CASE").input(loaded.options.plan.path, "plan.file");
      outputs.output(output, "-o").output(common.json, "--json");
      if (leader) outputs.check();
      const result::AnalysisResult analysis = app::analyze_case(loaded, options);
      if (!leader) return analysis.verdict_exit_code();
      outputs.stage(output, [&](const std::string& temporary) { result::write_result_to(analysis, temporary); });
      if (!common.json.empty()) outputs.stage_text(common.json, result::json_summary(analysis));
      outputs.commit();
      say(common, result::summary_text(analysis));
      say(common, "wrote " + output + "\n");
      return analysis.verdict_exit_code();
    }
    if (show->parsed()) {
      OutputSet outputs(common.force);
      outputs.input(case_path, "RESULT").output(common.json, "--json");
      outputs.check();
      const result::AnalysisResult stored = result::read_result_file(case_path);
      note_stale_temporaries(case_path);
      if (!common.json.empty()) {
        outputs.stage_text(common.json, result::json_summary(stored));
        outputs.commit();
      }
      std::cout << result::summary_text(stored);
      return 0;
    }
    if (compare->parsed()) {
      OutputSet outputs(common.force);
      outputs.input(base_path, "BASE").input(candidate_path, "CAND").input(budget, "--budget");
      outputs.output(junit, "--junit").output(common.json, "--json");
      outputs.check();
      result::CompareOptions options = budget.empty() ? result::CompareOptions{} : result::read_budget(budget);
      if (!max_increase.empty())
        options.max_absolute_increase = parse_real_option(max_increase, "--max-increase", 0, 1, false, false);
      if (!significance.empty())
        options.significance = parse_real_option(significance, "--significance", 0, 1, true, true);
      const result::AnalysisResult base = result::read_result_file(base_path);
      const result::AnalysisResult candidate = result::read_result_file(candidate_path);
      for (const auto& [path, side] : {std::pair{&base_path, &base}, std::pair{&candidate_path, &candidate}})
        if (side->command == "simulate")
          throw InputError(SourceLocation{*path, 0, ""},
                           "is a result of `simulate` (nominal run only); compare needs results of `run`");
      const result::CompareReport gate = result::compare_results(base, candidate, options);
      if (!junit.empty()) outputs.stage_text(junit, result::compare_junit(gate, "sigmatube.compare"));
      if (!common.json.empty()) outputs.stage_text(common.json, result::compare_json(gate));
      outputs.commit();
      say(common, result::compare_text(gate));
      return gate.regression ? 1 : 0;
    }
    if (batch->parsed()) {
      app::BatchOptions options;
      options.analysis = analysis_options(common);
      options.analysis.samples = integer_option(samples, "--samples", 1, kMaxCount);
      options.directory = directory;
      options.force = common.force;
      options.junit_path = junit;
      options.json_path = common.json;
      options.quiet = common.quiet;
      return app::run_batch(suite_path, options);
    }
    if (report->parsed()) {
      OutputSet outputs(common.force);
      outputs.input(case_path, "RESULT").output(output, "-o");
      outputs.check();
      const result::AnalysisResult stored = result::read_result_file(case_path);
      result::ReportOptions options;
      options.plane_x = plane_x;
      options.plane_y = plane_y;
      outputs.stage_text(output, result::html_report(stored, options));
      outputs.commit();
      say(common, "wrote " + output + "\n");
      return 0;
    }
    if (export_csv->parsed()) {
      const result::AnalysisResult stored = result::read_result_file(case_path);
      for (const auto& path : result::write_csv_export(stored, directory, case_path, common.force))
        say(common, "wrote " + path + "\n");
      return 0;
    }
  } catch (const InputError& e) {
    if (leader) std::cerr << "sigmatube: error: " << e.what() << '\n';
    return kExitBadInput;
  } catch (const NumericalError& e) {
    if (leader) std::cerr << "sigmatube: numerical failure: " << e.what() << '\n';
    return kExitNumerical;
  } catch (const std::exception& e) {
    if (leader) std::cerr << "sigmatube: internal error: " << e.what() << '\n';
    return kExitNumerical;
  }
  return kExitBadInput;
}
