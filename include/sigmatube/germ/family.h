// SPDX-License-Identifier: MIT
#pragma once
// The Wiener–Askey families used for germ variables (Xiu & Karniadakis, "The
// Wiener–Askey polynomial chaos for stochastic differential equations", SIAM J.
// Sci. Comput. 24, 2002). Each germ variable is standardized:
//   hermite   ξ ~ N(0, 1)                        weight e^{-ξ²/2}/√(2π) on ℝ
//   legendre  ξ ~ U(-1, 1)                       weight 1/2 on [-1, 1]
//   jacobi    ξ on [-1, 1] with density ∝ (1-ξ)^a (1+ξ)^b, a, b > -1
//   laguerre  ξ ~ Gamma(a + 1, 1) on [0, ∞)       density ∝ ξ^a e^{-ξ}, a > -1
// Polynomials are orthonormal under the probability measure: E[ψ_i ψ_j] = δ_ij.
#include <string>

// Layer germ/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::germ {

enum class Family { hermite, legendre, jacobi, laguerre };

struct FamilySpec {
  Family family = Family::hermite;
  double a = 0.0;  // jacobi: exponent of (1-ξ); laguerre: exponent of ξ
  double b = 0.0;  // jacobi: exponent of (1+ξ)
  bool operator==(const FamilySpec&) const = default;
};

/// "hermite", "legendre", "jacobi(a=…, b=…)", "laguerre(a=…)"; the exponents in
/// the shortest form that reads back exactly.
std::string to_string(const FamilySpec& spec);
/// The inverse of to_string (as stored in result files). Throws
/// std::invalid_argument for any other text.
FamilySpec family_from_string(const std::string& text);

/// Map a standard normal z to the germ variable with the same CDF value
/// (ξ = F⁻¹(Φ(z))); identity for hermite. Used for all sampling so that every
/// sampler (surrogate, Monte Carlo, importance sampling) works in one space.
double from_standard_normal(const FamilySpec& spec, double z);
/// The inverse map z = Φ⁻¹(F(ξ)).
double to_standard_normal(const FamilySpec& spec, double xi);

}  // namespace sigmatube::germ
