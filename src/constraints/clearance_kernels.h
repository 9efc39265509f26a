// SPDX-License-Identifier: MIT
#pragma once
// Column-wise clearance kernels of the geometric constraints for positions of two
// or three coordinates (Constraint::clearance uses them; other sizes take the
// general row loop). They read the position's coordinates as contiguous columns
// (x[k][i] = coordinate k of row i) and write c[i], so that GCC vectorizes the row
// loop; multiversioned like the lane kernels (AVX2 and the x86-64 baseline, no FMA,
// compiled with -ffp-contract=off), with the IEEE operations of the row loop in
// the same order — the sums of squares and dot products in Eigen's order for
// vectors of 2 and 3 (left to right) — so the values are the same bits on every CPU.
#include <cstddef>

namespace sigmatube::constraints::kernels {

/// ‖p − center‖ − radius.
void sphere(int n, const double* const* x, std::ptrdiff_t rows, const double* center, double radius, double* c);
/// (‖(p − center) ∘ inverse_semi_axes‖ − 1) · min_semi_axis.
void ellipsoid(int n, const double* const* x, std::ptrdiff_t rows, const double* center,
               const double* inverse_semi_axes, double min_semi_axis, double* c);
/// Signed distance to the surface of the cone (apex, unit axis, sin and cos of the half angle), > 0 inside.
void cone(int n, const double* const* x, std::ptrdiff_t rows, const double* apex, const double* axis_unit,
          double sin_half, double cos_half, double* c);
/// (offset − normal·p) / normal_norm.
void half_space(int n, const double* const* x, std::ptrdiff_t rows, const double* normal, double offset,
                double normal_norm, double* c);

/// True for the position sizes these kernels take (2 and 3).
inline bool supported(std::size_t n) { return n == 2 || n == 3; }

}  // namespace sigmatube::constraints::kernels
