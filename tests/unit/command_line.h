// SPDX-License-Identifier: MIT
#pragma once
// Runs the sigmatube command line for the tests: exit code, stdout, stderr.
#include <sys/wait.h>
#include <unistd.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <string>

namespace sigmatube::testing {

struct CommandResult {
  int exit_code = -1;  // -1: killed by a signal
  int signal = 0;      // the signal that ended it, 0 if it exited
  std::string stdout_text;
  std::string stderr_text;
};

/// Runs `sigmatube ARGUMENTS` through the shell (arguments are quoted by the caller).
inline CommandResult run_command(const std::string& arguments) {
  static int counter = 0;
  const std::filesystem::path err = std::filesystem::temp_directory_path() /
                                    ("sigmatube_cli_err_" + std::to_string(::getpid()) + "_" + std::to_string(counter++));
  const std::string command = std::string(SIGMATUBE_CLI) + " " + arguments + " 2>" + err.string();
  CommandResult result;
  FILE* pipe = ::popen(command.c_str(), "r");
  if (!pipe) return result;
  char buffer[4096];
  std::size_t n;
  while ((n = std::fread(buffer, 1, sizeof buffer, pipe)) > 0) result.stdout_text.append(buffer, n);
  const int status = ::pclose(pipe);
  result.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  // The shell reports a child killed by signal S as exit 128 + S.
  if (result.exit_code > 128 && result.exit_code < 160) result.signal = result.exit_code - 128;
  std::ifstream in(err);
  result.stderr_text.assign(std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>());
  std::filesystem::remove(err);
  return result;
}

inline int count_lines(const std::string& text) {
  int lines = 0;
  for (char c : text) lines += c == '\n';
  if (!text.empty() && text.back() != '\n') ++lines;
  return lines;
}

}  // namespace sigmatube::testing
