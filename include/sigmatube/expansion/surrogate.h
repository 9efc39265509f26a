// SPDX-License-Identifier: MIT
#pragma once
// A polynomial chaos surrogate of every (report time, output) pair at once:
//   Y_c(ξ) ≈ Σ_α  C[α, c] ψ_α(ξ),   c = t·n_outputs + o,
// with ψ_α the orthonormal tensor-product basis of the germ's families, so that
//   mean_c = C[0, c],  var_c = Σ_{α≠0} C[α, c]²,
// and Sobol indices follow from sums of squared coefficients (Sudret, "Global
// sensitivity analysis using polynomial chaos expansions", Reliab. Eng. Syst.
// Saf. 93, 2008).
#include <functional>
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/casefile/case_options.h"
#include "sigmatube/germ/family.h"

namespace sigmatube::expansion {

/// Row k = multi-index α_k (one degree per germ dimension). Row 0 is all zeros.
using MultiIndexSet = Eigen::Matrix<int, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;

/// Runs the model at N germ points (rows of `points`, [N, d]) and writes the
/// flattened outputs into `values` ([N, n_times·n_outputs], column c =
/// t·n_outputs + o). Supplied by the caller (thread/rank parallel there).
using ModelEvaluator = std::function<void(const Eigen::MatrixXd& points, Eigen::MatrixXd& values)>;

struct Surrogate {
  std::vector<germ::FamilySpec> families;  // one per germ dimension
  MultiIndexSet indices;                   // [P, d]
  Eigen::MatrixXd coefficients;            // [P, n_times·n_outputs]
  int n_times = 0;
  int n_outputs = 0;

  int dimension() const { return static_cast<int>(families.size()); }
  int basis_size() const { return static_cast<int>(indices.rows()); }

  /// Basis matrix Ψ[i, k] = ψ_{α_k}(points[i, :]), [N, P].
  Eigen::MatrixXd basis_matrix(const Eigen::MatrixXd& points) const;
  /// Surrogate values at N points: Ψ · C, [N, n_times·n_outputs]. With
  /// `columns` non-empty, only those columns of C (in that order).
  void evaluate(const Eigen::MatrixXd& points, Eigen::MatrixXd& values,
                const std::vector<int>& columns = {}) const;

  Eigen::MatrixXd mean() const;  // [n_times, n_outputs]
  Eigen::MatrixXd std() const;   // [n_times, n_outputs]
  /// First-order and total Sobol indices, [n_times·n_outputs, d] with row c as
  /// above; rows with zero variance are 0.
  Eigen::MatrixXd sobol_first() const;
  Eigen::MatrixXd sobol_total() const;
};

/// How the surrogate build ended.
struct SurrogateSummary {
  std::string method;           // "sparse-grid", "tensor-grid", "regression"
  int model_runs = 0;           // distinct model runs made
  int level_reached = 0;        // sparse-grid level, or 0
  int degree_reached = 0;       // basis total degree
  bool tolerance_met = true;    // adaptive: every error estimate ≤ tolerance
  // Relative error estimate per output (max over report times), [n_outputs]:
  // sparse/tensor grid: ‖C_L - C_{L-1}‖ / sd  (difference to the previous level);
  // regression: leave-one-out error / variance (Blatman & Sudret 2010).
  Eigen::VectorXd error_estimate;
  std::vector<std::string> notes;  // what happened, e.g. "run budget reached at level 4"
};

/// Number of distinct model runs the configured design needs (for `check`).
/// Throws InputError when the design cannot be built (budget, unsupported combination).
int planned_model_runs(const std::vector<germ::FamilySpec>& families, const casefile::SurrogateOptions& options);

/// Builds the surrogate. Coefficients for every output come from one matrix
/// product over one set of model runs. Throws InputError for a design the
/// options cannot support (e.g. budget below the first level).
Surrogate build_surrogate(const std::vector<germ::FamilySpec>& families, int n_times, int n_outputs,
                          const casefile::SurrogateOptions& options, const ModelEvaluator& evaluate,
                          SurrogateSummary* summary);

}  // namespace sigmatube::expansion
