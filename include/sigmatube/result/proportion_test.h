// SPDX-License-Identifier: MIT
#pragma once
// One-sided tests that a failure proportion rose from a base sample to a
// candidate sample: the noise allowance of the release gate (compare.h).
#include <string>

// Layer result/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::result {

struct ProportionTest {
  std::string method;  // "pooled z" | "Fisher exact" | "normal z"
  double z = 0.0;      // the statistic (NaN for Fisher's exact test)
  double p_value = 1.0;
};

/// Pooled two-proportion score test of H0: p_c ≤ p_b against p_c > p_b,
///   p̂ = (x_b + x_c)/(n_b + n_c),  z = (x_c/n_c − x_b/n_b) / √(p̂(1−p̂)(1/n_b + 1/n_c)),
///   p-value = 1 − Φ(z)
/// (e.g. Agresti, "Categorical Data Analysis", 3rd ed., Wiley 2013, §3.1).
/// When p̂ is 0 or 1 both proportions are equal: z = 0, p-value = 0.5. Throws
/// std::invalid_argument for counts outside 0 ≤ x ≤ n, n ≥ 1.
ProportionTest pooled_z_test(long long x_base, long long n_base, long long x_candidate, long long n_candidate);

/// Fisher's exact test, one-sided (candidate greater), conditional on the
/// total count K = x_b + x_c: p-value = P(X ≥ x_c), X ~ Hypergeometric(total
/// n_b + n_c, successes K, draws n_c) (Fisher, "Statistical Methods for
/// Research Workers", 1925; Agresti 2013, §3.5). Exact for small counts.
ProportionTest fisher_exact_greater(long long x_base, long long n_base, long long x_candidate, long long n_candidate);

/// The gate's choice: Fisher's exact test when the smallest expected cell
/// count of the 2×2 table under H0, min(n_i p̂, n_i (1−p̂)), is below 5
/// (Cochran's rule, common practice), the pooled z test otherwise.
ProportionTest one_sided_increase_test(long long x_base, long long n_base, long long x_candidate,
                                       long long n_candidate);

/// Two independent estimates with standard errors (e.g. surrogate sampling):
///   z = (p_c − p_b)/√(se_b² + se_c²),  p-value = 1 − Φ(z).
/// NaN standard errors count as 0; with both 0, z = ±inf (or 0 when equal).
ProportionTest normal_difference_test(double p_base, double se_base, double p_candidate, double se_candidate);

}  // namespace sigmatube::result
