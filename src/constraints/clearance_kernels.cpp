// SPDX-License-Identifier: MIT
#include "clearance_kernels.h"

#include <cmath>
#include <stdexcept>

#if defined(__GNUC__) && defined(__x86_64__) && !defined(SIGMATUBE_NO_MULTIVERSIONING)
#define SIGMATUBE_CLEARANCE_TARGETS __attribute__((target_clones("avx2", "default")))
#else
#define SIGMATUBE_CLEARANCE_TARGETS
#endif
#define SIGMATUBE_INLINE inline __attribute__((always_inline))

namespace sigmatube::constraints::kernels {
namespace {

// Σ_k v_k in Eigen's reduction order for 2 and 3 terms: ((v0 + v1) + v2).
template <int N>
SIGMATUBE_INLINE double sum(const double* v) {
  double s = v[0] + v[1];
  if constexpr (N == 3) s = s + v[2];
  return s;
}

template <int N>
SIGMATUBE_INLINE void sphere_rows(const double* const* x, std::ptrdiff_t rows, const double* center, double radius,
                                  double* __restrict c) {
  for (std::ptrdiff_t i = 0; i < rows; ++i) {
    double sq[N];
    for (int k = 0; k < N; ++k) {
      const double d = x[k][i] - center[k];
      sq[k] = d * d;
    }
    c[i] = std::sqrt(sum<N>(sq)) - radius;
  }
}

template <int N>
SIGMATUBE_INLINE void ellipsoid_rows(const double* const* x, std::ptrdiff_t rows, const double* center,
                                     const double* inverse, double min_semi_axis, double* __restrict c) {
  for (std::ptrdiff_t i = 0; i < rows; ++i) {
    double sq[N];
    for (int k = 0; k < N; ++k) {
      const double d = (x[k][i] - center[k]) * inverse[k];
      sq[k] = d * d;
    }
    c[i] = (std::sqrt(sum<N>(sq)) - 1.0) * min_semi_axis;
  }
}

template <int N>
SIGMATUBE_INLINE void cone_rows(const double* const* x, std::ptrdiff_t rows, const double* apex, const double* axis,
                                double sin_half, double cos_half, double* __restrict c) {
  for (std::ptrdiff_t i = 0; i < rows; ++i) {
    double v[N], prod[N], sq[N], vv[N];
    for (int k = 0; k < N; ++k) {
      v[k] = x[k][i] - apex[k];
      prod[k] = v[k] * axis[k];
      vv[k] = v[k] * v[k];
    }
    const double h = sum<N>(prod);
    for (int k = 0; k < N; ++k) {
      const double w = v[k] - h * axis[k];
      sq[k] = w * w;
    }
    const double rho = std::sqrt(sum<N>(sq));
    const double across = h * sin_half - rho * cos_half;  // > 0 inside, distance to the generator line
    const double along = h * cos_half + rho * sin_half;   // ≥ 0: the nearest surface point is on the generator
    const double to_apex = -std::sqrt(sum<N>(vv));
    c[i] = across >= 0.0 ? across : (along >= 0.0 ? across : to_apex);
  }
}

template <int N>
SIGMATUBE_INLINE void half_space_rows(const double* const* x, std::ptrdiff_t rows, const double* normal, double offset,
                                      double normal_norm, double* __restrict c) {
  for (std::ptrdiff_t i = 0; i < rows; ++i) {
    double prod[N];
    for (int k = 0; k < N; ++k) prod[k] = normal[k] * x[k][i];
    c[i] = (offset - sum<N>(prod)) / normal_norm;
  }
}

SIGMATUBE_CLEARANCE_TARGETS void sphere2(const double* const* x, std::ptrdiff_t r, const double* a, double b, double* c) {
  sphere_rows<2>(x, r, a, b, c);
}
SIGMATUBE_CLEARANCE_TARGETS void sphere3(const double* const* x, std::ptrdiff_t r, const double* a, double b, double* c) {
  sphere_rows<3>(x, r, a, b, c);
}
SIGMATUBE_CLEARANCE_TARGETS void ellipsoid2(const double* const* x, std::ptrdiff_t r, const double* a, const double* e,
                                            double m, double* c) {
  ellipsoid_rows<2>(x, r, a, e, m, c);
}
SIGMATUBE_CLEARANCE_TARGETS void ellipsoid3(const double* const* x, std::ptrdiff_t r, const double* a, const double* e,
                                            double m, double* c) {
  ellipsoid_rows<3>(x, r, a, e, m, c);
}
SIGMATUBE_CLEARANCE_TARGETS void cone2(const double* const* x, std::ptrdiff_t r, const double* a, const double* u,
                                       double s, double co, double* c) {
  cone_rows<2>(x, r, a, u, s, co, c);
}
SIGMATUBE_CLEARANCE_TARGETS void cone3(const double* const* x, std::ptrdiff_t r, const double* a, const double* u,
                                       double s, double co, double* c) {
  cone_rows<3>(x, r, a, u, s, co, c);
}
SIGMATUBE_CLEARANCE_TARGETS void half_space2(const double* const* x, std::ptrdiff_t r, const double* nv, double o,
                                             double nn, double* c) {
  half_space_rows<2>(x, r, nv, o, nn, c);
}
SIGMATUBE_CLEARANCE_TARGETS void half_space3(const double* const* x, std::ptrdiff_t r, const double* nv, double o,
                                             double nn, double* c) {
  half_space_rows<3>(x, r, nv, o, nn, c);
}

void require(int n) {
  if (!supported(static_cast<std::size_t>(n))) throw std::logic_error("clearance kernels: position size not 2 or 3");
}

}  // namespace

void sphere(int n, const double* const* x, std::ptrdiff_t rows, const double* center, double radius, double* c) {
  require(n);
  (n == 2 ? sphere2 : sphere3)(x, rows, center, radius, c);
}
void ellipsoid(int n, const double* const* x, std::ptrdiff_t rows, const double* center, const double* inverse_semi_axes,
               double min_semi_axis, double* c) {
  require(n);
  (n == 2 ? ellipsoid2 : ellipsoid3)(x, rows, center, inverse_semi_axes, min_semi_axis, c);
}
void cone(int n, const double* const* x, std::ptrdiff_t rows, const double* apex, const double* axis_unit,
          double sin_half, double cos_half, double* c) {
  require(n);
  (n == 2 ? cone2 : cone3)(x, rows, apex, axis_unit, sin_half, cos_half, c);
}
void half_space(int n, const double* const* x, std::ptrdiff_t rows, const double* normal, double offset,
                double normal_norm, double* c) {
  require(n);
  (n == 2 ? half_space2 : half_space3)(x, rows, normal, offset, normal_norm, c);
}

}  // namespace sigmatube::constraints::kernels
