// SPDX-License-Identifier: MIT
#pragma once
// Three significant digits ("%.3g") for the one-line messages of montecarlo/.
#include <cstdio>
#include <string>

namespace sigmatube::montecarlo {

inline std::string short_number(double value) {
  char buffer[48];
  std::snprintf(buffer, sizeof buffer, "%.3g", value);
  return buffer;
}

}  // namespace sigmatube::montecarlo
