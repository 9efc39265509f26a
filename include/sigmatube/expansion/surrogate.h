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

// Layer expansion/ (DEVELOPERS.md: the pipeline, folder by folder).
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
  bool tolerance_met = true;    // every error estimate ≤ tolerance (also reported when not adaptive)
  // Relative error estimate per output, [n_outputs]: the column estimates below
  // pooled over report times with weights s_c² (norm ratios: √(Σ_t ‖ΔC_c‖²/Σ_t s_c²);
  // LOO: Σ_t ε_c s_c² / Σ_t s_c²), the relative error of the whole time history. Per
  // column c, with sd_c = √(Σ_{α≠0} C[α,c]²) and s_c = max(sd_c, 1e-9·(1 + |mean_c|))
  // (the floor keeps constant outputs from dividing by ~0):
  //   sparse grid:  ‖C_L[:,c] − C_{L−1}[:,c]‖₂ / s_c, the change from level L − 1
  //                 (both projected on the union of their index sets); level 1 has
  //                 no coarser level and reports NaN;
  //   tensor grid, adaptive:     ‖C_p − C_{p−1}‖₂ / s_c, the change from degree p − 1;
  //   tensor grid, not adaptive: ‖C[{α : |α| = p}, c]‖₂ / s_c, the weight of the
  //                 highest total degree (no extra runs);
  //   regression:   ε_LOO = mean_i(e_i²)/var(y), e_i = r_i/(1 − h_i), the relative
  //                 leave-one-out error (Blatman & Sudret, J. Comput. Phys. 230, 2011;
  //                 note it is a ratio of squares, the others ratios of norms).
  Eigen::VectorXd error_estimate;
  std::vector<std::string> notes;  // what happened, e.g. "run budget reached at level 4"
};

/// Number of distinct model runs the configured design needs (for `check`): the
/// whole design when not adaptive, the first step when adaptive (the adaptive
/// loop may then use up to max_model_runs). The sparse-grid count includes the
/// level L − 1 points its error estimate needs (shared with level L for nested
/// rules; extra runs for Gauss rules), the adaptive tensor-grid count the
/// degree p − 1 grid. Throws InputError (keys "surrogate.max_model_runs",
/// "surrogate.nested", "surrogate.oversampling", "surrogate.level",
/// "surrogate.degree", "surrogate.q_norm", "surrogate.tolerance", "uncertain"
/// for an empty germ) when the design cannot be built.
int planned_model_runs(const std::vector<germ::FamilySpec>& families, const casefile::SurrogateOptions& options);

/// Builds the surrogate. Coefficients for every output come from one matrix
/// product C = W·Y over one set of model runs; the evaluator receives every new
/// point of a design in one call, and a point shared by two designs (exact same
/// coordinates) runs once.
///   sparse-grid  Smolyak pseudo-spectral projection (expansion/pseudo_spectral_projection.h)
///                at options.level, Gauss linear-growth rules or nested Clenshaw–Curtis;
///   tensor-grid  full tensor Gauss with degree + 1 points per dimension, projected on
///                the total-degree / q-norm set (expansion/tensor_projection.h);
///   regression   least squares on ceil(oversampling·P) Sobol or Latin hypercube
///                points (expansion/regression.h).
/// Adaptive: starts at options.level (at least 2) or options.degree (at least 1)
/// and raises it by one until every output's error estimate ≤ tolerance, or the
/// next step would exceed max_model_runs (then tolerance_met = false and a note
/// says so). Throws InputError as planned_model_runs does (checked before any
/// run), NumericalError when a run returns a non-finite value or the regression
/// design matrix is rank deficient.
Surrogate build_surrogate(const std::vector<germ::FamilySpec>& families, int n_times, int n_outputs,
                          const casefile::SurrogateOptions& options, const ModelEvaluator& evaluate,
                          SurrogateSummary* summary);

/// The surrogate of a model without uncertain inputs: one coefficient per
/// column, the nominal run ([n_times, n_outputs]).
Surrogate constant_surrogate(const Eigen::MatrixXd& nominal_outputs);

/// Surrogate outputs at germ points (rows) in the [N, n_times·n_outputs] layout of
/// a model run, only `columns` evaluated (the others 0).
void surrogate_outputs(const Surrogate& surrogate, const Eigen::MatrixXd& points, const std::vector<int>& columns,
                       Eigen::MatrixXd& Y);

/// The surrogate stage of an analysis and what it returns.
struct SurrogateStage {
  Surrogate surrogate;
  SurrogateSummary summary;
};

/// build_surrogate over `families` for outputs shaped like the nominal run
/// ([n_times, n_outputs]); with no family (no uncertain input), the constant
/// surrogate of the nominal run and no model run. Throws as build_surrogate.
SurrogateStage surrogate_stage(const std::vector<germ::FamilySpec>& families, const Eigen::MatrixXd& nominal_outputs,
                               const casefile::SurrogateOptions& options, const ModelEvaluator& evaluate);

}  // namespace sigmatube::expansion
