// SPDX-License-Identifier: MIT
#include "toml_table.h"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <sstream>

#include "sigmatube/casefile/nearest_name.h"
#include "sigmatube/core/output_policy.h"

namespace sigmatube::casefile::detail {

toml::table parse_toml_file(const std::string& path, const char* what) {
  const std::string problem = input_file_problem(path);
  if (!problem.empty()) throw InputError(SourceLocation{path, 0, ""}, std::string("cannot open ") + what + ": " + problem);
  try {
    return toml::parse_file(path);
  } catch (const toml::parse_error& error) {
    throw InputError(SourceLocation{path, static_cast<int>(error.source().begin.line), ""},
                     "TOML syntax error: " + std::string(error.description()));
  }
}

int line_of(const toml::node& node) { return static_cast<int>(node.source().begin.line); }

std::string type_phrase(const toml::node& node) {
  switch (node.type()) {
    case toml::node_type::string: return "a string";
    case toml::node_type::integer: return "an integer";
    case toml::node_type::floating_point: return "a floating-point number";
    case toml::node_type::boolean: return "a boolean";
    case toml::node_type::date: return "a date";
    case toml::node_type::time: return "a time";
    case toml::node_type::date_time: return "a date-time";
    case toml::node_type::array: return "an array";
    case toml::node_type::table: return "a table";
    default: return "nothing";
  }
}

std::string format_number(double value) {
  std::ostringstream out;
  out.precision(12);
  out << value;
  return out.str();
}

TomlTable::TomlTable(std::string file, const toml::table& table, std::string path, int line)
    : file_(std::move(file)), table_(&table), path_(std::move(path)), line_(line) {}

std::string TomlTable::key_path(const std::string& key) const {
  return path_.empty() ? key : path_ + "." + key;
}

SourceLocation TomlTable::where(const std::string& key) const {
  const toml::node* value = node(key);
  return {file_, value ? line_of(*value) : line_, key_path(key)};
}

KeyLocations TomlTable::key_locations() const {
  KeyLocations locations;
  for (auto&& [key, value] : *table_) {
    const std::string name(key.str());
    locations.keys[name] = SourceLocation{file_, line_of(value), key_path(name)};
  }
  return locations;
}

void TomlTable::fail(const std::string& key, const std::string& message) const {
  throw InputError(where(key), message);
}

void TomlTable::fail_at(const toml::node& at, const std::string& key, const std::string& message) const {
  throw InputError(SourceLocation{file_, line_of(at), key_path(key)}, message);
}

void TomlTable::missing(const std::string& key) const {
  // Entries of arrays of tables are already bracketed ("constraint[1]").
  const std::string in = path_.empty()                ? std::string("the file")
                         : path_.back() == ']'        ? path_
                                                      : "[" + path_ + "]";
  throw InputError(SourceLocation{file_, line_, key_path(key)}, "missing required key '" + key + "' in " + in);
}

std::vector<std::pair<std::string, const toml::node*>> TomlTable::entries_in_file_order() const {
  std::vector<std::pair<std::string, const toml::node*>> entries;
  std::vector<std::pair<std::pair<unsigned, unsigned>, std::size_t>> order;
  for (auto&& [key, value] : *table_) {
    order.push_back({{key.source().begin.line, key.source().begin.column}, entries.size()});
    entries.emplace_back(std::string(key.str()), &value);
  }
  std::stable_sort(order.begin(), order.end());
  std::vector<std::pair<std::string, const toml::node*>> sorted;
  for (const auto& [position, index] : order) sorted.push_back(entries[index]);
  return sorted;
}

void TomlTable::check_keys(const std::vector<std::string>& allowed, const std::string& what) const {
  for (const auto& [key, value] : entries_in_file_order()) {
    if (std::find(allowed.begin(), allowed.end(), key) != allowed.end()) continue;
    fail(key, "unknown " + what + " '" + key + "'" + did_you_mean(key, allowed) + "; allowed: " +
                  join_names(allowed));
  }
}

void TomlTable::check_keys_for_kind(const std::vector<std::string>& allowed, const std::vector<std::string>& known,
                                    const std::string& kind_phrase) const {
  for (const auto& [key, value] : entries_in_file_order()) {
    if (std::find(allowed.begin(), allowed.end(), key) != allowed.end()) continue;
    if (std::find(known.begin(), known.end(), key) != known.end())
      fail(key, "key '" + key + "' does not belong to " + kind_phrase + " (it takes: " + join_names(allowed) + ")");
    std::string hint = did_you_mean(key, allowed);
    if (hint.empty()) hint = did_you_mean(key, known);
    fail(key, "unknown key '" + key + "'" + hint + "; " + kind_phrase + " takes: " + join_names(allowed));
  }
}

double TomlTable::number_from(const toml::node& value, const std::string& key, const std::string& context) const {
  double result = 0.0;
  if (const auto* f = value.as_floating_point()) result = f->get();
  else if (const auto* i = value.as_integer()) result = static_cast<double>(i->get());
  else fail_at(value, key, context + "expected a number, got " + type_phrase(value));
  if (!std::isfinite(result)) fail_at(value, key, context + "must be a finite number (got " + format_number(result) + ")");
  return result;
}

double TomlTable::number(const std::string& key) const {
  const toml::node* value = node(key);
  if (!value) missing(key);
  return number_from(*value, key, "");
}

double TomlTable::number_or(const std::string& key, double fallback) const {
  return has(key) ? number(key) : fallback;
}

std::optional<double> TomlTable::optional_number(const std::string& key) const {
  if (!has(key)) return std::nullopt;
  return number(key);
}

long long TomlTable::integer(const std::string& key) const {
  const toml::node* value = node(key);
  if (!value) missing(key);
  const auto* i = value->as_integer();
  if (!i) fail(key, "expected an integer, got " + type_phrase(*value));
  return i->get();
}

long long TomlTable::integer_or(const std::string& key, long long fallback) const {
  return has(key) ? integer(key) : fallback;
}

bool TomlTable::boolean_or(const std::string& key, bool fallback) const {
  const toml::node* value = node(key);
  if (!value) return fallback;
  const auto* b = value->as_boolean();
  if (!b) fail(key, "expected true or false, got " + type_phrase(*value));
  return b->get();
}

std::string TomlTable::string(const std::string& key) const {
  const toml::node* value = node(key);
  if (!value) missing(key);
  const auto* s = value->as_string();
  if (!s) fail(key, "expected a string, got " + type_phrase(*value));
  if (s->get().empty()) fail(key, "must not be empty");
  return s->get();
}

std::string TomlTable::string_or(const std::string& key, const std::string& fallback) const {
  return has(key) ? string(key) : fallback;
}

std::vector<double> TomlTable::numbers(const std::string& key, bool allow_scalar) const {
  const toml::node* value = node(key);
  if (!value) missing(key);
  if (allow_scalar && (value->is_integer() || value->is_floating_point())) return {number(key)};
  const auto* array = value->as_array();
  if (!array)
    fail(key, std::string(allow_scalar ? "expected a number or an array of numbers" : "expected an array of numbers") +
                  ", got " + type_phrase(*value));
  if (array->empty()) fail(key, "must not be an empty array");
  std::vector<double> out;
  for (std::size_t i = 0; i < array->size(); ++i)
    out.push_back(number_from(*array->get(i), key, "element " + std::to_string(i + 1) + ": "));
  return out;
}

std::vector<std::string> TomlTable::strings(const std::string& key, bool allow_scalar) const {
  const toml::node* value = node(key);
  if (!value) missing(key);
  if (allow_scalar && value->is_string()) return {string(key)};
  const auto* array = value->as_array();
  if (!array)
    fail(key, std::string(allow_scalar ? "expected a string or an array of strings" : "expected an array of strings") +
                  ", got " + type_phrase(*value));
  if (array->empty()) fail(key, "must not be an empty array");
  std::vector<std::string> out;
  for (std::size_t i = 0; i < array->size(); ++i) {
    const toml::node& element = *array->get(i);
    const auto* s = element.as_string();
    const std::string context = "element " + std::to_string(i + 1) + ": ";
    if (!s) fail_at(element, key, context + "expected a string, got " + type_phrase(element));
    if (s->get().empty()) fail_at(element, key, context + "must not be empty");
    out.push_back(s->get());
  }
  return out;
}

std::vector<std::vector<double>> TomlTable::matrix(const std::string& key) const {
  const toml::node* value = node(key);
  if (!value) missing(key);
  const auto* array = value->as_array();
  if (!array) fail(key, "expected an array of arrays of numbers, got " + type_phrase(*value));
  if (array->empty()) fail(key, "must not be an empty array");
  std::vector<std::vector<double>> out;
  for (std::size_t r = 0; r < array->size(); ++r) {
    const toml::node& row_node = *array->get(r);
    const std::string context = "row " + std::to_string(r + 1) + ": ";
    const auto* row = row_node.as_array();
    if (!row) fail_at(row_node, key, context + "expected an array of numbers, got " + type_phrase(row_node));
    if (row->empty()) fail_at(row_node, key, context + "must not be an empty array");
    std::vector<double> values;
    for (std::size_t c = 0; c < row->size(); ++c)
      values.push_back(number_from(*row->get(c), key, context + "element " + std::to_string(c + 1) + ": "));
    if (!out.empty() && values.size() != out.front().size())
      fail_at(row_node, key, context + "has " + std::to_string(values.size()) + " elements, row 1 has " +
                                 std::to_string(out.front().size()));
    out.push_back(std::move(values));
  }
  return out;
}

std::optional<TomlTable> TomlTable::table(const std::string& key) const {
  const toml::node* value = node(key);
  if (!value) return std::nullopt;
  const auto* sub = value->as_table();
  if (!sub) {
    if (value->is_array_of_tables())
      fail(key, "expected a single table [" + key_path(key) + "], got an array of tables [[" + key_path(key) + "]]");
    fail(key, "expected a table, got " + type_phrase(*value));
  }
  return TomlTable(file_, *sub, key_path(key), line_of(*sub));
}

std::vector<TomlTable> TomlTable::array_of_tables(const std::string& key) const {
  const toml::node* value = node(key);
  if (!value) return {};
  const auto* array = value->as_array();
  if (!array || !array->is_array_of_tables()) {
    if (value->is_table())
      fail(key, "expected an array of tables: write [[" + key_path(key) + "]], not [" + key_path(key) + "]");
    fail(key, "expected an array of tables [[" + key_path(key) + "]], got " + type_phrase(*value));
  }
  std::vector<TomlTable> out;
  for (std::size_t i = 0; i < array->size(); ++i) {
    const toml::node& element = *array->get(i);
    out.emplace_back(file_, *element.as_table(), key_path(key) + "[" + std::to_string(i + 1) + "]", line_of(element));
  }
  return out;
}

std::string TomlTable::unknown_choice_message(const std::string& text, const std::vector<std::string>& names,
                                              const std::string& what) {
  return "unknown " + what + " '" + text + "'" + did_you_mean(text, names) + "; allowed: " + join_names(names);
}

}  // namespace sigmatube::casefile::detail
