// SPDX-License-Identifier: MIT
#pragma once
// The tensor-product orthonormal basis ψ_α(ξ) = Π_k ψ^{(k)}_{α_k}(ξ_k), with
// ψ^{(k)} the orthonormal polynomials of germ dimension k
// (design/orthonormal_polynomials.h), so that E[ψ_α ψ_β] = δ_αβ for independent ξ_k.
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/expansion/surrogate.h"
#include "sigmatube/germ/family.h"

// Layer expansion/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::expansion {

/// Ψ[i, r] = ψ_{α_r}(points[i, :]), [N, P].
Eigen::MatrixXd basis_matrix(const std::vector<germ::FamilySpec>& families, const MultiIndexSet& indices,
                             const Eigen::MatrixXd& points);

/// The same into a preallocated block (rows = points.rows(), cols = indices.rows()).
void basis_matrix_into(const std::vector<germ::FamilySpec>& families, const MultiIndexSet& indices,
                       const Eigen::Ref<const Eigen::MatrixXd>& points, Eigen::Ref<Eigen::MatrixXd> psi);

}  // namespace sigmatube::expansion
