// SPDX-License-Identifier: MIT
#include "lane_kernels.h"

#include <algorithm>
#include <atomic>
#include <cmath>
#include <cstdint>
#include <cstring>

namespace sigmatube::model::lanes {
namespace {

constexpr int kN = 6, kM = 3;

// The whole-step kernels work on blocks of lanes held in GCC vector-extension
// values V (Vec4: four doubles, Vec8: eight): element-wise IEEE operations —
// 4-wide AVX2 or two SSE2 halves for Vec4, 8-wide AVX-512 for Vec8 — the same
// results whatever the width. A last partial block is padded by repeating its
// last lane and only its real lanes are stored.
typedef double Vec4 __attribute__((vector_size(32)));
typedef double Vec8 __attribute__((vector_size(64)));
typedef long long Mask4 __attribute__((vector_size(32)));  // −1 / 0 per lane, as comparisons give
typedef long long Mask8 __attribute__((vector_size(64)));
template <class V> struct MaskOf;
template <> struct MaskOf<Vec4> { using type = Mask4; };
template <> struct MaskOf<Vec8> { using type = Mask8; };
template <class V> constexpr std::size_t kWidth = sizeof(V) / sizeof(double);

// The stage-by-stage kernels below use four lanes.
using Vec = Vec4;
constexpr std::size_t kW = 4;

#define SIGMATUBE_INLINE inline __attribute__((always_inline))
template <class V = Vec>
SIGMATUBE_INLINE V load(const double* p) {
  V v;
  std::memcpy(&v, p, sizeof v);
  return v;
}
template <class V>
SIGMATUBE_INLINE void store(double* p, V v) { std::memcpy(p, &v, sizeof v); }
template <class V = Vec>
SIGMATUBE_INLINE V broadcast(double s) {
  if constexpr (kWidth<V> == 8) {
    // (GCC 12 builds {s, …, s} of eight as eight masked broadcasts; a shuffle of
    // element 0 is one vbroadcastsd.)
    const V first = {s};
    return __builtin_shuffle(first, Mask8{0, 0, 0, 0, 0, 0, 0, 0});
  } else {
    return V{s, s, s, s};
  }
}

template <class V>
struct VecTerms {
  V x_ref[kN], u_ff[kM], gain[kM * kN];
  SIGMATUBE_INLINE explicit VecTerms(const StageTerms& s) {
    for (int j = 0; j < kN; ++j) x_ref[j] = broadcast<V>(s.x_ref[j]);
    for (int i = 0; i < kM; ++i) u_ff[i] = broadcast<V>(s.u_ff[i]);
    for (int q = 0; q < kM * kN; ++q) gain[q] = broadcast<V>(s.gain[q]);
  }
};

// Per-lane constants of one block.
template <class V>
struct VecLanes {
  V scale[kM], bias[kM], nl, lo[kM], hi[kM];
};

// One HCW closed-loop stage of one block. The selects are of values computed
// unconditionally; their results are those of the branches of the one-run path
// (Controller::command skips e == 0; std::clamp(v, lo, hi); NaN passes).
template <class V>
SIGMATUBE_INLINE void hcw_block(const V* xs, const VecTerms<V>& s, const VecLanes<V>& c, V* u, V* a, V* d) {
  const V zero = broadcast<V>(0.0);
  for (int i = 0; i < kM; ++i) u[i] = s.u_ff[i];
  for (int j = 0; j < kN; ++j) {
    const V e = xs[j] - s.x_ref[j];
    for (int i = 0; i < kM; ++i) {
      const V term = s.gain[i * kN + j] * e;
      u[i] -= e != zero ? term : zero;
    }
  }
  for (int i = 0; i < kM; ++i) {
    V v = c.scale[i] * u[i] + c.bias[i];
    v = v < c.lo[i] ? c.lo[i] : v;
    v = c.hi[i] < v ? c.hi[i] : v;
    a[i] = v;
  }
  const V three = broadcast<V>(3.0), two = broadcast<V>(2.0), minus_two = broadcast<V>(-2.0);
  d[0] = xs[3];
  d[1] = xs[4];
  d[2] = xs[5];
  d[3] = three * c.nl * c.nl * xs[0] + two * c.nl * xs[4] + a[0];
  d[4] = minus_two * c.nl * xs[3] + a[1];
  d[5] = -c.nl * c.nl * xs[2] + a[2];
}

// Lanes [l, l + width) of an [rows][L] array, padded past `valid` with the last
// real lane; stored back only for the real lanes.
template <class V = Vec>
SIGMATUBE_INLINE V gather(const double* row, std::size_t l, std::size_t valid) {
  constexpr std::size_t W = kWidth<V>;
  if (valid == W) return load<V>(row + l);
  double t[W];
  for (std::size_t w = 0; w < W; ++w) t[w] = row[l + (w < valid ? w : valid - 1)];
  return load<V>(t);
}
template <class V>
SIGMATUBE_INLINE void scatter(double* row, std::size_t l, std::size_t valid, V v) {
  constexpr std::size_t W = kWidth<V>;
  if (valid == W) return store(row + l, v);
  double t[W];
  store(t, v);
  for (std::size_t w = 0; w < valid; ++w) row[l + w] = t[w];
}

template <class V>
SIGMATUBE_INLINE VecLanes<V> lane_constants(const HcwLanes& c, std::size_t L, std::size_t l, std::size_t valid) {
  VecLanes<V> v;
  for (int i = 0; i < kM; ++i) {
    v.scale[i] = gather<V>(c.scale + i * L, l, valid);
    v.bias[i] = gather<V>(c.bias + i * L, l, valid);
    v.lo[i] = broadcast<V>(c.low[i]);
    v.hi[i] = broadcast<V>(c.high[i]);
  }
  v.nl = gather<V>(c.mean_motion, l, valid);
  return v;
}

template <class V>
SIGMATUBE_INLINE void hcw_rk4_step_blocks(std::size_t L, const double* x, double* x_next, double h,
                                          const StageTerms& sa, const StageTerms& sb, const StageTerms& sc,
                                          const HcwLanes& c) {
  constexpr std::size_t W = kWidth<V>;
  const V half = broadcast<V>(0.5 * h), sixth = broadcast<V>(h / 6.0), hv = broadcast<V>(h), two = broadcast<V>(2.0);
  const VecTerms<V> ta(sa), tb(sb), tc(sc);
  for (std::size_t l = 0; l < L; l += W) {
    const std::size_t valid = std::min(W, L - l);
    const VecLanes<V> lanes = lane_constants<V>(c, L, l, valid);
    V xs[kN], y[kN], k1[kN], k2[kN], k3[kN], k4[kN], u[kM], a[kM];
    for (int j = 0; j < kN; ++j) xs[j] = gather<V>(x + j * L, l, valid);
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
}

// The whole-step kernels are compiled once more for AVX-512 with eight lanes per
// vector (Vec8, no FMA either: -ffp-contract=off) and picked at run time.
#if defined(__GNUC__) && defined(__x86_64__) && !defined(SIGMATUBE_NO_MULTIVERSIONING)
#define SIGMATUBE_AVX512_KERNELS 1
#define SIGMATUBE_AVX512_TARGET __attribute__((target("avx512f")))
std::atomic<bool> avx512_allowed{true};
bool avx512() {
  static const bool yes = [] {
    __builtin_cpu_init();
    return __builtin_cpu_supports("avx512f") != 0;
  }();
  return yes && avx512_allowed.load(std::memory_order_relaxed);
}
#else
#define SIGMATUBE_AVX512_KERNELS 0
bool avx512() { return false; }
#endif

SIGMATUBE_LANE_TARGETS
void hcw_rk4_step_vec4(std::size_t L, const double* x, double* x_next, double h, const StageTerms& a,
                       const StageTerms& b, const StageTerms& c, const HcwLanes& lanes) {
  hcw_rk4_step_blocks<Vec4>(L, x, x_next, h, a, b, c, lanes);
}
#if SIGMATUBE_AVX512_KERNELS
SIGMATUBE_AVX512_TARGET
void hcw_rk4_step_vec8(std::size_t L, const double* x, double* x_next, double h, const StageTerms& a,
                       const StageTerms& b, const StageTerms& c, const HcwLanes& lanes) {
  hcw_rk4_step_blocks<Vec8>(L, x, x_next, h, a, b, c, lanes);
}
#endif

}  // namespace

void allow_avx512(bool on) {
#if SIGMATUBE_AVX512_KERNELS
  avx512_allowed.store(on, std::memory_order_relaxed);
#else
  (void)on;
#endif
}

const char* active_target() {
#if defined(__GNUC__) && defined(__x86_64__) && !defined(SIGMATUBE_NO_MULTIVERSIONING)
  __builtin_cpu_init();
  if (avx512()) return "avx512f (whole-step kernels), avx2";
  return __builtin_cpu_supports("avx2") ? "avx2" : "x86-64 baseline";
#else
  return "portable (no multiversioning)";
#endif
}

SIGMATUBE_LANE_TARGETS
void hcw_stage(std::size_t L, const double* x, const StageTerms& s, const HcwLanes& c, double* u_cmd, double* u_app,
               double* dx) {
  const VecTerms<Vec> st(s);
  for (std::size_t l = 0; l < L; l += kW) {
    const std::size_t valid = std::min(kW, L - l);
    const VecLanes<Vec> lanes = lane_constants<Vec>(c, L, l, valid);
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

void hcw_rk4_step(std::size_t L, const double* x, double* x_next, double h, const StageTerms& sa, const StageTerms& sb,
                  const StageTerms& sc, const HcwLanes& c, double bound, std::uint8_t* ok) {
#if SIGMATUBE_AVX512_KERNELS
  if (avx512())
    hcw_rk4_step_vec8(L, x, x_next, h, sa, sb, sc, c);
  else
#endif
    hcw_rk4_step_vec4(L, x, x_next, h, sa, sb, sc, c);
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

// ------------------------------------------------------------ lane programs
namespace sigmatube::model::lanes {
namespace {

constexpr std::size_t kB = kProgramBlock, kG = kProgramBlock / kW;  // lanes and vectors per row
// Every row and term set of the workspace starts on a cache line, so that no
// vector load or store is split over two lines.
constexpr std::size_t kWorkAlignment = 64;
// Pre-broadcast terms are eight doubles wide (what an eight-lane vector loads;
// four-lane code reads the first half).
constexpr std::size_t kTermWidth = 8;

// Pre-broadcast stage terms in the workspace: x_ref n, u_ff m, gain m·n terms.
SIGMATUBE_INLINE void broadcast_term(double value, double* out) { std::fill(out, out + kTermWidth, value); }
SIGMATUBE_INLINE double* broadcast_terms(const StageTerms& s, int n, int m, double* out) {
  for (int j = 0; j < n; ++j) broadcast_term(s.x_ref[j], out + kTermWidth * j);
  for (int i = 0; i < m; ++i) broadcast_term(s.u_ff[i], out + kTermWidth * (n + i));
  for (int q = 0; q < m * n; ++q) broadcast_term(s.gain[q], out + kTermWidth * (n + m + q));
  return out;
}

// closed_loop_inputs_fixed<M> on one block, in vectors V: states from `state`
// rows, u_app to `input` rows; terms and limits pre-broadcast (x_ref, u_ff,
// gain; low, high per input). Same operations.
template <class V, int M>
SIGMATUBE_INLINE void block_inputs(int n, const double* state, const double* terms, bool feedback, const double* scale,
                                   const double* bias, const double* limits, double* input) {
  constexpr std::size_t W = kWidth<V>, G = kB / W;
  const V zero = {};
  const double* gain = terms + kTermWidth * static_cast<std::size_t>(n + M);
  if constexpr (G * (M > 0 ? M : 1) <= 16) {
    // Few vectors per row (eight-lane vectors): all M·G sums in registers, the
    // states outermost, so that each term is loaded once and M·G chains overlap.
    V u[M > 0 ? M : 1][G];
    for (int i = 0; i < M; ++i)
      for (std::size_t g = 0; g < G; ++g) u[i][g] = load<V>(terms + kTermWidth * static_cast<std::size_t>(n + i));
    for (int j = 0; j < n && feedback; ++j) {
      const V ref = load<V>(terms + kTermWidth * static_cast<std::size_t>(j));
      V k[M > 0 ? M : 1];
      for (int i = 0; i < M; ++i) k[i] = load<V>(gain + kTermWidth * static_cast<std::size_t>(i * n + j));
      for (std::size_t g = 0; g < G; ++g) {
        const V e = load<V>(state + j * kB + W * g) - ref;
        for (int i = 0; i < M; ++i) {
          const V term = k[i] * e;
          u[i][g] -= e != zero ? term : zero;
        }
      }
    }
    for (int i = 0; i < M; ++i) {
      const V lo = load<V>(limits + kTermWidth * static_cast<std::size_t>(2 * i));
      const V hi = load<V>(limits + kTermWidth * static_cast<std::size_t>(2 * i + 1));
      for (std::size_t g = 0; g < G; ++g) {
        V v = load<V>(scale + i * kB + W * g) * u[i][g] + load<V>(bias + i * kB + W * g);
        v = v < lo ? lo : v;
        v = hi < v ? hi : v;
        store(input + i * kB + W * g, v);
      }
    }
    return;
  }
  for (std::size_t g = 0; g < G; ++g) {
    V u[M > 0 ? M : 1];
    for (int i = 0; i < M; ++i) u[i] = load<V>(terms + kTermWidth * static_cast<std::size_t>(n + i));
    for (int j = 0; j < n && feedback; ++j) {
      const V e = load<V>(state + j * kB + W * g) - load<V>(terms + kTermWidth * static_cast<std::size_t>(j));
      for (int i = 0; i < M; ++i) {
        const V term = load<V>(gain + kTermWidth * static_cast<std::size_t>(i * n + j)) * e;
        u[i] -= e != zero ? term : zero;
      }
    }
    for (int i = 0; i < M; ++i) {
      const V lo = load<V>(limits + kTermWidth * static_cast<std::size_t>(2 * i));
      const V hi = load<V>(limits + kTermWidth * static_cast<std::size_t>(2 * i + 1));
      V v = load<V>(scale + i * kB + W * g) * u[i] + load<V>(bias + i * kB + W * g);
      v = v < lo ? lo : v;
      v = hi < v ? hi : v;
      store(input + i * kB + W * g, v);
    }
  }
}

// The accumulator interpreter: kG vectors of the current chain in registers
// (fully unrolled loops over the vectors of a row; calls go through memory).
#define SIGMATUBE_ROW(body) _Pragma("GCC unroll 8") for (std::size_t g = 0; g < kG; ++g) { body; }
SIGMATUBE_INLINE void run_block_ops(const BlockOp* ops, std::size_t count, double* w) {
  using K = BlockOp::Kind;
  Vec acc[kG] = {};
  for (std::size_t q = 0; q < count; ++q) {
    const BlockOp& op = ops[q];
    if (op.load_a) {
      const double* a = w + static_cast<std::size_t>(op.a) * kB;
      SIGMATUBE_ROW(acc[g] = load(a + kW * g))
    }
    const double* b = w + static_cast<std::size_t>(op.b) * kB;
    switch (op.kind) {
      case K::copy: break;
      case K::add: SIGMATUBE_ROW(acc[g] = acc[g] + load(b + kW * g)) break;
      case K::sub: SIGMATUBE_ROW(acc[g] = acc[g] - load(b + kW * g)) break;
      case K::mul: SIGMATUBE_ROW(acc[g] = acc[g] * load(b + kW * g)) break;
      case K::div: SIGMATUBE_ROW(acc[g] = acc[g] / load(b + kW * g)) break;
      case K::square: SIGMATUBE_ROW(acc[g] = acc[g] * acc[g]) break;
      case K::neg: SIGMATUBE_ROW(acc[g] = -acc[g]) break;
      case K::min: SIGMATUBE_ROW(const Vec bv = load(b + kW * g); acc[g] = bv < acc[g] ? bv : acc[g])  // std::min
        break;
      case K::max: SIGMATUBE_ROW(const Vec bv = load(b + kW * g); acc[g] = acc[g] < bv ? bv : acc[g])  // std::max
        break;
      case K::pow: case K::function: {
        alignas(kWorkAlignment) double v[kB];
        SIGMATUBE_ROW(store(v + kW * g, acc[g]))
        if (op.kind == K::pow) {
          for (std::size_t e = 0; e < kB; ++e) v[e] = std::pow(v[e], b[e]);
        } else {
          for (std::size_t e = 0; e < kB; ++e) v[e] = op.function(v[e]);
        }
        SIGMATUBE_ROW(acc[g] = load(v + kW * g))
        break;
      }
    }
    if (op.store) {
      double* out = w + static_cast<std::size_t>(op.out) * kB;
      SIGMATUBE_ROW(store(out + kW * g, acc[g]))
    }
  }
}

// Lanes [l, l + kB) of an [rows][L] array into a block row, padded past `valid`
// with the last real lane.
SIGMATUBE_INLINE void gather_row(const double* row, std::size_t l, std::size_t valid, double* out) {
  for (std::size_t w = 0; w < kB; ++w) out[w] = row[l + (w < valid ? w : valid - 1)];
}
SIGMATUBE_INLINE void copy_row(const double* from, double* to) { SIGMATUBE_ROW(store(to + kW * g, load(from + kW * g))) }

typedef long long Mask __attribute__((vector_size(32)));  // −1 / 0 per lane, as Vec comparisons give

// Workspace of the block programs: the pre-broadcast stage terms (3 sets), then
// per block of kB lanes `block_rows` rows: the program rows, then xs (the
// state, n), the RK sum (n), scale and bias (m each) and the finiteness mask.
struct BlockLayout {
  std::size_t n, m, term_size, block_rows, xs, sum, scale, bias, good;
  explicit BlockLayout(const ProgramStep& p)
      : n(static_cast<std::size_t>(p.n)), m(static_cast<std::size_t>(p.m)),
        term_size(kTermWidth * (n + m + m * n)) {
    xs = static_cast<std::size_t>(p.rows);
    sum = xs + n;
    scale = sum + n;
    bias = scale + m;
    good = bias + m;
    block_rows = good + 1;
  }
  std::size_t blocks(std::size_t L) const { return (L + kB - 1) / kB; }
  double* block(double* work, std::size_t k) const { return work + 3 * term_size + k * block_rows * kB; }
  const double* block(const double* work, std::size_t k) const { return work + 3 * term_size + k * block_rows * kB; }
};

// The workspace starts at the first kWorkAlignment-byte boundary of the
// caller's array (program_blocks_work_size leaves room for it).
template <class T>
SIGMATUBE_INLINE T* aligned_work(T* work) {
  const std::uintptr_t at = reinterpret_cast<std::uintptr_t>(work);
  return reinterpret_cast<T*>((at + kWorkAlignment - 1) & ~static_cast<std::uintptr_t>(kWorkAlignment - 1));
}

// The feedback law in vectors VI (four or eight lanes), the programs and the
// stage combinations in four-lane vectors (eight accumulator chains per row).
template <class VI, int M>
SIGMATUBE_INLINE void program_step_blocks(std::size_t L, double t, double h, const StageTerms& sa, const StageTerms& sb,
                                          const StageTerms& sc, const ProgramStep& p, double bound, double* work) {
  const BlockLayout layout(p);
  work = aligned_work(work);
  const int n = p.n;
  const double* ta = broadcast_terms(sa, n, M, work);
  const double* tb = broadcast_terms(sb, n, M, work + layout.term_size);
  const double* tc = broadcast_terms(sc, n, M, work + 2 * layout.term_size);
  const Vec half = broadcast(0.5 * h), sixth = broadcast(h / 6.0), hv = broadcast(h), two = broadcast(2.0);
  const Vec high = broadcast(bound), low = broadcast(-bound);
  const double* stage_terms[4] = {ta, tb, tb, tc};
  // The input limits and the stage times pre-broadcast too, once per step
  // rather than once per block and vector.
  alignas(kWorkAlignment) double limits[2 * (M > 0 ? M : 1) * kTermWidth], stage_time[4 * kTermWidth];
  for (int i = 0; i < 2 * M; ++i) broadcast_term(i % 2 ? p.high[i / 2] : p.low[i / 2], limits + kTermWidth * i);
  const double times[4] = {t, t + 0.5 * h, t + 0.5 * h, t + h};
  for (int s = 0; s < 4; ++s) broadcast_term(times[s], stage_time + kTermWidth * s);

  for (std::size_t k = 0; k < layout.blocks(L); ++k) {
    double* w = layout.block(work, k);
    double* state = w + kB;
    double* input = state + static_cast<std::size_t>(n) * kB;
    double* xs = w + layout.xs * kB;
    double* acc = w + layout.sum * kB;
    const double* scale = w + layout.scale * kB;
    const double* bias = w + layout.bias * kB;
    for (int j = 0; j < n; ++j) copy_row(xs + j * kB, state + j * kB);
    for (int s = 0; s < 4; ++s) {
      SIGMATUBE_ROW(store(w + kW * g, load(stage_time + kTermWidth * s)))
      block_inputs<VI, M>(n, state, stage_terms[s], p.feedback, scale, bias, limits, input);
      run_block_ops(p.ops, p.op_count, w);
      // The stage combinations of integrate_rk4: y = x + (h/2 | h/2 | h)·k and
      // x + h/6·(((k1 + 2·k2) + 2·k3) + k4).
      for (int j = 0; j < n; ++j) {
        const double* kr = w + static_cast<std::size_t>(p.result_rows[j]) * kB;
        double* sum = acc + j * kB;
        double* y = state + j * kB;
        double* x0 = xs + j * kB;
        switch (s) {
          case 0: SIGMATUBE_ROW(const Vec kv = load(kr + kW * g); store(sum + kW * g, kv); store(y + kW * g, load(x0 + kW * g) + half * kv)) break;
          case 1: SIGMATUBE_ROW(const Vec kv = load(kr + kW * g); store(sum + kW * g, load(sum + kW * g) + two * kv); store(y + kW * g, load(x0 + kW * g) + half * kv)) break;
          case 2: SIGMATUBE_ROW(const Vec kv = load(kr + kW * g); store(sum + kW * g, load(sum + kW * g) + two * kv); store(y + kW * g, load(x0 + kW * g) + hv * kv)) break;
          default: SIGMATUBE_ROW(store(x0 + kW * g, load(x0 + kW * g) + sixth * (load(sum + kW * g) + load(kr + kW * g)))) break;
        }
      }
    }
    // check_lanes: |x| ≤ bound (false for NaN), accumulated per lane.
    double* good = w + layout.good * kB;
    SIGMATUBE_ROW(Mask m; std::memcpy(&m, good + kW * g, sizeof m);
                  for (int j = 0; j < n; ++j) {
                    const Vec v = load(xs + j * kB + kW * g);
                    m &= (v <= high) & (low <= v);
                  } std::memcpy(good + kW * g, &m, sizeof m))
  }
}

}  // namespace

std::size_t program_blocks_work_size(std::size_t L, const ProgramStep& p) {
  const BlockLayout layout(p);
  return 3 * layout.term_size + layout.blocks(L) * layout.block_rows * kB + kWorkAlignment / sizeof(double) - 1;
}

void program_blocks_load(std::size_t L, const double* x, const ProgramStep& p, double* work) {
  const BlockLayout layout(p);
  work = aligned_work(work);
  const std::size_t rows = static_cast<std::size_t>(p.rows), n = layout.n, m = layout.m;
  for (std::size_t k = 0; k < layout.blocks(L); ++k) {
    double* w = layout.block(work, k);
    const std::size_t l = k * kB, valid = std::min(kB, L - l);
    for (std::size_t j = 0; j < n; ++j) gather_row(x + j * L, l, valid, w + (layout.xs + j) * kB);
    for (std::size_t i = 0; i < m; ++i) {
      gather_row(p.scale + i * L, l, valid, w + (layout.scale + i) * kB);
      gather_row(p.bias + i * L, l, valid, w + (layout.bias + i) * kB);
    }
    const std::size_t param_row = 1 + n + m;
    for (std::size_t i = 0; i < static_cast<std::size_t>(p.n_params); ++i)
      gather_row(p.params + i * L, l, valid, w + (param_row + i) * kB);
    for (int c = 0; c < p.constant_count; ++c) {
      double* row = w + (rows - static_cast<std::size_t>(p.constant_count - c)) * kB;
      std::fill(row, row + kB, p.constants[c]);
    }
    const Mask all = {-1, -1, -1, -1};
    for (std::size_t g = 0; g < kG; ++g) std::memcpy(w + layout.good * kB + kW * g, &all, sizeof all);
  }
}

void program_blocks_store(std::size_t L, const ProgramStep& p, const double* work, double* x, std::uint8_t* ok) {
  const BlockLayout layout(p);
  work = aligned_work(work);
  for (std::size_t k = 0; k < layout.blocks(L); ++k) {
    const double* w = layout.block(work, k);
    const std::size_t l = k * kB, valid = std::min(kB, L - l);
    for (std::size_t j = 0; j < layout.n; ++j)
      std::memcpy(x + j * L + l, w + (layout.xs + j) * kB, valid * sizeof(double));
    for (std::size_t q = 0; q < valid; ++q) {
      long long m;
      std::memcpy(&m, w + layout.good * kB + q, sizeof m);
      if (m == 0) ok[l + q] = 0;
    }
  }
}

namespace {
template <class VI>
SIGMATUBE_INLINE void program_step_inputs_in(std::size_t L, double t, double h, const StageTerms& a, const StageTerms& b,
                                             const StageTerms& c, const ProgramStep& p, double bound, double* work) {
  switch (p.m) {
    case 0: program_step_blocks<VI, 0>(L, t, h, a, b, c, p, bound, work); break;
    case 1: program_step_blocks<VI, 1>(L, t, h, a, b, c, p, bound, work); break;
    case 2: program_step_blocks<VI, 2>(L, t, h, a, b, c, p, bound, work); break;
    case 3: program_step_blocks<VI, 3>(L, t, h, a, b, c, p, bound, work); break;
    default: program_step_blocks<VI, 4>(L, t, h, a, b, c, p, bound, work); break;
  }
}
SIGMATUBE_LANE_TARGETS
void program_rk4_step_vec4(std::size_t L, double t, double h, const StageTerms& a, const StageTerms& b,
                           const StageTerms& c, const ProgramStep& p, double bound, double* work) {
  program_step_inputs_in<Vec4>(L, t, h, a, b, c, p, bound, work);
}
#if SIGMATUBE_AVX512_KERNELS
SIGMATUBE_AVX512_TARGET
void program_rk4_step_vec8(std::size_t L, double t, double h, const StageTerms& a, const StageTerms& b,
                           const StageTerms& c, const ProgramStep& p, double bound, double* work) {
  program_step_inputs_in<Vec8>(L, t, h, a, b, c, p, bound, work);
}
#endif
}  // namespace

void program_rk4_step(std::size_t L, double t, double h, const StageTerms& a, const StageTerms& b, const StageTerms& c,
                      const ProgramStep& p, double bound, double* work) {
#if SIGMATUBE_AVX512_KERNELS
  if (avx512())
    program_rk4_step_vec8(L, t, h, a, b, c, p, bound, work);
  else
#endif
    program_rk4_step_vec4(L, t, h, a, b, c, p, bound, work);
}

}  // namespace sigmatube::model::lanes
