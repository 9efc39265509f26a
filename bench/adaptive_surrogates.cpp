// SPDX-License-Identifier: MIT
// Benchmark (not a test): surrogates for 20 uncertain inputs of which 3 matter.
// The model is the Ishigami function of the first three inputs (Ishigami & Homma
// 1990; analytic moments and Sobol indices as in Sudret 2008) and 17 inert
// inputs, all U(−π, π). Prints, side by side, runs and errors of
//   adaptive-sparse-grid, sparse-regression (budget 1500 runs each), and the
//   isotropic nested Clenshaw–Curtis sparse grid at levels 2…4 (the run count of
//   higher levels is printed without running them).
// Targets (docs/performance.md): mean and variance within 1e-3 relative, first
// and total Sobol indices within 2e-3, from ≤ 1500 model runs.
//   build-bench/bench/sigmatube_adaptive_bench
#include <chrono>
#include <cmath>
#include <cstdio>
#include <numbers>
#include <vector>

#include "sigmatube/core/counter_rng.h"
#include "sigmatube/design/sparse_grid.h"
#include "sigmatube/expansion/surrogate.h"

using namespace sigmatube;

namespace {

constexpr double kPi = std::numbers::pi;
constexpr int kInputs = 20;
constexpr int kBudget = 1500;
constexpr double a = 7.0, b = 0.1;

double ishigami(const double* xi) {
  const double x1 = kPi * xi[0], x2 = kPi * xi[1], x3 = kPi * xi[2];
  return std::sin(x1) + a * std::sin(x2) * std::sin(x2) + b * std::pow(x3, 4) * std::sin(x1);
}

struct Exact {
  double mean = a / 2;
  double v1 = std::pow(1 + b * std::pow(kPi, 4) / 5, 2) / 2, v2 = a * a / 8;
  double v13 = b * b * std::pow(kPi, 8) * (1.0 / 18 - 1.0 / 50);
  double v = v1 + v2 + v13;
};

void report(const char* label, const expansion::Surrogate& s, int runs, double estimate, double seconds) {
  const Exact e;
  const Eigen::MatrixXd first = s.sobol_first(), total = s.sobol_total();
  const double var = s.std()(0, 0) * s.std()(0, 0);
  const double exact_first[3] = {e.v1 / e.v, e.v2 / e.v, 0.0};
  const double exact_total[3] = {(e.v1 + e.v13) / e.v, e.v2 / e.v, e.v13 / e.v};
  double worst_first = 0.0, worst_total = 0.0;
  for (int k = 0; k < kInputs; ++k) {
    worst_first = std::max(worst_first, std::abs(first(0, k) - (k < 3 ? exact_first[k] : 0.0)));
    worst_total = std::max(worst_total, std::abs(total(0, k) - (k < 3 ? exact_total[k] : 0.0)));
  }
  // Measured relative RMSE on 20000 fresh points.
  const CounterRng rng(20261203ULL);
  const int n = 20000;
  Eigen::MatrixXd x(n, kInputs);
  for (int i = 0; i < n; ++i)
    for (int k = 0; k < kInputs; ++k) x(i, k) = 2.0 * rng.uniform(i, k) - 1.0;
  Eigen::MatrixXd fitted;
  s.evaluate(x, fitted);
  double se = 0.0;
  for (int i = 0; i < n; ++i) {
    const Eigen::RowVectorXd row = x.row(i);
    se += std::pow(fitted(i, 0) - ishigami(row.data()), 2);
  }
  const double rmse = std::sqrt(se / n) / std::sqrt(e.v);
  std::printf("%-28s %6d %11.2e %11.2e %11.2e %11.2e %11.2e %11.2e %7.2f %8.2f\n", label, runs,
              std::abs(s.mean()(0, 0) / e.mean - 1), std::abs(var / e.v - 1), worst_first, worst_total, rmse, estimate,
              estimate / rmse, seconds);
}

}  // namespace

int main() {
  const std::vector<germ::FamilySpec> families(kInputs, germ::FamilySpec{germ::Family::legendre});
  const expansion::ModelEvaluator evaluate = [](const Eigen::MatrixXd& x, Eigen::MatrixXd& y) {
    y.resize(x.rows(), 1);
    for (Eigen::Index i = 0; i < x.rows(); ++i) {
      const Eigen::RowVectorXd row = x.row(i);
      y(i, 0) = ishigami(row.data());
    }
  };
  std::printf("Ishigami (3 active) + 17 inert inputs, budget %d runs; targets: mean/var rel <= 1e-3, Sobol <= 2e-3\n",
              kBudget);
  std::printf("%-28s %6s %11s %11s %11s %11s %11s %11s %7s %8s\n", "method", "runs", "mean rel", "var rel",
              "first abs", "total abs", "rel RMSE", "estimate", "ratio", "seconds");
  for (const auto method : {casefile::SurrogateMethod::adaptive_sparse_grid, casefile::SurrogateMethod::sparse_regression}) {
    casefile::SurrogateOptions o;
    o.method = method;
    o.tolerance = 1e-4;
    o.max_model_runs = kBudget;
    expansion::SurrogateSummary summary;
    const auto t0 = std::chrono::steady_clock::now();
    const expansion::Surrogate s = expansion::build_surrogate(families, 1, 1, o, evaluate, &summary);
    const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    report(summary.method.c_str(), s, summary.model_runs, summary.error_estimate[0], seconds);
    for (const auto& note : summary.notes) std::printf("    %s\n", note.c_str());
  }
  for (int level = 2; level <= 6; ++level) {
    char label[64];
    std::snprintf(label, sizeof label, "isotropic CC level %d", level);
    if (level <= 4) {
      casefile::SurrogateOptions o;
      o.method = casefile::SurrogateMethod::sparse_grid;
      o.level = level;
      o.nested = true;
      o.max_model_runs = 1000000;
      expansion::SurrogateSummary summary;
      const auto t0 = std::chrono::steady_clock::now();
      const expansion::Surrogate s = expansion::build_surrogate(families, 1, 1, o, evaluate, &summary);
      const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
      report(label, s, summary.model_runs, summary.error_estimate[0], seconds);
    } else {
      std::printf("%-28s %6d   (not run: grid size only)\n", label, design::sparse_grid_size(families, level, true));
    }
  }
  return 0;
}
