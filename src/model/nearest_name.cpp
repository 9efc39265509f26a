// SPDX-License-Identifier: MIT
#include "nearest_name.h"

#include <algorithm>
#include <sstream>

namespace sigmatube::model::detail {

int edit_distance(const std::string& a, const std::string& b) {
  std::vector<int> previous(b.size() + 1), current(b.size() + 1);
  for (std::size_t j = 0; j <= b.size(); ++j) previous[j] = static_cast<int>(j);
  for (std::size_t i = 1; i <= a.size(); ++i) {
    current[0] = static_cast<int>(i);
    for (std::size_t j = 1; j <= b.size(); ++j) {
      const int substitution = previous[j - 1] + (a[i - 1] == b[j - 1] ? 0 : 1);
      current[j] = std::min({previous[j] + 1, current[j - 1] + 1, substitution});
    }
    std::swap(previous, current);
  }
  return previous[b.size()];
}

std::string suggestion(const std::string& name, const std::vector<std::string>& candidates) {
  if (candidates.empty()) return "";
  const std::string* best = nullptr;
  int best_distance = 0;
  for (const auto& candidate : candidates) {
    const int d = edit_distance(name, candidate);
    if (best == nullptr || d < best_distance) {
      best = &candidate;
      best_distance = d;
    }
  }
  const int threshold = std::max(2, static_cast<int>(name.size()) / 2);
  std::ostringstream out;
  if (best_distance <= threshold) {
    out << " (did you mean '" << *best << "'?)";
  } else {
    out << " (valid: ";
    for (std::size_t i = 0; i < candidates.size(); ++i) out << (i ? ", " : "") << candidates[i];
    out << ')';
  }
  return out.str();
}

}  // namespace sigmatube::model::detail
