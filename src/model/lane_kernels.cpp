// SPDX-License-Identifier: MIT
#include "lane_kernels.h"

#include <algorithm>
#include <cmath>
#include <cstring>

namespace sigmatube::model::lanes {
namespace {

constexpr int kN = 6, kM = 3;

// The HCW kernels work on blocks of four lanes held in GCC vector-extension
// values: element-wise IEEE operations, 4-wide AVX2 in the AVX2 version and two
// SSE2 halves in the baseline one, the same results either way. A last partial
// block is padded by repeating its last lane and only its real lanes are stored.
typedef double Vec __attribute__((vector_size(32)));
constexpr std::size_t kW = 4;

#define SIGMATUBE_INLINE inline __attribute__((always_inline))
SIGMATUBE_INLINE Vec load(const double* p) {
  Vec v;
  std::memcpy(&v, p, sizeof v);
  return v;
}
SIGMATUBE_INLINE void store(double* p, Vec v) { std::memcpy(p, &v, sizeof v); }
SIGMATUBE_INLINE Vec broadcast(double s) { return Vec{s, s, s, s}; }

struct VecTerms {
  Vec x_ref[kN], u_ff[kM], gain[kM * kN];
  SIGMATUBE_INLINE explicit VecTerms(const StageTerms& s) {
    for (int j = 0; j < kN; ++j) x_ref[j] = broadcast(s.x_ref[j]);
    for (int i = 0; i < kM; ++i) u_ff[i] = broadcast(s.u_ff[i]);
    for (int q = 0; q < kM * kN; ++q) gain[q] = broadcast(s.gain[q]);
  }
};

// Per-lane constants of one block.
struct VecLanes {
  Vec scale[kM], bias[kM], nl, lo[kM], hi[kM];
};

// One HCW closed-loop stage of four lanes. The selects are of values computed
// unconditionally; their results are those of the branches of the one-run path
// (Controller::command skips e == 0; std::clamp(v, lo, hi); NaN passes).
SIGMATUBE_INLINE void hcw_block(const Vec* xs, const VecTerms& s, const VecLanes& c, Vec* u,
                                                     Vec* a, Vec* d) {
  const Vec zero = broadcast(0.0);
  for (int i = 0; i < kM; ++i) u[i] = s.u_ff[i];
  for (int j = 0; j < kN; ++j) {
    const Vec e = xs[j] - s.x_ref[j];
    for (int i = 0; i < kM; ++i) {
      const Vec term = s.gain[i * kN + j] * e;
      u[i] -= e != zero ? term : zero;
    }
  }
  for (int i = 0; i < kM; ++i) {
    Vec v = c.scale[i] * u[i] + c.bias[i];
    v = v < c.lo[i] ? c.lo[i] : v;
    v = c.hi[i] < v ? c.hi[i] : v;
    a[i] = v;
  }
  const Vec three = broadcast(3.0), two = broadcast(2.0), minus_two = broadcast(-2.0);
  d[0] = xs[3];
  d[1] = xs[4];
  d[2] = xs[5];
  d[3] = three * c.nl * c.nl * xs[0] + two * c.nl * xs[4] + a[0];
  d[4] = minus_two * c.nl * xs[3] + a[1];
  d[5] = -c.nl * c.nl * xs[2] + a[2];
}

// Lanes [l, l + kW) of an [rows][L] array, padded past `valid` with the last
// real lane; stored back only for the real lanes.
SIGMATUBE_INLINE Vec gather(const double* row, std::size_t l, std::size_t valid) {
  if (valid == kW) return load(row + l);
  double t[kW];
  for (std::size_t w = 0; w < kW; ++w) t[w] = row[l + (w < valid ? w : valid - 1)];
  return load(t);
}
SIGMATUBE_INLINE void scatter(double* row, std::size_t l, std::size_t valid, Vec v) {
  if (valid == kW) return store(row + l, v);
  double t[kW];
  store(t, v);
  for (std::size_t w = 0; w < valid; ++w) row[l + w] = t[w];
}

SIGMATUBE_INLINE VecLanes lane_constants(const HcwLanes& c, std::size_t L, std::size_t l, std::size_t valid) {
  VecLanes v;
  for (int i = 0; i < kM; ++i) {
    v.scale[i] = gather(c.scale + i * L, l, valid);
    v.bias[i] = gather(c.bias + i * L, l, valid);
    v.lo[i] = broadcast(c.low[i]);
    v.hi[i] = broadcast(c.high[i]);
  }
  v.nl = gather(c.mean_motion, l, valid);
  return v;
}

}  // namespace

const char* active_target() {
#if defined(__GNUC__) && defined(__x86_64__) && !defined(SIGMATUBE_NO_MULTIVERSIONING)
  __builtin_cpu_init();
  return __builtin_cpu_supports("avx2") ? "avx2" : "x86-64 baseline";
#else
  return "portable (no multiversioning)";
#endif
}

SIGMATUBE_LANE_TARGETS
void hcw_stage(std::size_t L, const double* x, const StageTerms& s, const HcwLanes& c, double* u_cmd, double* u_app,
               double* dx) {
  const VecTerms st(s);
  for (std::size_t l = 0; l < L; l += kW) {
    const std::size_t valid = std::min(kW, L - l);
    const VecLanes lanes = lane_constants(c, L, l, valid);
    Vec xs[kN], u[kM], a[kM], d[kN];
    for (int j = 0; j < kN; ++j) xs[j] = gather(x + j * L, l, valid);
    hcw_block(xs, st, lanes, u, a, d);
    for (int i = 0; i < kM; ++i) {
      scatter(u_cmd + i * L, l, valid, u[i]);
      scatter(u_app + i * L, l, valid, a[i]);
    }
    for (int j = 0; j < kN; ++j) scatter(dx + j * L, l, valid, d[j]);
  }
}

SIGMATUBE_LANE_TARGETS
void hcw_rk4_step(std::size_t L, const double* x, double* x_next, double h, const StageTerms& sa, const StageTerms& sb,
                  const StageTerms& sc, const HcwLanes& c, double bound, std::uint8_t* ok) {
  const Vec half = broadcast(0.5 * h), sixth = broadcast(h / 6.0), hv = broadcast(h), two = broadcast(2.0);
  const VecTerms ta(sa), tb(sb), tc(sc);
  for (std::size_t l = 0; l < L; l += kW) {
    const std::size_t valid = std::min(kW, L - l);
    const VecLanes lanes = lane_constants(c, L, l, valid);
    Vec xs[kN], y[kN], k1[kN], k2[kN], k3[kN], k4[kN], u[kM], a[kM];
    for (int j = 0; j < kN; ++j) xs[j] = gather(x + j * L, l, valid);
    hcw_block(xs, ta, lanes, u, a, k1);
    for (int j = 0; j < kN; ++j) y[j] = xs[j] + half * k1[j];
    hcw_block(y, tb, lanes, u, a, k2);
    for (int j = 0; j < kN; ++j) y[j] = xs[j] + half * k2[j];
    hcw_block(y, tb, lanes, u, a, k3);
    for (int j = 0; j < kN; ++j) y[j] = xs[j] + hv * k3[j];
    hcw_block(y, tc, lanes, u, a, k4);
    for (int j = 0; j < kN; ++j)
      scatter(x_next + j * L, l, valid, xs[j] + sixth * (k1[j] + two * k2[j] + two * k3[j] + k4[j]));
  }
  check_lanes(L, kN, x_next, bound, ok);
}

namespace {
// closed_loop_inputs for M inputs (M ≤ 4) and any n, in one pass over blocks of
// four lanes with the commands in registers; the same operations per lane, in the
// same order, as the generic loops below.
template <int M>
SIGMATUBE_INLINE void closed_loop_inputs_fixed(std::size_t L, int n, const double* x, const StageTerms& s,
                                               const double* scale, const double* bias, const double* low,
                                               const double* high, double* u_cmd, double* u_app) {
  const Vec zero = broadcast(0.0);
  for (std::size_t l = 0; l < L; l += kW) {
    const std::size_t valid = std::min(kW, L - l);
    Vec u[M];
    for (int i = 0; i < M; ++i) u[i] = broadcast(s.u_ff[i]);
    for (int j = 0; j < n; ++j) {
      const Vec e = gather(x + j * L, l, valid) - broadcast(s.x_ref[j]);
      for (int i = 0; i < M; ++i) {
        const Vec term = broadcast(s.gain[i * n + j]) * e;
        u[i] -= e != zero ? term : zero;
      }
    }
    for (int i = 0; i < M; ++i) {
      const Vec lo = broadcast(low[i]), hi = broadcast(high[i]);
      Vec v = gather(scale + i * L, l, valid) * u[i] + gather(bias + i * L, l, valid);
      v = v < lo ? lo : v;
      v = hi < v ? hi : v;
      scatter(u_cmd + i * L, l, valid, u[i]);
      scatter(u_app + i * L, l, valid, v);
    }
  }
}
}  // namespace

SIGMATUBE_LANE_TARGETS
void closed_loop_inputs(std::size_t L, int n, int m, const double* __restrict x, const StageTerms& s, bool feedback,
                        const double* __restrict scale, const double* __restrict bias, const double* low,
                        const double* high, double* __restrict error, double* __restrict u_cmd,
                        double* __restrict u_app) {
  if (feedback) {
    switch (m) {
      case 1: return closed_loop_inputs_fixed<1>(L, n, x, s, scale, bias, low, high, u_cmd, u_app);
      case 2: return closed_loop_inputs_fixed<2>(L, n, x, s, scale, bias, low, high, u_cmd, u_app);
      case 3: return closed_loop_inputs_fixed<3>(L, n, x, s, scale, bias, low, high, u_cmd, u_app);
      case 4: return closed_loop_inputs_fixed<4>(L, n, x, s, scale, bias, low, high, u_cmd, u_app);
      default: break;
    }
  }
  for (int i = 0; i < m; ++i) {
    double* u = u_cmd + i * L;
    const double f = s.u_ff[i];
    for (std::size_t l = 0; l < L; ++l) u[l] = f;
  }
  for (int j = 0; j < n && feedback; ++j) {
    const double* xj = x + j * L;
    const double rj = s.x_ref[j];
    for (std::size_t l = 0; l < L; ++l) error[l] = xj[l] - rj;
    for (int i = 0; i < m; ++i) {
      const double K = s.gain[i * n + j];
      double* u = u_cmd + i * L;
      // Controller::command skips e == 0; subtracting +0.0 is the same for every u (also −0).
      for (std::size_t l = 0; l < L; ++l) {
        const double term = K * error[l];
        u[l] -= error[l] != 0.0 ? term : 0.0;
      }
    }
  }
  for (int i = 0; i < m; ++i) {
    const double lo = low[i], hi = high[i];
    const double *u = u_cmd + i * L, *sc = scale + i * L, *b = bias + i * L;
    double* a = u_app + i * L;
    for (std::size_t l = 0; l < L; ++l) {
      double v = sc[l] * u[l] + b[l];
      v = v < lo ? lo : v;  // std::clamp(v, lo, hi), NaN passed through alike
      v = hi < v ? hi : v;
      a[l] = v;
    }
  }
}

SIGMATUBE_LANE_TARGETS
void axpy(std::size_t count, const double* __restrict x, double a, const double* __restrict k, double* __restrict y) {
  for (std::size_t q = 0; q < count; ++q) y[q] = x[q] + a * k[q];
}

SIGMATUBE_LANE_TARGETS
void rk4_combine(std::size_t count, double* __restrict x, double sixth, const double* __restrict k1,
                 const double* __restrict k2, const double* __restrict k3, const double* __restrict k4) {
  for (std::size_t q = 0; q < count; ++q) x[q] += sixth * (k1[q] + 2.0 * k2[q] + 2.0 * k3[q] + k4[q]);
}

SIGMATUBE_LANE_TARGETS
void check_lanes(std::size_t L, int n, const double* __restrict x, double bound, std::uint8_t* __restrict ok) {
  for (int i = 0; i < n; ++i) {
    const double* v = x + i * L;
    for (std::size_t l = 0; l < L; ++l)
      ok[l] = static_cast<std::uint8_t>(ok[l] & static_cast<std::uint8_t>(std::fabs(v[l]) <= bound));
  }
}

}  // namespace sigmatube::model::lanes
