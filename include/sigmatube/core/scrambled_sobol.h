// SPDX-License-Identifier: MIT
#pragma once
// Randomized quasi-Monte Carlo points: the Sobol sequence (Sobol' 1967; the
// direction numbers of Joe & Kuo as shipped with Boost.Random's sobol engine)
// with a nested uniform scramble in the sense of Owen ("Scrambled net variance
// for integrals of smooth functions", Ann. Statist. 25, 1997), computed by the
// hash-based construction of Burley ("Practical hash-based Owen scrambling",
// JCGT 9(4), 2020): bit-reverse, a Laine–Karras permutation keyed per replicate
// and dimension, bit-reverse back. Each scrambled point is uniform on [0, 1)^d,
// independent scrambles (replicates) give independent unbiased estimates, so
// their spread is an honest standard error.
//
// Point i of replicate r depends on (seed, r, i) only: any chunk can be made by
// any thread or rank. Values are 32-bit (the cell midpoint): u ∈ (0, 1), never
// 0 or 1, the normal quantile of the extreme point is ±6.2.
#include <cstddef>
#include <cstdint>

namespace sigmatube {

class ScrambledSobol {
 public:
  /// @throws std::invalid_argument when dimension < 1 or above max_dimension().
  ScrambledSobol(int dimension, std::uint64_t seed, std::uint64_t replicate);

  /// Largest supported dimension (the direction-number table's).
  static int max_dimension();

  int dimension() const { return dimension_; }

  /// Points first … first + count − 1 into u[k·d + j] (uniform) or z[k·d + j]
  /// (standard normal, by the same inverse CDF as CounterRng::normal).
  void uniforms(std::uint64_t first, std::size_t count, double* u) const;
  void normals(std::uint64_t first, std::size_t count, double* z) const;

 private:
  int dimension_;
  std::uint32_t keys_[64] = {};  // per dimension (dimension ≤ 64 kept here; see max_dimension)
};

}  // namespace sigmatube
