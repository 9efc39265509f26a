// SPDX-License-Identifier: MIT
#pragma once
// Orthonormal polynomials of the Wiener–Askey families (germ/family.h) under the
// probability measure, from the three-term recurrence of the monic polynomials
//   π_{k+1}(ξ) = (ξ − α_k) π_k(ξ) − β_k π_{k−1}(ξ),   π_0 = 1, π_{−1} = 0, β_0 = 1,
// normalized as ψ_k = π_k / √(β_1⋯β_k), so that
//   √β_{k+1} ψ_{k+1} = (ξ − α_k) ψ_k − √β_k ψ_{k−1},   E[ψ_i ψ_j] = δ_ij.
// Coefficients (Gautschi, "Orthogonal Polynomials: Computation and
// Approximation", Oxford 2004, Table 1.1, rescaled to unit mass):
//   hermite   N(0,1):             α_k = 0,          β_k = k
//   legendre  U(−1,1):            α_k = 0,          β_k = k²/(4k²−1)
//   jacobi    ∝(1−ξ)^a(1+ξ)^b:    α_k = (b²−a²)/((2k+a+b)(2k+a+b+2)),
//                                 β_k = 4k(k+a)(k+b)(k+a+b)/((2k+a+b)²(2k+a+b+1)(2k+a+b−1))
//   laguerre  Gamma(a+1,1):       α_k = 2k+a+1,     β_k = k(k+a)
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/germ/family.h"

// Layer design/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::design {

/// Monic recurrence coefficients α_0…α_{n−1}, β_0…β_{n−1} (β_0 = 1, the mass of
/// the probability measure). Throws InputError for jacobi/laguerre exponents ≤ −1.
struct RecurrenceCoefficients {
  std::vector<double> alpha;
  std::vector<double> beta;
};
RecurrenceCoefficients recurrence_coefficients(const germ::FamilySpec& spec, int n);

/// ψ_0 … ψ_max_degree of one family, evaluated in batches.
class OrthonormalPolynomials {
 public:
  OrthonormalPolynomials(const germ::FamilySpec& spec, int max_degree);

  int max_degree() const { return max_degree_; }
  const germ::FamilySpec& spec() const { return spec_; }

  /// values[i, k] = ψ_k(x[i]) for k = 0…max_degree; `values` must be
  /// [x.size(), max_degree+1]. Column by column, no allocation.
  void evaluate(const Eigen::Ref<const Eigen::VectorXd>& x, Eigen::Ref<Eigen::MatrixXd> values) const;
  /// ψ_n(x) and dψ_n/dx for n ≤ max_degree (used to polish Gauss nodes).
  void value_and_derivative(int n, double x, double& value, double& derivative) const;

 private:
  germ::FamilySpec spec_;
  int max_degree_;
  std::vector<double> alpha_;      // α_k
  std::vector<double> sqrt_beta_;  // √β_k, k = 0…max_degree (√β_0 = 1 unused)
};

}  // namespace sigmatube::design
