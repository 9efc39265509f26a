// SPDX-License-Identifier: MIT
// Thread-count determinism of the whole pipeline: `sigmatube run` with one and
// with two worker threads must write the same result file, bit for bit (every
// dataset and attribute except the creation time), read back with h5py. The
// design (and the rule behind it: fixed chunk boundaries, merges in chunk order,
// counter-based random numbers) is in core/parallel.h and montecarlo/monte_carlo.h.
#include <gtest/gtest.h>

#include <cstdlib>
#include <filesystem>
#include <string>

#include "result_files_identical.h"

namespace {

const std::string kSource = SIGMATUBE_SOURCE_DIR;

std::string scratch(const std::string& name) {
  const auto dir = std::filesystem::temp_directory_path() / ("sigmatube_determinism_" + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  return (dir / name).string();
}

int run_case(const std::string& case_path, int threads, const std::string& out, const std::string& extra = "") {
  const std::string command = std::string(SIGMATUBE_CLI) + " run " + case_path + " -o " + out + " --force --quiet --threads " +
                              std::to_string(threads) + " " + extra + " > /dev/null 2>&1";
  const int status = std::system(command.c_str());
  return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
}

void expect_identical_for_1_and_2_threads(const std::string& case_path, const std::string& tag, const std::string& extra) {
  const std::string one = scratch(tag + "_threads1.h5"), two = scratch(tag + "_threads2.h5");
  const int code1 = run_case(case_path, 1, one, extra);
  const int code2 = run_case(case_path, 2, two, extra);
  // 0, 1 and 3 are verdicts with a complete result file (product.md §3).
  ASSERT_TRUE(code1 == 0 || code1 == 1 || code1 == 3) << "exit code " << code1;
  EXPECT_EQ(code1, code2);
  const sigmatube::test::FileComparison c = sigmatube::test::compare_result_files(one, two);
  EXPECT_EQ(c.differences, 0) << c.report;
}

// Fixed-step rk4 (the batched propagation path) with a Gaussian-process disturbance.
TEST(Determinism, RunWritesTheSameFileOnOneAndTwoThreadsRk4Case) {
  expect_identical_for_1_and_2_threads(kSource + "/tests/cases/hcw_minimal.toml", "rk4", "--mc-runs 300");
}

// An expression model on the fused lane-program step (model/batch_propagator.h):
// 300 runs in batches of 64 lanes (blocks of 32 in the kernel), split over the threads.
TEST(Determinism, RunWritesTheSameFileOnOneAndTwoThreadsExpressionLanesCase) {
  expect_identical_for_1_and_2_threads(kSource + "/tests/cases/expression_lanes.toml", "expression",
                                       "--mc-runs 300 --samples 20000");
}

// Adaptive dopri5 (one run at a time), saturation limits, several constraints.
TEST(Determinism, RunWritesTheSameFileOnOneAndTwoThreadsDemoCase) {
  expect_identical_for_1_and_2_threads(kSource + "/cases/inspection-approach/case.toml", "demo",
                                       "--mc-runs 200 --samples 20000");
}

// A check that can fail: two different seeds must give different Monte Carlo datasets.
TEST(Determinism, ComparisonDetectsADifferentSeed) {
  const std::string a = scratch("seed_a.h5"), b = scratch("seed_b.h5");
  ASSERT_NE(run_case(kSource + "/tests/cases/hcw_minimal.toml", 2, a, "--mc-runs 100 --seed 1"), -1);
  ASSERT_NE(run_case(kSource + "/tests/cases/hcw_minimal.toml", 2, b, "--mc-runs 100 --seed 2"), -1);
  const sigmatube::test::FileComparison c = sigmatube::test::compare_result_files(a, b);
  EXPECT_GT(c.differences, 0) << c.report;
}

}  // namespace
