// SPDX-License-Identifier: MIT
#include "sigmatube/casefile/suite_reader.h"

#include <filesystem>
#include <stdexcept>

#include "sigmatube/casefile/case_reader.h"
#include "sigmatube/casefile/nearest_name.h"
#include "toml_table.h"

namespace sigmatube::casefile {
namespace {

using detail::format_number;
using detail::TomlTable;
namespace fs = std::filesystem;

std::string resolve(const std::string& suite_path, const std::string& file) {
  fs::path p(file);
  if (p.is_relative()) p = fs::path(suite_path).parent_path() / p;
  return p.lexically_normal().string();
}

std::optional<long long> read_count(const TomlTable& t, const std::string& key, long long minimum) {
  if (!t.has(key)) return std::nullopt;
  const long long value = t.integer(key);
  if (value < minimum) t.fail(key, "must be ≥ " + std::to_string(minimum) + " (got " + std::to_string(value) + ")");
  return value;
}

}  // namespace

SuiteOptions read_suite(const std::string& path) {
  const toml::table root_table = detail::parse_toml_file(path, "suite file");
  const TomlTable root(path, root_table, "", 0);
  root.check_keys({"title", "defaults", "case"}, "top-level key or table");
  SuiteOptions suite;
  suite.path = path;
  if (const toml::node* title = root.node("title")) {
    if (!title->is_string()) root.fail("title", "expected a string, got " + detail::type_phrase(*title));
    suite.title = title->as_string()->get();
  }
  suite.defaults.where = {path, 0, "defaults"};
  if (auto defaults = root.table("defaults")) {
    defaults->check_keys({"mc_runs", "samples"}, "key");
    suite.defaults.where = defaults->where();
    suite.defaults.mc_runs = read_count(*defaults, "mc_runs", 0);
    suite.defaults.samples = read_count(*defaults, "samples", 1);
  }
  const std::vector<TomlTable> entries = root.array_of_tables("case");
  if (entries.empty()) throw InputError(SourceLocation{path, 0, "case"}, "a suite needs at least one [[case]]");
  for (const TomlTable& t : entries) {
    t.check_keys({"file", "name", "plan", "mc_runs", "samples", "max_probability"}, "key");
    SuiteCase c;
    c.where = t.where();
    c.key_where = t.key_locations();
    c.file = t.string("file");
    c.path = resolve(path, c.file);
    std::error_code ec;
    if (!fs::is_regular_file(c.path, ec)) t.fail("file", "case file '" + c.file + "' not found (looked for '" + c.path + "')");
    c.name = t.has("name") ? t.string("name") : fs::path(c.file).stem().string();
    if (c.name == "." || c.name == ".." || c.name.find_first_of("/\\") != std::string::npos)
      t.fail(t.has("name") ? "name" : "file", "'" + c.name + "' cannot name a result file (no '/', '\\', '.' or '..')");
    if (t.has("plan")) {
      c.plan_file = t.string("plan");
      c.plan_path = resolve(path, c.plan_file);
      if (!fs::is_regular_file(c.plan_path, ec))
        t.fail("plan", "plan file '" + c.plan_file + "' not found (looked for '" + c.plan_path + "')");
    }
    c.mc_runs = read_count(t, "mc_runs", 0);
    c.samples = read_count(t, "samples", 1);
    if (auto bounds = t.table("max_probability")) {
      for (const auto& [name, node] : bounds->entries_in_file_order()) {
        const double value = bounds->number(name);
        if (!(value > 0.0 && value < 1.0))
          bounds->fail(name, "must be in (0, 1) (got " + format_number(value) + ")");
        c.max_probability.push_back({name, value, bounds->where(name)});
      }
    }
    for (const SuiteCase& seen : suite.cases)
      if (seen.name == c.name)
        t.fail(t.has("name") ? "name" : "file", "duplicate case name '" + c.name + "' (first at line " +
                                                    std::to_string(seen.where.line) + "); give each case a unique 'name'");
    suite.cases.push_back(std::move(c));
  }
  return suite;
}

CaseOptions read_suite_case(const SuiteOptions& suite, std::size_t index) {
  if (index >= suite.cases.size())
    throw std::logic_error("read_suite_case: index " + std::to_string(index) + " out of range");
  const SuiteCase& entry = suite.cases[index];
  CaseOptions options = read_case(entry.path);
  if (!entry.plan_file.empty()) {
    options.plan.file = entry.plan_file;
    options.plan.path = entry.plan_path;
    options.plan.where = entry.key_where.of("plan", entry.where);
  }
  if (suite.defaults.mc_runs && !options.montecarlo.key_where.keys.count("runs"))
    options.montecarlo.runs = *suite.defaults.mc_runs;
  if (suite.defaults.samples && !options.surrogate.key_where.keys.count("samples"))
    options.surrogate.samples = *suite.defaults.samples;
  if (entry.mc_runs) options.montecarlo.runs = *entry.mc_runs;
  if (entry.samples) options.surrogate.samples = *entry.samples;
  for (const NamedValue& bound : entry.max_probability) {
    ConstraintOptions* target = nullptr;
    std::vector<std::string> names;
    for (ConstraintOptions& c : options.constraints) {
      names.push_back(c.name);
      if (c.name == bound.name) target = &c;
    }
    if (!target)
      throw InputError(bound.where, "case '" + entry.name + "' has no constraint '" + bound.name + "'" +
                                        did_you_mean(bound.name, names) +
                                        (names.empty() ? "; it has none" : "; it has: " + join_names(names)));
    target->max_probability = bound.value;
  }
  return options;
}

}  // namespace sigmatube::casefile
