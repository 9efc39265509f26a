// SPDX-License-Identifier: MIT
#pragma once
// Internal to the case and suite readers: a view of one TOML table that knows its
// dotted key path ("constraint[2]") and file, checks the keys it allows, reads typed
// values and throws InputError("file:line: path.key: message") for anything wrong.
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include <toml++/toml.h>

#include "sigmatube/casefile/case_options.h"
#include "sigmatube/core/error.h"

namespace sigmatube::casefile::detail {

/// Parses a TOML file; a syntax error becomes InputError(file:line: message).
toml::table parse_toml_file(const std::string& path, const char* what);

int line_of(const toml::node& node);
/// "a string", "an integer", ... for "expected X, got Y" messages.
std::string type_phrase(const toml::node& node);

class TomlTable {
 public:
  /// `path` is the dotted key of the table ("" for the root); `line` is where the table
  /// starts (0 when it has no line, e.g. the root or a missing table).
  TomlTable(std::string file, const toml::table& table, std::string path, int line);

  const std::string& file() const { return file_; }
  const std::string& path() const { return path_; }
  std::string key_path(const std::string& key) const;
  SourceLocation where() const { return {file_, line_, path_}; }
  /// The location of a key: its value's line when written, else the table's line.
  SourceLocation where(const std::string& key) const;
  KeyLocations key_locations() const;

  [[noreturn]] void fail(const std::string& key, const std::string& message) const;
  [[noreturn]] void fail_at(const toml::node& node, const std::string& key, const std::string& message) const;

  /// Unknown keys are errors with the nearest allowed key suggested. The first
  /// offending key in file order is reported.
  void check_keys(const std::vector<std::string>& allowed, const std::string& what) const;
  /// As check_keys, but a key that some other kind takes (in `known`) is reported as
  /// "does not belong to <kind_phrase> (it takes: ...)".
  void check_keys_for_kind(const std::vector<std::string>& allowed, const std::vector<std::string>& known,
                           const std::string& kind_phrase) const;

  bool has(const std::string& key) const { return table_->get(key) != nullptr; }
  const toml::node* node(const std::string& key) const { return table_->get(key); }
  const toml::table& raw() const { return *table_; }

  [[noreturn]] void missing(const std::string& key) const;

  double number(const std::string& key) const;  // required
  double number_or(const std::string& key, double fallback) const;
  std::optional<double> optional_number(const std::string& key) const;
  long long integer(const std::string& key) const;  // required
  long long integer_or(const std::string& key, long long fallback) const;
  bool boolean_or(const std::string& key, bool fallback) const;
  std::string string(const std::string& key) const;  // required, non-empty
  std::string string_or(const std::string& key, const std::string& fallback) const;
  /// An array of numbers (a bare number is accepted when `allow_scalar`).
  std::vector<double> numbers(const std::string& key, bool allow_scalar = false) const;
  /// An array of non-empty strings (a bare string is accepted when `allow_scalar`).
  std::vector<std::string> strings(const std::string& key, bool allow_scalar = false) const;
  /// An array of arrays of numbers, every row the same length.
  std::vector<std::vector<double>> matrix(const std::string& key) const;
  /// A sub-table (inline or not); nullopt when absent.
  std::optional<TomlTable> table(const std::string& key) const;
  /// An array of tables ([[key]]); empty when absent.
  std::vector<TomlTable> array_of_tables(const std::string& key) const;

  /// The table's keys in file order (line, then column).
  std::vector<std::pair<std::string, const toml::node*>> entries_in_file_order() const;

  /// One value of an enumeration; `choices` pairs names with values.
  template <class E>
  E choice(const std::string& key, const std::vector<std::pair<std::string, E>>& choices,
           std::optional<E> fallback, const std::string& what) const {
    if (!has(key)) {
      if (fallback) return *fallback;
      missing(key);
    }
    const std::string text = string(key);
    std::vector<std::string> names;
    for (const auto& [name, value] : choices) {
      if (name == text) return value;
      names.push_back(name);
    }
    fail(key, unknown_choice_message(text, names, what));
  }

  static std::string unknown_choice_message(const std::string& text, const std::vector<std::string>& names,
                                            const std::string& what);

  /// A number from a node with the node's own location in errors.
  double number_from(const toml::node& node, const std::string& key, const std::string& context) const;

 private:
  std::string file_;
  const toml::table* table_;
  std::string path_;
  int line_;
};

/// "must be > 0 (got -1)"-style number formatting that round-trips.
std::string format_number(double value);

}  // namespace sigmatube::casefile::detail
