// SPDX-License-Identifier: MIT
// Model runs spread over MPI ranks (core/distributed.h): `mpirun -np 2 sigmatube
// run` must write exactly the file a single process writes for the same seed
// (every dataset and attribute, bit for bit, creation time excepted), read back
// with h5py. Skipped unless built with -DSIGMATUBE_WITH_MPI=ON.
#include <gtest/gtest.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "result_files_identical.h"

namespace {

const std::string kSource = SIGMATUBE_SOURCE_DIR;

std::string scratch(const std::string& name) {
  const auto dir = std::filesystem::temp_directory_path() / ("sigmatube_mpi_" + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  return (dir / name).string();
}

int exit_code(const std::string& command) {
  const int status = std::system(command.c_str());
  return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
}

// mpirun as root needs these (OpenMPI refuses otherwise); leak checking of the
// MPI runtime under AddressSanitizer is not ours to judge.
const std::string kMpiEnvironment =
    "OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1 OMPI_MCA_rmaps_base_oversubscribe=1 "
    "ASAN_OPTIONS=detect_leaks=0 ";

void expect_two_ranks_match_one_process(const std::string& case_path, const std::string& tag, const std::string& extra) {
#ifndef SIGMATUBE_WITH_MPI
  GTEST_SKIP() << "built without MPI";
#endif
  const std::string single = scratch(tag + "_single.h5"), ranks = scratch(tag + "_ranks2.h5");
  const std::string args = " run " + case_path + " --force --quiet --threads 1 " + extra;
  const int code1 = exit_code(std::string(SIGMATUBE_CLI) + args + " -o " + single + " > /dev/null 2>&1");
  ASSERT_TRUE(code1 == 0 || code1 == 1 || code1 == 3) << "exit code " << code1;
  const int code2 = exit_code(kMpiEnvironment + "mpirun -np 2 " + std::string(SIGMATUBE_CLI) + args + " -o " + ranks +
                              " > /dev/null 2>&1");
  EXPECT_EQ(code1, code2);
  const sigmatube::test::FileComparison c = sigmatube::test::compare_result_files(single, ranks);
  EXPECT_EQ(c.differences, 0) << c.report;
}

TEST(MpiRun, TwoRanksWriteTheSingleProcessFileRk4Case) {
  expect_two_ranks_match_one_process(kSource + "/tests/cases/hcw_minimal.toml", "rk4", "--mc-runs 300");
}

TEST(MpiRun, TwoRanksWriteTheSingleProcessFileDemoCase) {
  expect_two_ranks_match_one_process(kSource + "/cases/inspection-approach/case.toml", "demo",
                                     "--mc-runs 200 --samples 20000");
}

TEST(MpiRun, TwoRanksWriteTheSingleProcessFileFixedSampling) {
  // The rk4 case with "fixed" pseudo-random surrogate sampling (the other tests
  // sample to a target precision): its chunks are shared out over ranks too.
  const std::string dir = std::filesystem::path(scratch("fixed_case.toml")).parent_path().string();
  std::filesystem::copy_file(kSource + "/tests/cases/hcw_minimal_plan.csv", dir + "/hcw_minimal_plan.csv",
                             std::filesystem::copy_options::overwrite_existing);
  std::ifstream in(kSource + "/tests/cases/hcw_minimal.toml");
  std::stringstream text;
  text << in.rdbuf();
  std::string toml = text.str();
  const std::string section = "[surrogate]\n";
  const auto at = toml.find(section);
  ASSERT_NE(at, std::string::npos);
  toml.insert(at + section.size(), "sampling = \"fixed\"\n");
  std::ofstream(dir + "/fixed_case.toml") << toml;
  expect_two_ranks_match_one_process(dir + "/fixed_case.toml", "fixed", "--mc-runs 300 --samples 50000");
}

TEST(MpiRun, TwoRanksWriteTheSingleProcessFilesOfABatch) {
#ifndef SIGMATUBE_WITH_MPI
  GTEST_SKIP() << "built without MPI";
#endif
  // `batch` shares every case's runs and samples over the ranks as `run` does;
  // rank 0 writes each case's result and the JSON summary.
  const std::filesystem::path dir = std::filesystem::path(scratch("batch")).parent_path() / "batch";
  std::filesystem::create_directories(dir);
  std::filesystem::copy_file(kSource + "/tests/cases/hcw_minimal.toml", dir / "hcw.toml",
                             std::filesystem::copy_options::overwrite_existing);
  std::filesystem::copy_file(kSource + "/tests/cases/hcw_minimal_plan.csv", dir / "hcw_minimal_plan.csv",
                             std::filesystem::copy_options::overwrite_existing);
  std::ofstream(dir / "suite.toml") << "title = \"invented MPI batch suite\"\n"
                                       "[[case]]\nfile = \"hcw.toml\"\nname = \"first\"\nmc_runs = 200\nsamples = 20000\n"
                                       "[[case]]\nfile = \"hcw.toml\"\nname = \"second\"\nmc_runs = 100\nsamples = 10000\n";
  const std::string suite = (dir / "suite.toml").string();
  const std::string single = (dir / "single").string(), ranks = (dir / "ranks2").string();
  const std::string args = " batch " + suite + " --force --quiet --threads 1 -d ";
  const int code1 = exit_code(std::string(SIGMATUBE_CLI) + args + single + " --json " + single + ".json > /dev/null 2>&1");
  ASSERT_TRUE(code1 == 0 || code1 == 1 || code1 == 3) << "exit code " << code1;
  const int code2 = exit_code(kMpiEnvironment + "mpirun -np 2 " + std::string(SIGMATUBE_CLI) + args + ranks +
                              " --json " + ranks + ".json > /dev/null 2>&1");
  EXPECT_EQ(code1, code2);
  for (const std::string name : {"first", "second"}) {
    const sigmatube::test::FileComparison c =
        sigmatube::test::compare_result_files(single + "/" + name + ".h5", ranks + "/" + name + ".h5");
    EXPECT_EQ(c.differences, 0) << name << ": " << c.report;
  }
  EXPECT_TRUE(std::filesystem::exists(ranks + ".json"));
}

}  // namespace
