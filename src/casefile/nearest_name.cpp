// SPDX-License-Identifier: MIT
#include "sigmatube/casefile/nearest_name.h"

#include <algorithm>
#include <cctype>

namespace sigmatube::casefile {

std::size_t levenshtein_distance(std::string_view a, std::string_view b) {
  std::vector<std::size_t> previous(b.size() + 1), current(b.size() + 1);
  for (std::size_t j = 0; j <= b.size(); ++j) previous[j] = j;
  for (std::size_t i = 1; i <= a.size(); ++i) {
    current[0] = i;
    for (std::size_t j = 1; j <= b.size(); ++j) {
      const std::size_t substitution = previous[j - 1] + (a[i - 1] == b[j - 1] ? 0 : 1);
      current[j] = std::min({previous[j] + 1, current[j - 1] + 1, substitution});
    }
    std::swap(previous, current);
  }
  return previous[b.size()];
}

namespace {
std::string lower(const std::string& text) {
  std::string out = text;
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}
}  // namespace

std::string nearest_name(const std::string& word, const std::vector<std::string>& candidates) {
  const std::string key = lower(word);
  std::string best;
  std::size_t best_distance = 0;
  for (const std::string& candidate : candidates) {
    if (candidate == word) return "";
    const std::size_t longer = std::max(word.size(), candidate.size());
    const std::size_t distance = levenshtein_distance(key, lower(candidate));
    const std::size_t limit = std::max<std::size_t>(1, (longer + 2) / 3);
    if (distance > limit || distance >= longer) continue;
    if (best.empty() || distance < best_distance) {
      best = candidate;
      best_distance = distance;
    }
  }
  return best;
}

std::string did_you_mean(const std::string& word, const std::vector<std::string>& candidates) {
  const std::string best = nearest_name(word, candidates);
  return best.empty() ? std::string() : " (did you mean '" + best + "'?)";
}

std::string join_names(const std::vector<std::string>& names) {
  std::string out;
  for (std::size_t i = 0; i < names.size(); ++i) {
    if (i > 0) out += ", ";
    out += names[i];
  }
  return out;
}

std::string suggestion_or_list(const std::string& word, const std::vector<std::string>& candidates) {
  if (candidates.empty()) return " (there are none)";
  const std::string close = did_you_mean(word, candidates);
  return close.empty() ? " (known: " + join_names(candidates) + ")" : close;
}

bool is_identifier(std::string_view name) {
  if (name.empty()) return false;
  auto alpha = [](char c) { return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || c == '_'; };
  if (!alpha(name[0])) return false;
  return std::all_of(name.begin(), name.end(), [&](char c) { return alpha(c) || (c >= '0' && c <= '9'); });
}

}  // namespace sigmatube::casefile
