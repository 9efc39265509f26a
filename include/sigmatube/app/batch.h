// SPDX-License-Identifier: MIT
#pragma once
// `sigmatube batch`: every case of a suite (casefile/suite_reader.h), one result
// file each, one summary table and JUnit XML. A failing case never stops the
// others; it is reported with its error.
#include <string>

#include "sigmatube/app/analysis.h"

// Layer app/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::app {

struct BatchOptions {
  AnalysisOptions analysis;
  std::string directory;   // result files go here as <case name>.h5
  bool force = false;
  std::string junit_path;  // optional
  std::string json_path;   // optional
  bool quiet = false;
};

/// Runs the suite and returns the exit code: 0 all cases within bounds, 1 a
/// bound exceeded, 3 a disagreement, 4 a case failed numerically, 2 a case
/// had bad input (the worst of these, in the order 2 > 4 > 3 > 1 > 0).
///
/// Per case: read_suite_case → load_case → analyze_case → DIR/<name>.h5. A case
/// that throws is reported (stderr, the summary table, a JUnit <error>) with its
/// exit class (InputError 2, NumericalError or anything else 4) and the next
/// case runs. An existing result file without `force` is a bad-input case.
/// Unless quiet, prints one summary table (case, exit, per constraint: bound,
/// surrogate and Monte Carlo probability, verdict; time) to stdout.
/// JUnit: one <testcase> per case × constraint (classname = case, name =
/// constraint; a <failure> when the bound is exceeded or the cross-check
/// disagrees), one <testcase name="analysis"> with an <error> per failed case.
/// JSON: {"format": "sigmatube-batch", "version": 1, "suite", "title",
/// "exit_code", "cases": [{"name", "case_path", "result_path", "exit_code",
/// "seconds", "error": null | {"kind", "message"}, "summary": null | the
/// json_summary object of the case}]}.
/// @throws InputError when the suite itself is unreadable, DIR cannot be
/// created, or a side output (JUnit, JSON) exists without `force`: nothing runs.
int run_batch(const std::string& suite_path, const BatchOptions& options);

}  // namespace sigmatube::app
