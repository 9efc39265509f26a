// SPDX-License-Identifier: MIT
#pragma once
// The product Y = Ψ·C of a basis matrix Ψ [N, P] and coefficient columns C [P, J]
// (surrogate evaluation in bulk), in a fixed order of operations:
//
//   Y(n, j) = (…((0 + Ψ(n,0)·C(0,j)) + Ψ(n,1)·C(1,j)) + …) + Ψ(n,P−1)·C(P−1,j),
//
// one accumulator per element, k ascending, every product rounded before it is
// added (no fused multiply–add). The result is therefore the same bits whatever the
// CPU, the instruction set picked at run time (AVX-512F, AVX2 or the x86-64
// baseline), the blocking, the thread count or the MPI rank count; and it equals
// Eigen's product where Eigen keeps one accumulator too (P up to its depth block,
// without FMA, as in the default build).
//
// The work runs in register tiles of rows × 8 columns over packed panels of Ψ and
// C (Goto & van de Geijn 2008, "Anatomy of high-performance matrix
// multiplication", ACM TOMS 34(3)).
#include <Eigen/Dense>
#include <cstddef>
#include <vector>

namespace sigmatube::expansion {

/// Coefficient columns packed for basis_product: panels of kProductPanel columns,
/// row k of a panel contiguous (zero-padded past the last column). Packing once and
/// reusing it saves the copy when the same columns are multiplied many times.
class PackedColumns {
 public:
  static constexpr Eigen::Index kProductPanel = 8;
  PackedColumns() = default;
  /// The columns `columns` of c, in that order (all of c when `columns` is empty).
  explicit PackedColumns(const Eigen::Ref<const Eigen::MatrixXd>& c, const std::vector<int>& columns = {});
  /// The columns first … first + count − 1 of c.
  PackedColumns(const Eigen::Ref<const Eigen::MatrixXd>& c, Eigen::Index first, Eigen::Index count);
  Eigen::Index rows() const { return rows_; }
  Eigen::Index cols() const { return cols_; }
  const double* panel(Eigen::Index p) const { return data_.data() + p * rows_ * kProductPanel; }
  /// The packed columns as a plain [rows, cols] matrix.
  Eigen::MatrixXd unpacked() const;

 private:
  Eigen::Index rows_ = 0, cols_ = 0;
  std::vector<double> data_;
};

/// y = psi · c (y must be psi.rows() × c.cols(); it may be a block of a larger matrix).
void basis_product(const Eigen::Ref<const Eigen::MatrixXd>& psi, const PackedColumns& c, Eigen::Ref<Eigen::MatrixXd> y);
/// The same with c packed for this call.
void basis_product(const Eigen::Ref<const Eigen::MatrixXd>& psi, const Eigen::Ref<const Eigen::MatrixXd>& c,
                   Eigen::Ref<Eigen::MatrixXd> y);

/// Instruction sets basis_product can run with; `automatic` picks the widest the CPU has.
enum class ProductTarget { automatic, baseline, avx2, avx512f };
/// Restrict basis_product to `target` (for checks and benchmarks: the bits are the
/// same either way). A target the CPU lacks falls back to the next narrower one.
void set_product_target(ProductTarget target);
/// Name of the instruction set basis_product runs with now ("avx512f", "avx2",
/// "x86-64 baseline").
const char* product_target_name();

}  // namespace sigmatube::expansion
