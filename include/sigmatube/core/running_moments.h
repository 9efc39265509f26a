// SPDX-License-Identifier: MIT
#pragma once
// Merge of two partial sums of moments (count n, mean, M2 = Σ (x − mean)²) over
// disjoint sample sets, by Chan, Golub & LeVeque, "Updating formulae and a
// pairwise algorithm for computing sample variances" (1979):
//   δ = mean_b − mean_a,  mean = mean_a + δ·n_b/n,  M2 = M2_a + M2_b + δ²·n_a·n_b/n.
// Works elementwise on a double or on Eigen arrays/vectors. Merging in a fixed
// order gives bit-identical results whatever the number of threads.
#include <type_traits>

#include <Eigen/Core>

// Layer core/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube {

template <class Value>
void merge_moments(long long n_a, Value& mean_a, Value& m2_a, long long n_b, const Value& mean_b, const Value& m2_b) {
  if (n_b == 0) return;
  if (n_a == 0) {
    mean_a = mean_b;
    m2_a = m2_b;
    return;
  }
  const double n = static_cast<double>(n_a + n_b);
  const Value delta = mean_b - mean_a;
  mean_a += delta * (static_cast<double>(n_b) / n);
  if constexpr (std::is_arithmetic_v<Value>)
    m2_a += m2_b + delta * delta * (static_cast<double>(n_a) * static_cast<double>(n_b) / n);
  else
    m2_a += m2_b + delta.cwiseProduct(delta) * (static_cast<double>(n_a) * static_cast<double>(n_b) / n);
}

}  // namespace sigmatube
