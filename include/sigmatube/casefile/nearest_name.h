// SPDX-License-Identifier: MIT
#pragma once
// "Did you mean ...?" suggestions for misspelt keys, enumeration values and names.
#include <cstddef>
#include <string>
#include <string_view>
#include <vector>

// Layer casefile/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::casefile {

/// Levenshtein distance: the fewest single-character insertions, deletions and
/// substitutions that turn `a` into `b` (V. I. Levenshtein, "Binary codes capable of
/// correcting deletions, insertions, and reversals", Soviet Physics Doklady, 1966).
/// Computed with the two-row Wagner–Fischer recurrence
///   d[i][j] = min(d[i-1][j] + 1, d[i][j-1] + 1, d[i-1][j-1] + [a_i ≠ b_j]).
std::size_t levenshtein_distance(std::string_view a, std::string_view b);

/// The candidate closest to `word` (compared case-insensitively), or "" when none is
/// close. Close means distance ≤ max(1, ⌈L/3⌉) with L the longer of the two lengths,
/// and distance < L (a suggestion must share something with the word). Ties go to the
/// earlier candidate; an exact match is never suggested (returns "").
std::string nearest_name(const std::string& word, const std::vector<std::string>& candidates);

/// " (did you mean 'x'?)" for the nearest candidate, or "" when none is close; meant to
/// be appended to an error message.
std::string did_you_mean(const std::string& word, const std::vector<std::string>& candidates);

/// Letters, digits and `_`, not starting with a digit: the names an expression
/// can use (states, inputs, parameters, outputs).
bool is_identifier(std::string_view name);

/// "a, b, c": the allowed values, for messages that list them.
std::string join_names(const std::vector<std::string>& names);

/// did_you_mean() when some candidate is close, else " (known: a, b, …)", and
/// " (there are none)" for an empty list: for names the user must pick from a
/// short list the program knows (models, states, inputs, targets).
std::string suggestion_or_list(const std::string& word, const std::vector<std::string>& candidates);

}  // namespace sigmatube::casefile
