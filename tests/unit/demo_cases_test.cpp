// SPDX-License-Identifier: MIT
// Every demo under cases/ (each an invented scenario) runs end to end through the
// command line at reduced size and gives a verdict (exit 0 or 1), never bad input
// (2), a disagreement (3) or a numerical failure (4); its result file is read
// back by an independent reader (h5py, through Debian's /usr/bin/python3). The
// plan beside each case is what its make_plan.py writes.
#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "python_reference.h"

namespace {
namespace fs = std::filesystem;

const fs::path kCases = fs::path(SIGMATUBE_SOURCE_DIR) / "cases";

std::vector<std::string> demo_names() {
  std::vector<std::string> names;
  for (const auto& entry : fs::directory_iterator(kCases))
    if (entry.is_directory() && fs::exists(entry.path() / "case.toml")) names.push_back(entry.path().filename().string());
  std::sort(names.begin(), names.end());
  return names;
}

/// Runs `command` through the shell; returns the exit code, stderr into `err`.
int shell(const std::string& command, std::string& err) {
  const fs::path err_path = fs::temp_directory_path() / ("sigmatube_demo_err_" + std::to_string(::getpid()));
  const int status = std::system((command + " >/dev/null 2>'" + err_path.string() + "'").c_str());
  std::ifstream in(err_path);
  err.assign(std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>());
  fs::remove(err_path);
  return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
}

std::string read_bytes(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream bytes;
  bytes << in.rdbuf();
  return bytes.str();
}

class DemoCase : public testing::TestWithParam<std::string> {
 protected:
  void SetUp() override {
    dir_ = fs::path(testing::TempDir()) / ("demo_" + GetParam() + "_" + std::to_string(::getpid()));
    fs::remove_all(dir_);
    fs::create_directories(dir_);
  }
  void TearDown() override { fs::remove_all(dir_); }
  fs::path dir_;
};

TEST(DemoCases, TheFourDemosArePresent) {
  const std::vector<std::string> names = demo_names();
  for (const std::string expected : {"gantry-crane", "inspection-approach", "turbine-survey", "warehouse-tug"})
    EXPECT_NE(std::find(names.begin(), names.end(), expected), names.end()) << expected;
}

TEST_P(DemoCase, RunsEndToEndAtReducedSizeWithAVerdict) {
  const fs::path case_file = kCases / GetParam() / "case.toml";
  const fs::path output = dir_ / "result.h5";
  std::string err;
  const int code = shell(std::string(SIGMATUBE_CLI) + " run '" + case_file.string() +
                             "' --mc-runs 50 --samples 5000 --threads 2 -o '" + output.string() + "' --force --quiet",
                         err);
  EXPECT_TRUE(code == 0 || code == 1) << "exit " << code << ": " << err;
  ASSERT_TRUE(fs::exists(output)) << err;

  // h5py reads the file written by the HDF5 C library: the surrogate
  // coefficients are [T, n_out, P] with T = len(/time), and every constraint of
  // the case has its group with a path probability in [0, 1].
  const std::vector<double> facts = sigmatube::test::python_numbers(
      "import h5py, math\n"
      "f = h5py.File('" + output.string() + "', 'r')\n"
      "c = f['/surrogate/coefficients']\n"
      "print(int('/constraints' in f), int(c.shape[0] == f['/time'].shape[0]), "
      "int(c.shape[1] == f['/outputs/names'].shape[0]), len(f['/constraints'].keys()))\n"
      "ok = all(0.0 <= float(f['/constraints'][k]['path_probability'][()]) <= 1.0 for k in f['/constraints'])\n"
      "print(int(ok))\n");
  ASSERT_EQ(facts.size(), 5u);
  EXPECT_EQ(facts[0], 1);
  EXPECT_EQ(facts[1], 1);
  EXPECT_EQ(facts[2], 1);
  EXPECT_GE(facts[3], 1);
  EXPECT_EQ(facts[4], 1);
}

TEST_P(DemoCase, HasReadmeAndPlanMatchesItsGenerator) {
  const fs::path folder = kCases / GetParam();
  EXPECT_TRUE(fs::exists(folder / "README.md"));
  ASSERT_TRUE(fs::exists(folder / "make_plan.py"));
  // make_plan.py writes plan.csv into its working folder: run it in a scratch
  // folder and compare byte for byte with the plan the case uses.
  fs::copy_file(folder / "make_plan.py", dir_ / "make_plan.py");
  std::string err;
  ASSERT_EQ(shell("cd '" + dir_.string() + "' && " + std::string(SIGMATUBE_PYTHON) + " make_plan.py", err), 0) << err;
  EXPECT_EQ(read_bytes(dir_ / "plan.csv"), read_bytes(folder / "plan.csv"));
}

INSTANTIATE_TEST_SUITE_P(Cases, DemoCase, testing::ValuesIn(demo_names()),
                         [](const testing::TestParamInfo<std::string>& info) {
                           std::string name = info.param;
                           std::replace(name.begin(), name.end(), '-', '_');
                           return name;
                         });

}  // namespace
