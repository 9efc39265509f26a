// SPDX-License-Identifier: MIT
#pragma once
// Exact two-sided binomial confidence interval of C. J. Clopper & E. S. Pearson,
// "The use of confidence or fiducial limits illustrated in the case of the
// binomial", Biometrika 26(4), 1934. For k successes in n trials and α = 1 − confidence:
//   lower = B⁻¹(α/2; k, n − k + 1)       (0 when k = 0)
//   upper = B⁻¹(1 − α/2; k + 1, n − k)   (1 when k = n)
// with B⁻¹(q; a, b) the inverse regularized incomplete beta function (Boost.Math
// ibeta_inv). Each one-sided limit has coverage ≥ 1 − α/2 for every p.

// Layer montecarlo/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::montecarlo {

struct BinomialInterval {
  double lower = 0.0;
  double upper = 1.0;
  double half_width() const { return 0.5 * (upper - lower); }
  bool contains(double p) const { return p >= lower && p <= upper; }
};

/// @throws std::logic_error unless 0 ≤ k ≤ n and 0 < confidence < 1. n = 0 gives [0, 1].
BinomialInterval clopper_pearson(long long k, long long n, double confidence);

}  // namespace sigmatube::montecarlo
