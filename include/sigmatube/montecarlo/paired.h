// SPDX-License-Identifier: MIT
#pragma once
// Paired comparison of surrogate and full model on the same Monte Carlo germ points.
//
// Every successful run i is classified twice for a constraint: violated by the
// surrogate (S_i) and violated by the model (M_i). Of the 2×2 table only the
// discordant cells carry information about a difference:
//     b = #{S_i ∧ ¬M_i}  (surrogate-only violations),  c = #{¬S_i ∧ M_i}  (model-only).
// The paired difference of the probabilities is d = p_S − p_M = (b − c)/n.
//
//   exact McNemar test   under H0 (p_S = p_M) b | b + c ~ Binomial(b + c, 1/2);
//                        two-sided p = min(1, 2·P(X ≤ min(b, c))) (Q. McNemar, "Note on
//                        the sampling error of the difference between correlated
//                        proportions or percentages", Psychometrika 12(2), 1947; the
//                        exact conditional form is the sign test on discordant pairs).
//   interval for d       Wald interval after adding ½ to every cell of the 2×2 table
//                        (A. Agresti & Y. Min, "Simple improved confidence intervals for
//                        comparing matched proportions", Statistics in Medicine 24, 2005):
//                        d̃ = (b − c)/(n + 2), var = ((b + c + 1) − (b − c)²/(n + 2))/(n + 2)²,
//                        d̃ ± z·√var clipped to [−1, 1].
//   Holm step-down       family-wise error ≤ α over m tests (S. Holm, "A simple
//                        sequentially rejective multiple test procedure", Scand. J.
//                        Statistics 6, 1979): adjusted p̃_(i) = max_{j ≤ i} min(1, (m − j + 1) p_(j))
//                        for p-values sorted ascending; reject where p̃ ≤ α.
#include <cstdint>
#include <vector>

#include <Eigen/Core>

#include "sigmatube/constraints/constraint.h"

namespace sigmatube::montecarlo {

/// Two-sided exact McNemar p-value for b surrogate-only and c model-only discordant runs.
double exact_mcnemar_p(long long b, long long c);

/// Holm-adjusted p-values, same order as `p`. NaN entries are left NaN and not counted.
std::vector<double> holm_adjusted(const std::vector<double>& p);

/// Smallest number of one-sided discordant runs (b + c = m, min(b, c) = 0) whose exact
/// McNemar p-value is ≤ level: ⌈log2(2/level)⌉.
long long smallest_detectable_discordance(double level);

struct PairedDifference {
  double estimate = 0.0;  // (b − c)/n
  double lower = 0.0, upper = 0.0;
};
/// Agresti–Min interval for p_S − p_M; n = 0 gives [−1, 1].
PairedDifference paired_difference(long long b, long long c, long long n, double confidence);

/// The paired counts of one constraint over the compared runs.
struct PairedCounts {
  long long runs = 0;                         // compared (successful) runs
  long long both = 0, surrogate_only = 0, model_only = 0;   // path violations (any window time)
  std::vector<long long> both_t, surrogate_only_t, model_only_t;  // [T], per report time
  long long discordant_saturated = 0;         // path-discordant runs that saturated an input
  // Path-minimum clearance error e = c_S − c_M: moments over all runs, and over the
  // runs that either side violates (the tail the probability is made of).
  double sum_e2 = 0.0, sum_e4 = 0.0;
  long long tail_runs = 0;
  double tail_sum_e2 = 0.0;

  void merge(const PairedCounts& later);
};

/// Adds runs to `counts` (one entry per constraint, sized on first use).
/// model, surrogate: [n, T·n_out] outputs of the same runs; saturated: [n] (may be empty).
void add_paired_runs(const std::vector<constraints::Constraint>& constraints, const Eigen::VectorXd& times_in_seconds,
                     int n_outputs, const Eigen::Ref<const Eigen::MatrixXd>& model,
                     const Eigen::Ref<const Eigen::MatrixXd>& surrogate, const std::vector<std::uint8_t>& saturated,
                     std::vector<PairedCounts>& counts);

}  // namespace sigmatube::montecarlo
