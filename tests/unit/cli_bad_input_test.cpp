// SPDX-License-Identifier: MIT
// Every bad case under tests/bad_cases/ must, through the command line, give
// exit code 2, a one-line message naming the file, and no output file — for
// `check`, `simulate` and `run` alike (the error policy of DEVELOPERS.md).
#include <gtest/gtest.h>
#include <sys/wait.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "command_line.h"

namespace {
namespace fs = std::filesystem;

using sigmatube::testing::CommandResult;
using sigmatube::testing::count_lines;
using sigmatube::testing::run_command;

std::vector<fs::path> bad_cases() {
  std::vector<fs::path> files;
  for (const auto& entry : fs::directory_iterator(fs::path(SIGMATUBE_SOURCE_DIR) / "tests" / "bad_cases"))
    if (entry.path().extension() == ".toml") files.push_back(entry.path());
  std::sort(files.begin(), files.end());
  return files;
}

TEST(CommandLineBadInput, AtLeastTwentyDistinctBadCasesExist) { EXPECT_GE(bad_cases().size(), 20u); }

TEST(CommandLineBadInput, EveryBadCaseExitsTwoWithOneLineAndNoOutput) {
  const fs::path out_dir = fs::temp_directory_path() / ("sigmatube_bad_" + std::to_string(::getpid()));
  fs::create_directories(out_dir);
  for (const auto& file : bad_cases()) {
    SCOPED_TRACE(file.filename().string());
    for (const std::string command : {"check", "simulate", "run"}) {
      SCOPED_TRACE(command);
      const fs::path output = out_dir / (file.stem().string() + "_" + command + ".h5");
      std::string arguments = command + " '" + file.string() + "'";
      if (command != "check") arguments += " -o '" + output.string() + "' --mc-runs 0";
      if (command == "simulate") arguments = command + " '" + file.string() + "' -o '" + output.string() + "'";
      const CommandResult result = run_command(arguments);
      EXPECT_EQ(result.exit_code, 2) << result.stderr_text;
      EXPECT_EQ(count_lines(result.stderr_text), 1) << result.stderr_text;
      EXPECT_NE(result.stderr_text.find(file.filename().string()), std::string::npos) << result.stderr_text;
      EXPECT_FALSE(fs::exists(output));
      // Nothing half-written either: no temporary left behind.
      for (const auto& entry : fs::directory_iterator(out_dir))
        EXPECT_EQ(entry.path().string().find(".tmp."), std::string::npos) << entry.path();
    }
  }
  fs::remove_all(out_dir);
}

TEST(CommandLineBadInput, ExistingOutputIsNeverOverwrittenWithoutForce) {
  const fs::path out_dir = fs::temp_directory_path() / ("sigmatube_force_" + std::to_string(::getpid()));
  fs::create_directories(out_dir);
  const fs::path output = out_dir / "existing.h5";
  { std::ofstream(output) << "precious"; }
  const std::string demo = std::string(SIGMATUBE_SOURCE_DIR) + "/cases/inspection-approach/case.toml";
  const CommandResult result = run_command("simulate '" + demo + "' -o '" + output.string() + "'");
  EXPECT_EQ(result.exit_code, 2);
  EXPECT_EQ(count_lines(result.stderr_text), 1) << result.stderr_text;
  std::ifstream in(output);
  std::string content((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  EXPECT_EQ(content, "precious");
  const CommandResult forced = run_command("simulate '" + demo + "' -o '" + output.string() + "' --force --quiet");
  EXPECT_EQ(forced.exit_code, 0) << forced.stderr_text;
  fs::remove_all(out_dir);
}

TEST(CommandLineBadInput, UnknownCommandAndMissingArgumentsAreUsageErrors) {
  EXPECT_EQ(run_command("frobnicate").exit_code, 2);
  EXPECT_EQ(run_command("run").exit_code, 2);
  EXPECT_EQ(run_command("--help").exit_code, 0);
}

TEST(CommandLineBadInput, RunHelpCarriesTheCautions) {
  const CommandResult help = run_command("run --help");
  EXPECT_EQ(help.exit_code, 0);
  EXPECT_NE(help.stdout_text.find("safety standards"), std::string::npos) << help.stdout_text;
  EXPECT_NE(help.stdout_text.find("Monte Carlo"), std::string::npos);
}

}  // namespace
