// SPDX-License-Identifier: MIT
#pragma once
// Plain-ASCII tables with aligned columns for terminal output.
#include <string>
#include <vector>

// Layer result/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::result {

struct TextTable {
  std::vector<std::string> header;
  std::vector<std::vector<std::string>> rows;  // each as long as header
  std::vector<bool> right_aligned;             // per column; missing = left
  std::string indent = "  ";
  std::string gap = "  ";  // between columns

  /// Header, a dashed rule, then the rows; widths count UTF-8 code points.
  /// Throws std::logic_error when a row's length differs from the header's.
  std::string render() const;
};

}  // namespace sigmatube::result
