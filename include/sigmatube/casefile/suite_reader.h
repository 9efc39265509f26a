// SPDX-License-Identifier: MIT
#pragma once
// Reads a batch suite (TOML) for `sigmatube batch SUITE.toml -d DIR`: many cases,
// one result each. Format in docs/case-file.md, "Suite files".
#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "sigmatube/casefile/case_options.h"

// Layer casefile/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::casefile {

/// [defaults]: used by every case whose own file does not set the key.
struct SuiteDefaults {
  std::optional<long long> mc_runs;  // [montecarlo] runs, ≥ 0
  std::optional<long long> samples;  // [surrogate] samples, ≥ 1
  SourceLocation where;
};

/// One [[case]] entry.
struct SuiteCase {
  std::string name;       // result name (DIR/<name>.h5); default: the case file's stem
  std::string file;       // as written in the suite
  std::string path;       // resolved against the suite file's folder
  std::string plan_file;  // "" = the case's own plan; else as written in the suite
  std::string plan_path;  // resolved against the suite file's folder
  std::optional<long long> mc_runs;  // replaces the case's [montecarlo] runs
  std::optional<long long> samples;  // replaces the case's [surrogate] samples
  std::vector<NamedValue> max_probability;  // constraint name → new bound, in file order
  SourceLocation where;
  KeyLocations key_where;
};

struct SuiteOptions {
  std::string path;  // the suite file as given
  std::string title;
  SuiteDefaults defaults;
  std::vector<SuiteCase> cases;
};

/// Parses and validates a suite: syntax, unknown keys (with suggestions), types, at
/// least one [[case]], case and plan files exist, names unique and usable as file
/// names, max_probability values in (0, 1).
/// @throws InputError "file:line: key: message" with keys such as "case[2].plan".
SuiteOptions read_suite(const std::string& path);

/// Reads the case of entry `index` (read_case on its resolved path) and applies the
/// suite: the plan override, [defaults] for keys the case file leaves out, the entry's
/// mc_runs/samples, and the max_probability overrides (each must name a constraint of
/// the case, else InputError at the suite's line with the nearest name suggested).
CaseOptions read_suite_case(const SuiteOptions& suite, std::size_t index);

}  // namespace sigmatube::casefile
