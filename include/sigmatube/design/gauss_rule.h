// SPDX-License-Identifier: MIT
#pragma once
// n-point Gauss rule of a Wiener–Askey family by Golub & Welsch ("Calculation of
// Gauss quadrature rules", Math. Comp. 23, 1969): the nodes are the eigenvalues of
// the symmetric Jacobi matrix
//   J = tridiag(√β_k; α_k; √β_{k+1}),  k = 0…n−1   (design/orthonormal_polynomials.h),
// polished by Newton steps on ψ_n; the weights are the Christoffel numbers
//   w_j = 1 / Σ_{k<n} ψ_k(x_j)²,
// which equal the squared first eigenvector components but keep relative accuracy
// for the tiny tail weights. Exact for polynomials of degree ≤ 2n − 1.
#include "sigmatube/design/quadrature_rule.h"
#include "sigmatube/germ/family.h"

// Layer design/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::design {

/// Throws std::logic_error for n < 1, InputError for invalid family exponents,
/// NumericalError when the eigen solver fails.
QuadratureRule gauss_rule(const germ::FamilySpec& spec, int n);

}  // namespace sigmatube::design
