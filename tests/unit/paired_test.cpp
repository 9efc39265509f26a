// SPDX-License-Identifier: MIT
// The paired statistics of paired.h: exact McNemar p-values against SciPy's
// binomtest, Holm's step-down adjustment against the definition worked by hand,
// the Agresti–Min interval against its closed form and its coverage on seeded
// paired Bernoulli data, and the paired counts of add_paired_runs on a hand-made table.
#include "sigmatube/montecarlo/paired.h"

#include <gtest/gtest.h>

#include "python_reference.h"

#include <cmath>
#include <cstdio>
#include <cstdlib>

#include "sigmatube/core/counter_rng.h"

namespace sigmatube::montecarlo {
namespace {

// Boost's binomial CDF and SciPy's agree to rounding: relative 1e-12 leaves room
// for the summation order of the two libraries.
constexpr double kRelativeTolerance = 1e-12;

TEST(Paired, ExactMcNemarMatchesScipyBinomtest) {
  const std::vector<std::pair<long long, long long>> tables = {{3, 17}, {14, 0}, {40, 21}, {0, 0}, {5, 5}, {120, 95}};
  std::string program = "from scipy.stats import binomtest\n";
  for (const auto& [b, c] : tables) {
    if (b + c == 0) {
      program += "print(1.0)\n";
    } else {
      program += "print(repr(binomtest(" + std::to_string(b) + ", " + std::to_string(b + c) + ", 0.5).pvalue))\n";
    }
  }
  const std::vector<double> scipy = test::python_numbers(program);  // scipy.stats.binomtest, two-sided
  ASSERT_EQ(scipy.size(), tables.size());
  for (std::size_t i = 0; i < tables.size(); ++i) {
    const double p = exact_mcnemar_p(tables[i].first, tables[i].second);
    EXPECT_NEAR(p, scipy[i], kRelativeTolerance * scipy[i]) << tables[i].first << ", " << tables[i].second;
  }
}

TEST(Paired, SmallestDetectableDiscordanceIsTheBinaryLogarithmBound) {
  // 2·2^−m ≤ α: α = 1e-3 needs m = 11 (2^−10 = 9.8e-4 ≤ 1e-3 < 2^−9), closed form.
  EXPECT_EQ(smallest_detectable_discordance(1e-3), 11);
  EXPECT_EQ(smallest_detectable_discordance(0.05), 6);  // 2^−5 = 0.03125 ≤ 0.05 < 2^−4
  EXPECT_LE(exact_mcnemar_p(11, 0), 1e-3);
  EXPECT_GT(exact_mcnemar_p(10, 0), 1e-3);
}

TEST(Paired, HolmAdjustmentFollowsTheStepDownDefinition) {
  // Worked by hand from Holm (1979): sorted 0.01, 0.02, 0.03, 0.5 (m = 4) →
  // 4·0.01 = 0.04, max(0.04, 3·0.02 = 0.06) = 0.06, max(0.06, 2·0.03) = 0.06, max(0.06, 0.5) = 0.5.
  const std::vector<double> p = {0.03, 0.5, 0.01, 0.02};
  const std::vector<double> adjusted = holm_adjusted(p);
  EXPECT_DOUBLE_EQ(adjusted[2], 0.04);
  EXPECT_DOUBLE_EQ(adjusted[3], 0.06);
  EXPECT_DOUBLE_EQ(adjusted[0], 0.06);
  EXPECT_DOUBLE_EQ(adjusted[1], 0.5);
  // NaN entries are not tests: the other two behave as m = 2.
  const std::vector<double> partial = holm_adjusted({0.01, std::nan(""), 0.3});
  EXPECT_DOUBLE_EQ(partial[0], 0.02);
  EXPECT_TRUE(std::isnan(partial[1]));
  EXPECT_DOUBLE_EQ(partial[2], 0.3);
  // Capped at 1.
  EXPECT_DOUBLE_EQ(holm_adjusted({0.6, 0.7})[0], 1.0);
}

TEST(Paired, AgrestiMinIntervalMatchesItsClosedForm) {
  // b = 30, c = 10, n = 1000: d̃ = 20/1002, var = (41 − 400/1002)/1002², z = 1.959964.
  const PairedDifference d = paired_difference(30, 10, 1000, 0.95);
  const double centre = 20.0 / 1002.0;
  const double half = 1.959963984540054 * std::sqrt((41.0 - 400.0 / 1002.0) / (1002.0 * 1002.0));
  EXPECT_DOUBLE_EQ(d.estimate, 0.02);
  EXPECT_NEAR(d.lower, centre - half, 1e-15);
  EXPECT_NEAR(d.upper, centre + half, 1e-15);
}

TEST(Paired, AgrestiMinIntervalCoversOnSeededPairedData) {
  // Paired Bernoulli pairs with P(S only) = 0.01, P(M only) = 0.004, P(both) = 0.02:
  // true difference 0.006. Coverage of the 95 % interval over 400 seeded tables of
  // n = 2000 must be ≥ 93 % (Agresti & Min 2005 report near-nominal coverage; 93 %
  // leaves 3.5 binomial standard deviations of 400 tables below 95 %).
  const int tables = std::getenv("SIGMATUBE_SANITIZED") ? 100 : 400;
  const long long n = 2000;
  int covered = 0;
  for (int s = 0; s < tables; ++s) {
    const CounterRng rng(1000 + static_cast<unsigned long long>(s));
    long long b = 0, c = 0;
    for (long long i = 0; i < n; ++i) {
      const double u = rng.uniform(static_cast<std::uint64_t>(i), 0);
      if (u < 0.01) ++b;
      else if (u < 0.014) ++c;
    }
    const PairedDifference d = paired_difference(b, c, n, 0.95);
    if (d.lower <= 0.006 && 0.006 <= d.upper) ++covered;
  }
  const double coverage = static_cast<double>(covered) / tables;
  std::printf("Agresti-Min coverage %.3f over %d tables\n", coverage, tables);
  EXPECT_GE(coverage, tables == 400 ? 0.93 : 0.90);
}

TEST(Paired, CountsFollowTheTwoByTwoTable) {
  // One output g at two report times, clearance = g (half-space, normal −1, offset 0).
  casefile::ConstraintOptions o;
  o.name = "g";
  o.type = casefile::ConstraintKind::half_space;
  o.position = {"g"};
  o.normal = {-1.0};
  o.offset = 0.0;
  o.max_probability = 0.1;
  const std::vector<constraints::Constraint> list = {constraints::Constraint(o, {"g"})};
  const Eigen::VectorXd times = (Eigen::VectorXd(2) << 0.0, 1.0).finished();
  Eigen::MatrixXd model(4, 2), surrogate(4, 2);
  // run 0: both violate at t0; run 1: surrogate only at t1; run 2: model only at t0; run 3: neither.
  model << -1, 1, 1, 1, -0.5, 2, 1, 1;
  surrogate << -2, 1, 1, -0.1, 0.5, 2, 1, 1;
  std::vector<PairedCounts> counts;
  add_paired_runs(list, times, 1, model, surrogate, {0, 0, 1, 0}, counts);
  ASSERT_EQ(counts.size(), 1u);
  EXPECT_EQ(counts[0].runs, 4);
  EXPECT_EQ(counts[0].both, 1);
  EXPECT_EQ(counts[0].surrogate_only, 1);
  EXPECT_EQ(counts[0].model_only, 1);
  EXPECT_EQ(counts[0].surrogate_only_t, (std::vector<long long>{0, 1}));
  EXPECT_EQ(counts[0].model_only_t, (std::vector<long long>{1, 0}));
  EXPECT_EQ(counts[0].discordant_saturated, 1);  // run 2 saturated
  // Path-minimum errors: −1, −1.1, 1.0, 0 → Σe² = 3.21; tail (runs 0–2) the same.
  EXPECT_NEAR(counts[0].sum_e2, 1.0 + 1.21 + 1.0, 1e-12);
  EXPECT_EQ(counts[0].tail_runs, 3);
}

}  // namespace
}  // namespace sigmatube::montecarlo
