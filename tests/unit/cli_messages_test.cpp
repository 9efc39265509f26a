// SPDX-License-Identifier: MIT
// Command-line messages and exit codes of issue 10, item 6: `show` on a file that is
// not HDF5, `compare` of a `simulate` result (bad input, 2), `--junit FILE` that
// exists names `--junit`, and `simulate` does not claim the case has no constraints.
// The HDF5 signature test is the library's own H5Fis_hdf5 (HDF5 file format spec).
#include <gtest/gtest.h>
#include <sys/wait.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <string>

namespace {
namespace fs = std::filesystem;

struct Output {
  int exit_code = -1;
  std::string text;  // stdout and stderr
};

Output sigmatube(const std::string& arguments) {
  const std::string command = std::string(SIGMATUBE_CLI) + " " + arguments + " 2>&1";
  Output out;
  FILE* pipe = ::popen(command.c_str(), "r");
  if (!pipe) return out;
  char buffer[4096];
  std::size_t n;
  while ((n = std::fread(buffer, 1, sizeof buffer, pipe)) > 0) out.text.append(buffer, n);
  const int status = ::pclose(pipe);
  out.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  return out;
}

struct Folder {
  fs::path path = fs::temp_directory_path() / ("sigmatube_messages_" + std::to_string(::getpid()));
  Folder() {
    fs::remove_all(path);
    fs::create_directories(path);
  }
  ~Folder() { fs::remove_all(path); }
  std::string operator/(const std::string& name) const { return "'" + (path / name).string() + "'"; }
};

const std::string kCase = "'" + std::string(SIGMATUBE_SOURCE_DIR) + "/tests/cases/hcw_minimal.toml'";

TEST(CommandLineMessages, ShowOnATextFileSaysItIsNotAResultFile) {
  const Folder folder;
  std::ofstream(folder.path / "notes.txt") << "not a result\n";
  const Output out = sigmatube("show " + folder / "notes.txt");
  EXPECT_EQ(out.exit_code, 2) << out.text;
  EXPECT_NE(out.text.find("not a sigmatube result file (not HDF5"), std::string::npos) << out.text;
  EXPECT_EQ(out.text.find("H5Fopen"), std::string::npos) << out.text;
}

TEST(CommandLineMessages, SimulateResultsAreNotComparedAndSimulateNamesNoMissingConstraints) {
  const Folder folder;
  const Output sim = sigmatube("simulate " + kCase + " -o " + folder / "nominal.h5");
  ASSERT_EQ(sim.exit_code, 0) << sim.text;
  EXPECT_EQ(sim.text.find("no constraints to check"), std::string::npos) << sim.text;  // the case has constraints
  EXPECT_NE(sim.text.find("exit 0: nominal run only"), std::string::npos) << sim.text;
  const Output compare = sigmatube("compare " + folder / "nominal.h5" + " " + folder / "nominal.h5");
  EXPECT_EQ(compare.exit_code, 2) << compare.text;
  EXPECT_NE(compare.text.find("result of `simulate`"), std::string::npos) << compare.text;
}

TEST(CommandLineMessages, ExistingJunitFileIsNamedByItsOption) {
  const Folder folder;
  std::ofstream(folder.path / "gate.xml") << "<old/>\n";
  const Output out = sigmatube("compare " + folder / "a.h5" + " " + folder / "b.h5" + " --junit " + folder / "gate.xml");
  EXPECT_EQ(out.exit_code, 2) << out.text;
  EXPECT_NE(out.text.find(": --junit: file exists"), std::string::npos) << out.text;
}

}  // namespace
