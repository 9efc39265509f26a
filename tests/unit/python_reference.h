// SPDX-License-Identifier: MIT
#pragma once
// Runs a short Python program with the Debian interpreter (SIGMATUBE_PYTHON) and
// returns every whitespace-separated number it prints. Reference values from
// SciPy are computed at test time this way, so none is typed in by hand.
#include <cstdio>
#include <fstream>
#include <sstream>
#include <stdexcept>
#include <string>
#include <unistd.h>
#include <vector>

namespace sigmatube::test {

inline std::vector<double> python_numbers(const std::string& program) {
  static int counter = 0;
  const std::string path = "/tmp/sigmatube_reference_" + std::to_string(::getpid()) + "_" +
                           std::to_string(counter++) + ".py";
  {
    std::ofstream file(path);
    file << program;
  }
  const std::string command = std::string(SIGMATUBE_PYTHON) + " " + path + " 2>&1";
  FILE* pipe = ::popen(command.c_str(), "r");
  if (!pipe) throw std::runtime_error("cannot start " + command);
  std::string output;
  char buffer[4096];
  while (std::fgets(buffer, sizeof buffer, pipe)) output += buffer;
  const int status = ::pclose(pipe);
  std::remove(path.c_str());
  if (status != 0) throw std::runtime_error("python failed: " + output);
  std::istringstream in(output);
  std::vector<double> numbers;
  std::string token;
  while (in >> token) numbers.push_back(std::stod(token));
  return numbers;
}

/// Standard output of `python3 -c "<code>"` (SIGMATUBE_PYTHON); "" if it cannot start.
/// `code` must not contain double quotes.
inline std::string python_output(const std::string& code) {
  const std::string command = std::string(SIGMATUBE_PYTHON) + " -c \"" + code + "\"";
  FILE* pipe = ::popen(command.c_str(), "r");
  if (!pipe) return "";
  std::string out;
  char buffer[256];
  while (std::fgets(buffer, sizeof buffer, pipe)) out += buffer;
  ::pclose(pipe);
  return out;
}

}  // namespace sigmatube::test
