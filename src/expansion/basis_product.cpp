// SPDX-License-Identifier: MIT
#include "sigmatube/expansion/basis_product.h"

#include <algorithm>
#include <atomic>
#include <cstring>
#include <stdexcept>

// This file is compiled with -ffp-contract=off (CMakeLists.txt): no multiply and
// add is ever fused, whatever instruction set a function is compiled for.

namespace sigmatube::expansion {

PackedColumns::PackedColumns(const Eigen::Ref<const Eigen::MatrixXd>& c, const std::vector<int>& columns)
    : rows_(c.rows()), cols_(columns.empty() ? c.cols() : static_cast<Eigen::Index>(columns.size())) {
  const Eigen::Index panels = (cols_ + kProductPanel - 1) / kProductPanel;
  data_.assign(static_cast<std::size_t>(panels * rows_ * kProductPanel), 0.0);
  for (Eigen::Index j = 0; j < cols_; ++j) {
    const Eigen::Index source = columns.empty() ? j : columns[static_cast<std::size_t>(j)];
    if (source < 0 || source >= c.cols()) throw std::logic_error("PackedColumns: column out of range");
    double* panel_start = data_.data() + (j / kProductPanel) * rows_ * kProductPanel + j % kProductPanel;
    for (Eigen::Index k = 0; k < rows_; ++k) panel_start[k * kProductPanel] = c(k, source);
  }
}

PackedColumns::PackedColumns(const Eigen::Ref<const Eigen::MatrixXd>& c, Eigen::Index first, Eigen::Index count)
    : PackedColumns(c.middleCols(first, count)) {}

Eigen::MatrixXd PackedColumns::unpacked() const {
  Eigen::MatrixXd c(rows_, cols_);
  for (Eigen::Index j = 0; j < cols_; ++j)
    for (Eigen::Index k = 0; k < rows_; ++k) c(k, j) = panel(j / kProductPanel)[k * kProductPanel + j % kProductPanel];
  return c;
}

namespace {

constexpr Eigen::Index kPanel = PackedColumns::kProductPanel;
// Rows of Ψ packed at a time (a multiple of every tile height below: 8, 16, 24)
// and the depth of one pass: a packed block of 192 × 256 doubles (384 KiB) stays
// in L2, one tile's rows of it (≤ 24 × 256 doubles) and a coefficient panel
// (256 × 8) in L1. A pass that continues a sum reloads the partial sums from Y and
// keeps adding in the same order, so the depth blocks change no bit.
constexpr Eigen::Index kRowBlock = 192;
constexpr Eigen::Index kDepthBlock = 256;

#define SIGMATUBE_PRODUCT_INLINE inline __attribute__((always_inline))

typedef double Vec2 __attribute__((vector_size(16)));
typedef double Vec4 __attribute__((vector_size(32)));
typedef double Vec8 __attribute__((vector_size(64)));
typedef long long Index8 __attribute__((vector_size(64)));
template <class V> constexpr int kWidth = static_cast<int>(sizeof(V) / sizeof(double));

template <class V>
SIGMATUBE_PRODUCT_INLINE V load(const double* p) {
  V v;
  std::memcpy(&v, p, sizeof v);
  return v;
}
template <class V>
SIGMATUBE_PRODUCT_INLINE void store(double* p, V v) {
  std::memcpy(p, &v, sizeof v);
}
template <class V>
SIGMATUBE_PRODUCT_INLINE V broadcast(double s) {
  if constexpr (kWidth<V> == 8) {
    // (GCC 12 builds {s, …, s} of eight as masked broadcasts; a shuffle of element
    // 0 is one vbroadcastsd.)
    const V first = {s};
    return __builtin_shuffle(first, Index8{0, 0, 0, 0, 0, 0, 0, 0});
  } else if constexpr (kWidth<V> == 4) {
    return V{s, s, s, s};
  } else {
    return V{s, s};
  }
}

// One register tile: Y[MV·W rows, NC columns] (+)= A·B over `depth` terms, where
// A holds the tile's rows packed (row r of term k at a[k·MR + r]) and B the panel
// (column c of term k at b[k·kPanel + c]). y is column-major with leading
// dimension ldy; `continued` reloads partial sums from y instead of starting at 0.
template <class V, int MV, int NC>
SIGMATUBE_PRODUCT_INLINE void tile(Eigen::Index depth, const double* a, const double* b, double* y, Eigen::Index ldy,
                                   bool continued) {
  constexpr int W = kWidth<V>;
  constexpr int MR = MV * W;
  V acc[MV][NC];
#pragma GCC unroll 8
  for (int c = 0; c < NC; ++c)
#pragma GCC unroll 4
    for (int v = 0; v < MV; ++v) acc[v][c] = continued ? load<V>(y + c * ldy + v * W) : V{};
  for (Eigen::Index k = 0; k < depth; ++k) {
    V av[MV];
#pragma GCC unroll 4
    for (int v = 0; v < MV; ++v) av[v] = load<V>(a + k * MR + v * W);
#pragma GCC unroll 8
    for (int c = 0; c < NC; ++c) {
      const double bc = b[k * kPanel + c];  // broadcast by the vector–scalar product
#pragma GCC unroll 4
      for (int v = 0; v < MV; ++v) acc[v][c] = acc[v][c] + av[v] * bc;
    }
  }
#pragma GCC unroll 8
  for (int c = 0; c < NC; ++c)
#pragma GCC unroll 4
    for (int v = 0; v < MV; ++v) store<V>(y + c * ldy + v * W, acc[v][c]);
}

// The whole product with tiles of MV vectors of V × NC columns (NC divides kPanel).
template <class V, int MV, int NC>
SIGMATUBE_PRODUCT_INLINE void product_blocks(const Eigen::Ref<const Eigen::MatrixXd>& psi, const PackedColumns& c,
                                             Eigen::Ref<Eigen::MatrixXd> y) {
  static_assert(kPanel % NC == 0 && kRowBlock % (MV * kWidth<V>) == 0);
  constexpr Eigen::Index MR = MV * kWidth<V>;
  const Eigen::Index N = psi.rows(), P = psi.cols(), J = c.cols();
  const Eigen::Index ldy = y.outerStride();
  const Eigen::Index panels = (J + kPanel - 1) / kPanel;
  std::vector<double> packed(static_cast<std::size_t>(kRowBlock * std::min(P, kDepthBlock)));
  alignas(64) double edge[MR * NC];
  for (Eigen::Index n0 = 0; n0 < N; n0 += kRowBlock) {
    const Eigen::Index rows = std::min(kRowBlock, N - n0);
    const Eigen::Index strips = (rows + MR - 1) / MR;
    for (Eigen::Index k0 = 0; k0 < P; k0 += kDepthBlock) {
      const Eigen::Index depth = std::min(kDepthBlock, P - k0);
      // Pack Ψ[n0 …, k0 …] into strips of MR rows (zero rows past the end).
      for (Eigen::Index s = 0; s < strips; ++s) {
        const Eigen::Index r0 = s * MR, valid = std::min(MR, rows - r0);
        double* strip = packed.data() + s * MR * depth;
        for (Eigen::Index k = 0; k < depth; ++k) {
          const double* from = psi.data() + (k0 + k) * psi.outerStride() + n0 + r0;
          std::memcpy(strip + k * MR, from, static_cast<std::size_t>(valid) * sizeof(double));
          if (valid < MR) std::memset(strip + k * MR + valid, 0, static_cast<std::size_t>(MR - valid) * sizeof(double));
        }
      }
      const bool continued = k0 > 0;
      for (Eigen::Index p = 0; p < panels; ++p) {
        const double* panel = c.panel(p) + k0 * kPanel;
        for (Eigen::Index s = 0; s < strips; ++s) {
          const double* strip = packed.data() + s * MR * depth;
          const Eigen::Index row = n0 + s * MR, valid_rows = std::min(MR, N - row);
          for (Eigen::Index c0 = 0; c0 < kPanel; c0 += NC) {
            const Eigen::Index col = p * kPanel + c0;
            if (col >= J) break;
            const Eigen::Index valid_cols = std::min<Eigen::Index>(NC, J - col);
            double* target = y.data() + col * ldy + row;
            if (valid_rows == MR && valid_cols == NC) {
              tile<V, MV, NC>(depth, strip, panel + c0, target, ldy, continued);
              continue;
            }
            // A partial tile goes through a full-size buffer.
            std::fill(edge, edge + MR * NC, 0.0);
            if (continued)
              for (Eigen::Index j = 0; j < valid_cols; ++j)
                std::memcpy(edge + j * MR, target + j * ldy, static_cast<std::size_t>(valid_rows) * sizeof(double));
            tile<V, MV, NC>(depth, strip, panel + c0, edge, MR, continued);
            for (Eigen::Index j = 0; j < valid_cols; ++j)
              std::memcpy(target + j * ldy, edge + j * MR, static_cast<std::size_t>(valid_rows) * sizeof(double));
          }
        }
      }
    }
  }
}

#if defined(__GNUC__) && defined(__x86_64__) && !defined(SIGMATUBE_NO_MULTIVERSIONING)
#define SIGMATUBE_PRODUCT_DISPATCH 1
__attribute__((target("avx512f"))) void product_avx512(const Eigen::Ref<const Eigen::MatrixXd>& psi,
                                                       const PackedColumns& c, Eigen::Ref<Eigen::MatrixXd> y) {
  product_blocks<Vec8, 3, 8>(psi, c, y);
}
__attribute__((target("avx2"))) void product_avx2(const Eigen::Ref<const Eigen::MatrixXd>& psi, const PackedColumns& c,
                                                  Eigen::Ref<Eigen::MatrixXd> y) {
  product_blocks<Vec4, 2, 4>(psi, c, y);
}
#else
#define SIGMATUBE_PRODUCT_DISPATCH 0
#endif
void product_baseline(const Eigen::Ref<const Eigen::MatrixXd>& psi, const PackedColumns& c,
                      Eigen::Ref<Eigen::MatrixXd> y) {
  product_blocks<Vec2, 4, 2>(psi, c, y);
}

std::atomic<ProductTarget> requested{ProductTarget::automatic};

ProductTarget widest_available() {
#if SIGMATUBE_PRODUCT_DISPATCH
  static const ProductTarget widest = [] {
    __builtin_cpu_init();
    if (__builtin_cpu_supports("avx512f")) return ProductTarget::avx512f;
    if (__builtin_cpu_supports("avx2")) return ProductTarget::avx2;
    return ProductTarget::baseline;
  }();
  return widest;
#else
  return ProductTarget::baseline;
#endif
}

ProductTarget active() {
  const ProductTarget widest = widest_available();
  const ProductTarget want = requested.load(std::memory_order_relaxed);
  if (want == ProductTarget::automatic) return widest;
  return static_cast<int>(want) < static_cast<int>(widest) ? want : widest;
}

}  // namespace

void set_product_target(ProductTarget target) { requested.store(target, std::memory_order_relaxed); }

const char* product_target_name() {
  switch (active()) {
    case ProductTarget::avx512f: return "avx512f";
    case ProductTarget::avx2: return "avx2";
    default: return "x86-64 baseline";
  }
}

void basis_product(const Eigen::Ref<const Eigen::MatrixXd>& psi, const PackedColumns& c, Eigen::Ref<Eigen::MatrixXd> y) {
  if (psi.cols() != c.rows() || y.rows() != psi.rows() || y.cols() != c.cols())
    throw std::logic_error("basis_product: shapes differ");
  if (y.rows() == 0 || y.cols() == 0) return;
  if (psi.cols() == 0) {
    y.setZero();
    return;
  }
  switch (active()) {
#if SIGMATUBE_PRODUCT_DISPATCH
    case ProductTarget::avx512f: product_avx512(psi, c, y); return;
    case ProductTarget::avx2: product_avx2(psi, c, y); return;
#endif
    default: product_baseline(psi, c, y); return;
  }
}

void basis_product(const Eigen::Ref<const Eigen::MatrixXd>& psi, const Eigen::Ref<const Eigen::MatrixXd>& c,
                   Eigen::Ref<Eigen::MatrixXd> y) {
  basis_product(psi, PackedColumns(c), y);
}

}  // namespace sigmatube::expansion
