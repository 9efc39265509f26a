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
#include "sigmatube/expansion/basis_product.h"
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
  /// The same for columns packed beforehand (PackedColumns of `coefficients`),
  /// for callers that evaluate the same columns at many small sets of points.
  void evaluate(const Eigen::MatrixXd& points, const PackedColumns& packed, Eigen::MatrixXd& values) const;

  Eigen::MatrixXd mean() const;  // [n_times, n_outputs]
  Eigen::MatrixXd std() const;   // [n_times, n_outputs]
  /// First-order and total Sobol indices, [n_times·n_outputs, d] with row c as
  /// above; rows with zero variance are 0.
  Eigen::MatrixXd sobol_first() const;
  Eigen::MatrixXd sobol_total() const;
};

/// The case-file name of a method: "sparse-grid", "tensor-grid", "regression",
/// "adaptive-sparse-grid", "sparse-regression".
const char* method_name(casefile::SurrogateMethod method);
/// The two methods that choose their own index set (always adaptive).
bool is_dimension_adaptive(casefile::SurrogateMethod method);
/// Covariance of the coefficients of every column of a linear fit C = W·Y:
/// Cov(C[:, c]) = residual_variance[c] · gram (expansion/grouped_sobol.h).
struct CoefficientCovariance {
  Eigen::MatrixXd gram;                // W Wᵀ, [P, P]
  Eigen::VectorXd residual_variance;   // σ̂²_c = ‖Y_c − Ψ C_c‖² / (N − P), [n_columns]; NaN when N ≤ P
};

/// How the surrogate build ended.
struct SurrogateSummary {
  std::string method;           // method_name()
  int model_runs = 0;           // distinct model runs made (hold-out runs included)
  int level_reached = 0;        // sparse-grid level, or 0
  int degree_reached = 0;       // basis total degree
  bool tolerance_met = true;    // every error estimate ≤ tolerance (also reported when not adaptive)
  std::vector<int> runs_per_refinement;        // runs in all after each refinement step (adaptive builds)
  std::string stop_reason;                     // dimension-adaptive builds: why they stopped
  std::vector<int> retained_degree_per_input;  // dimension-adaptive builds: highest degree per germ dimension
  std::vector<int> retained_terms_per_input;   // … and the number of retained terms involving it
  // Calibrated error estimate per output, [n_outputs]: the estimated relative
  // root-mean-square error of the surrogate returned, on the scale of the Monte
  // Carlo validation (RMSE over report times and germ points / √(mean_t s_t²)):
  //   e_o = √( Σ_t MSE_{t,o} / Σ_t s_{t,o}² ),  s² = Σ_{α≠0} C[α, c]²,
  // with MSE_{t,o} estimated
  //   sparse-grid, tensor-grid, adaptive-sparse-grid: on hold-out runs (40 germ
  //     points drawn from the germ distribution under a fixed seed, fewer when the
  //     budget is short; none and NaN below 10);
  //   regression, sparse-regression: by corrected leave-one-out (Blatman & Sudret,
  //     J. Comput. Phys. 230, 2011; Chapelle, Vapnik & Bengio 2002), no extra runs.
  Eigen::VectorXd error_estimate;
  std::vector<std::string> notes;  // what happened, e.g. "run budget reached at level 4"
  // Of the final fit, from its design runs (for confidence intervals of Sobol indices).
  CoefficientCovariance covariance;
};

/// Number of distinct model runs the configured design needs (for `check`): the
/// whole design when not adaptive, the first step when adaptive (the adaptive
/// loop may then use up to max_model_runs). Sparse- and tensor-grid counts
/// include the hold-out runs of the error estimate. Throws InputError (keys "surrogate.max_model_runs",
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
///                points (expansion/regression.h);
///   adaptive-sparse-grid  dimension-adaptive Smolyak pseudo-spectral projection on
///                nested Leja rules (src/expansion/adaptive_sparse_grid.cpp);
///   sparse-regression  degree-adaptive sparse regression by simultaneous orthogonal
///                matching pursuit with corrected leave-one-out selection on a growing
///                Sobol design (src/expansion/sparse_regression.cpp).
/// The two dimension-adaptive methods always refine until tolerance or
/// max_model_runs and end with the best surrogate and a note, never an error.
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
