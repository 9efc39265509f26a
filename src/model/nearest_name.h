// SPDX-License-Identifier: MIT
#pragma once
// Private helper of the model folder: the "did you mean ...?" suggestion for a
// misspelt name.
#include <string>
#include <vector>

namespace sigmatube::model::detail {

/// Levenshtein (1966) edit distance: insertions, deletions, substitutions, cost 1 each.
int edit_distance(const std::string& a, const std::string& b);

/// " (did you mean 'x'?)" for the candidate closest to `name` when it is within
/// max(2, |name|/2) edits, else " (valid: a, b, c)" listing all candidates.
std::string suggestion(const std::string& name, const std::vector<std::string>& candidates);

}  // namespace sigmatube::model::detail
