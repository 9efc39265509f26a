// SPDX-License-Identifier: MIT
// The machine's GEMM rate with AVX2 and FMA: Eigen's matrix product built with
// -mavx2 -mfma (bench/CMakeLists.txt), one thread, CPU time of the thread. Used by
// sigmatube_bench --part sampling as the reference of (d). Arguments: m k n (the
// product [m, k]·[k, n]); prints the rate in FLOP/s (2·m·k·n per product).
#include <Eigen/Dense>
#include <cstdio>
#include <cstdlib>
#include <ctime>

namespace {
double thread_cpu() {
  timespec t;
  clock_gettime(CLOCK_THREAD_CPUTIME_ID, &t);
  return static_cast<double>(t.tv_sec) + 1e-9 * static_cast<double>(t.tv_nsec);
}
}  // namespace

int main(int argc, char** argv) {
  if (argc != 4) {
    std::fprintf(stderr, "usage: %s m k n\n", argv[0]);
    return 2;
  }
  const Eigen::Index m = std::atol(argv[1]), k = std::atol(argv[2]), n = std::atol(argv[3]);
  if (m < 1 || k < 1 || n < 1) {
    std::fprintf(stderr, "%s: sizes must be positive\n", argv[0]);
    return 2;
  }
  const Eigen::MatrixXd a = Eigen::MatrixXd::Random(m, k), b = Eigen::MatrixXd::Random(k, n);
  Eigen::MatrixXd c(m, n);
  c.noalias() = a * b;  // warm-up
  int reps = 0;
  const double c0 = thread_cpu();
  double elapsed = 0.0;
  do {
    c.noalias() = a * b;
    ++reps;
    elapsed = thread_cpu() - c0;
  } while (elapsed < 2.0);
  std::printf("%.6g\n", 2.0 * static_cast<double>(m) * static_cast<double>(k) * static_cast<double>(n) * reps / elapsed);
  return 0;
}
