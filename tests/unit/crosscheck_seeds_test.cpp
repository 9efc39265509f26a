// SPDX-License-Identifier: MIT
// The paired cross-check (montecarlo/agreement.h) over many seeds on closed-form
// limit states, where the exact probabilities are normal tail values (Boost.Math):
//   - a correct surrogate gives "disagree" (exit 3) on at most 1 of 20 seeds;
//   - a surrogate whose probability is 40 % too high is caught at 2000 runs on at
//     least 4 of 5 seeds;
//   - an output no constraint reads decides nothing, only warns;
//   - bounds the runs cannot resolve say "too few runs to tell".
#include "sigmatube/montecarlo/agreement.h"

#include <gtest/gtest.h>

#include <boost/math/distributions/normal.hpp>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <functional>

#include "sigmatube/core/counter_rng.h"

namespace sigmatube::montecarlo {
namespace {

const boost::math::normal_distribution<double> kNormal(0.0, 1.0);
double upper_quantile(double p) { return boost::math::quantile(boost::math::complement(kNormal, p)); }

// Outputs g1, g2, g3 and an unused "speed"; two report times, the second +1 so that the
// path minimum is the first time's value. Constraint k: violation when g_k < 0.
const std::vector<std::string> kOutputs = {"g1", "g2", "g3", "speed"};
constexpr int kOut = 4;
const Eigen::VectorXd kTimes = (Eigen::VectorXd(2) << 0.0, 1.0).finished();

constraints::Constraint half_space(const std::string& output, double epsilon) {
  casefile::ConstraintOptions o;  // clearance = g
  o.name = "keep-" + output;
  o.type = casefile::ConstraintKind::half_space;
  o.position = {output};
  o.normal = {-1.0};
  o.offset = 0.0;
  o.max_probability = epsilon;
  return constraints::Constraint(o, kOutputs);
}

// Exact path probabilities: P(ξ₁ > β₁) = 0.0183, P(ξ₂ > β₂) = 0.05, P((ξ₁ + ξ₂)/√2 > β₃) = 0.1.
const double kP1 = 0.0183, kP2 = 0.05, kP3 = 0.1;
const double kBeta1 = upper_quantile(kP1), kBeta2 = upper_quantile(kP2), kBeta3 = upper_quantile(kP3);

using Function = std::function<void(const double* xi, double* g)>;  // g[0..3] at t0

void fill_row(const Function& f, const double* xi, double* row) {
  double g[kOut];
  f(xi, g);
  for (int o = 0; o < kOut; ++o) {
    row[o] = g[o];
    row[kOut + o] = g[o] + 1.0;
  }
}

void exact_model(const double* xi, double* g) {
  g[0] = kBeta1 - xi[0];
  g[1] = kBeta2 - xi[1];
  g[2] = kBeta3 - (xi[0] + xi[1]) / std::sqrt(2.0);
  g[3] = std::abs(xi[0]);  // a kinked derived output no constraint reads
}

// A good surrogate: a small smooth misfit on every constraint output (1 % of the
// spread), and a poor fit of the kink in the unused output.
void correct_surrogate(const double* xi, double* g) {
  exact_model(xi, g);
  for (int o = 0; o < 3; ++o) g[o] += 0.01 * xi[0] * xi[1];
  g[3] = 0.8 + 0.3 * xi[0] * xi[0];  // a quadratic through a kink: RMSE/std ≫ 5 %
}

// Constraint 1 biased: its probability is 1.4 × 0.0183 = 0.0256.
void biased_surrogate(const double* xi, double* g) {
  correct_surrogate(xi, g);
  g[0] = upper_quantile(1.4 * kP1) - xi[0];
}

std::vector<constraints::Constraint> three_constraints() {
  return {half_space("g1", 0.03), half_space("g2", 0.08), half_space("g3", 0.15)};
}

// Surrogate-sample statistics (the numbers a run reports), from 200000 seeded samples.
constraints::ViolationResults surrogate_statistics(const std::vector<constraints::Constraint>& list, const Function& f) {
  const CounterRng rng(99);
  return constraints::stream_violation_statistics(list, kTimes, kOut, 200000, 4096, 2,
                                                  [&](long long begin, long long end, Eigen::MatrixXd& Y) {
                                                    double xi[2], row[2 * kOut];
                                                    for (long long i = begin; i < end; ++i) {
                                                      xi[0] = rng.normal(static_cast<std::uint64_t>(i), 0);
                                                      xi[1] = rng.normal(static_cast<std::uint64_t>(i), 1);
                                                      fill_row(f, xi, row);
                                                      for (int c = 0; c < 2 * kOut; ++c) Y(i - begin, c) = row[c];
                                                    }
                                                  });
}

MonteCarloResult run(const std::vector<constraints::Constraint>& list, const Function& surrogate, long long runs,
                     unsigned long long seed, int threads = 2) {
  casefile::MonteCarloOptions options;
  options.runs = runs;
  options.seed = seed;
  MonteCarloRunOptions run_options;
  run_options.threads = threads;
  const std::vector<germ::FamilySpec> families(2, germ::FamilySpec{});
  return run_monte_carlo(
      options, families, kTimes, kOut, list,
      [](const double* xi, long long, double* outputs, std::string*) {
        fill_row(exact_model, xi, outputs);
        return true;
      },
      run_options,
      [&](const Eigen::MatrixXd& xi, Eigen::MatrixXd& values) {
        double row[2 * kOut];
        for (Eigen::Index i = 0; i < xi.rows(); ++i) {
          const double point[2] = {xi(i, 0), xi(i, 1)};
          fill_row(surrogate, point, row);
          for (int c = 0; c < 2 * kOut; ++c) values(i, c) = row[c];
        }
      });
}

AgreementOptions agreement_options(const std::vector<constraints::Constraint>& list) {
  AgreementOptions options;
  for (const auto& c : list) options.constraint_outputs.push_back(c.output_indices());
  options.output_names = kOutputs;
  options.times = kTimes;
  return options;
}

int seeds(int full) { return std::getenv("SIGMATUBE_SANITIZED") ? std::max(3, full / 4) : full; }

TEST(CrossCheckSeeds, CorrectSurrogateDisagreesOnAtMostOneOfTwentySeeds) {
  const auto list = three_constraints();
  const auto stats = surrogate_statistics(list, correct_surrogate);
  const int n_seeds = seeds(20);
  int disagree = 0, unknown = 0;
  for (int s = 0; s < n_seeds; ++s) {
    const auto mc = run(list, correct_surrogate, 2000, 1000 + static_cast<unsigned long long>(s));
    const Agreement a = assess_agreement(stats, mc, agreement_options(list));
    if (a.overall == Verdict::disagree) ++disagree;
    if (a.overall == Verdict::too_few_runs) ++unknown;
    // The kinked speed output fails validation but no constraint reads it: a warning naming it.
    EXPECT_TRUE(a.validation_ok);
    ASSERT_EQ(a.warnings.size(), 1u);
    EXPECT_NE(a.warnings[0].find("speed at t = "), std::string::npos) << a.warnings[0];
  }
  std::printf("correct surrogate: %d of %d seeds disagree, %d too few runs to tell\n", disagree, n_seeds, unknown);
  EXPECT_LE(disagree, 1);  // issue 10: "on 20 seeds a correct surrogate never (≤ 1) gives exit 3"
}

TEST(CrossCheckSeeds, FortyPercentBiasIsCaughtAtTwoThousandRuns) {
  // One constraint, as in the case of the issue (exact 0.0183, surrogate 0.0256): about
  // 2000·0.0073 ≈ 15 surrogate-only runs are expected, and 11 one-sided ones reach
  // p ≤ 1e-3; the exact test has about 85 % power per seed here.
  const std::vector<constraints::Constraint> list = {half_space("g1", 0.03)};
  const auto stats = surrogate_statistics(list, biased_surrogate);
  const int n_seeds = 5;
  int caught = 0;
  for (int s = 0; s < n_seeds; ++s) {
    const auto mc = run(list, biased_surrogate, 2000, 2000 + static_cast<unsigned long long>(s));
    const Agreement a = assess_agreement(stats, mc, agreement_options(list));
    const auto& c = a.constraints[0];
    std::printf("seed %d: %lld surrogate-only, %lld model-only, McNemar p %.3g, Holm %.3g -> %s\n", s, c.surrogate_only,
                c.model_only, c.mcnemar_p, c.holm_p, to_string(c.verdict).c_str());
    if (c.verdict == Verdict::disagree) {
      ++caught;
      EXPECT_EQ(a.overall, Verdict::disagree);
      // The shift (0.18 of g1's spread) is a bulk error: g1's validation RMSE/std is
      // 0.18 > 0.05, so the cause names the fit of g1 and its worst time.
      EXPECT_EQ(c.cause, "degree too low (g1 at t = 0 s)");
      EXPECT_NE(a.cause.find("keep-g1"), std::string::npos) << a.cause;
    }
  }
  EXPECT_GE(caught, 4);  // issue 10: "caught at 2000 runs in ≥ 4 of 5 seeds"
}

TEST(CrossCheckSeeds, PairedCountsDoNotDependOnTheThreadCount) {
  const auto list = three_constraints();
  const auto one = run(list, biased_surrogate, 1000, 5, 1);
  const auto two = run(list, biased_surrogate, 1000, 5, 2);
  ASSERT_EQ(one.paired.size(), 3u);
  for (std::size_t k = 0; k < 3; ++k) {
    EXPECT_EQ(one.paired[k].surrogate_only, two.paired[k].surrogate_only);
    EXPECT_EQ(one.paired[k].model_only, two.paired[k].model_only);
    EXPECT_EQ(one.paired[k].sum_e2, two.paired[k].sum_e2);
  }
  EXPECT_EQ(one.validation_rmse_by_time, two.validation_rmse_by_time);
}

TEST(CrossCheckSeeds, BoundsTheRunsCannotResolveAreTooFewRunsToTell) {
  // ε = 1e-4 with 2000 runs: a difference that could flip the verdict is ~1e-4, i.e.
  // 0.2 discordant runs, far below the 11 a test at 1e-3 needs.
  std::vector<constraints::Constraint> list = {half_space("g1", 1e-4)};
  const Function rare = [](const double* xi, double* g) {
    g[0] = 5.0 - xi[0];  // P = Φ(−5) ≈ 2.9e-7
    g[1] = g[2] = 1.0;
    g[3] = 0.0;
  };
  const auto stats = surrogate_statistics(list, rare);
  casefile::MonteCarloOptions options;
  options.runs = 2000;
  options.seed = 1;
  const std::vector<germ::FamilySpec> families(2, germ::FamilySpec{});
  const auto mc = run_monte_carlo(
      options, families, kTimes, kOut, list,
      [&](const double* xi, long long, double* out, std::string*) {
        fill_row(rare, xi, out);
        return true;
      },
      {}, [&](const Eigen::MatrixXd& xi, Eigen::MatrixXd& values) {
        double row[2 * kOut];
        for (Eigen::Index i = 0; i < xi.rows(); ++i) {
          const double point[2] = {xi(i, 0), xi(i, 1)};
          fill_row(rare, point, row);
          for (int c = 0; c < 2 * kOut; ++c) values(i, c) = row[c];
        }
      });
  const Agreement a = assess_agreement(stats, mc, agreement_options(list));
  EXPECT_EQ(a.constraints[0].verdict, Verdict::too_few_runs) << a.summary;
  EXPECT_EQ(a.overall, Verdict::too_few_runs);
  EXPECT_EQ(to_string(a.overall), "too few runs to tell");
}

}  // namespace
}  // namespace sigmatube::montecarlo
