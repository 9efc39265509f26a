// SPDX-License-Identifier: MIT
#include "sigmatube/result/text_table.h"

#include <algorithm>
#include <stdexcept>

#include "sigmatube/result/number_format.h"

namespace sigmatube::result {

std::string TextTable::render() const {
  const std::size_t n = header.size();
  std::vector<std::size_t> width(n, 0);
  for (std::size_t j = 0; j < n; ++j) width[j] = display_width(header[j]);
  for (const auto& row : rows) {
    if (row.size() != n) throw std::logic_error("TextTable: row length differs from header length");
    for (std::size_t j = 0; j < n; ++j) width[j] = std::max(width[j], display_width(row[j]));
  }
  auto line = [&](const std::vector<std::string>& cells) {
    std::string out = indent;
    for (std::size_t j = 0; j < n; ++j) {
      const std::string pad(width[j] - display_width(cells[j]), ' ');
      const bool right = j < right_aligned.size() && right_aligned[j];
      out += right ? pad + cells[j] : cells[j] + (j + 1 < n ? pad : "");
      if (j + 1 < n) out += gap;
    }
    while (!out.empty() && out.back() == ' ') out.pop_back();
    return out + "\n";
  };
  std::string out = line(header);
  std::string rule = indent;
  for (std::size_t j = 0; j < n; ++j) rule += std::string(width[j], '-') + (j + 1 < n ? gap : "");
  out += rule + "\n";
  for (const auto& row : rows) out += line(row);
  return out;
}

}  // namespace sigmatube::result
