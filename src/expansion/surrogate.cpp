// SPDX-License-Identifier: MIT
#include "sigmatube/expansion/surrogate.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <optional>
#include <sstream>
#include <stdexcept>

#include "sigmatube/core/error.h"
#include "sigmatube/core/option_values.h"
#include "sigmatube/design/sampling_design.h"
#include "sigmatube/design/sparse_grid.h"
#include "sigmatube/expansion/basis_product.h"
#include "sigmatube/expansion/multi_index.h"
#include "sigmatube/expansion/polynomial_basis.h"
#include "sigmatube/expansion/pseudo_spectral_projection.h"
#include "sigmatube/expansion/grouped_sobol.h"
#include "sigmatube/expansion/regression.h"
#include "sigmatube/expansion/sobol_indices.h"
#include "sigmatube/expansion/tensor_projection.h"

#include "build_parts.h"

namespace sigmatube::expansion {

// ---------------------------------------------------------------- Surrogate

Eigen::MatrixXd Surrogate::basis_matrix(const Eigen::MatrixXd& points) const {
  return expansion::basis_matrix(families, indices, points);
}

void Surrogate::evaluate(const Eigen::MatrixXd& points, Eigen::MatrixXd& values, const std::vector<int>& columns) const {
  for (const int j : columns)
    if (j < 0 || j >= coefficients.cols()) throw std::logic_error("Surrogate::evaluate: column out of range");
  // The coefficient columns are packed once per call for the product
  // (sigmatube/expansion/basis_product.h: the same bits on every CPU).
  evaluate(points, PackedColumns(coefficients, columns), values);
}

void Surrogate::evaluate(const Eigen::MatrixXd& points, const PackedColumns& packed, Eigen::MatrixXd& values) const {
  if (points.cols() != dimension()) throw std::logic_error("Surrogate::evaluate: points have the wrong dimension");
  if (packed.rows() != basis_size()) throw std::logic_error("Surrogate::evaluate: packed columns of another surrogate");
  values.resize(points.rows(), packed.cols());
  if (points.rows() == 1) {
    // One point (the design-point search of the rare-event screens): Eigen's
    // matrix-vector product, as before the kernel, so that the search follows
    // the same path bit for bit (its summation order differs from the kernel's
    // in round-off; a search on a flat clearance can hinge on it).
    values.noalias() = basis_matrix(points) * packed.unpacked();
    return;
  }
  // Blocks of rows keep Ψ small when a million samples are evaluated at once.
  constexpr Eigen::Index kBlockRows = 4096;
  Eigen::MatrixXd psi;
  for (Eigen::Index start = 0; start < points.rows(); start += kBlockRows) {
    const Eigen::Index rows = std::min(kBlockRows, points.rows() - start);
    psi.resize(rows, basis_size());
    basis_matrix_into(families, indices, points.middleRows(start, rows), psi);
    basis_product(psi, packed, values.middleRows(start, rows));
  }
}

namespace {

void check_shape(const Surrogate& s) {
  if (s.basis_size() == 0 || (s.indices.row(0).array() != 0).any())
    throw std::logic_error("Surrogate: row 0 of the index set must be the zero index");
  if (s.coefficients.rows() != s.basis_size() || s.coefficients.cols() != s.n_times * s.n_outputs)
    throw std::logic_error("Surrogate: coefficients have the wrong shape");
}

Eigen::MatrixXd reshape_rows(const Eigen::RowVectorXd& flat, int n_times, int n_outputs) {
  Eigen::MatrixXd result(n_times, n_outputs);
  for (int t = 0; t < n_times; ++t)
    for (int o = 0; o < n_outputs; ++o) result(t, o) = flat[t * n_outputs + o];
  return result;
}

}  // namespace

Eigen::MatrixXd Surrogate::mean() const {
  check_shape(*this);
  return reshape_rows(coefficients.row(0), n_times, n_outputs);
}

Eigen::MatrixXd Surrogate::std() const {
  check_shape(*this);
  const Eigen::RowVectorXd variance = coefficients.bottomRows(basis_size() - 1).colwise().squaredNorm();
  return reshape_rows(variance.cwiseSqrt(), n_times, n_outputs);
}

Eigen::MatrixXd Surrogate::sobol_first() const {
  check_shape(*this);
  return sobol_first_order(indices, coefficients);
}

Eigen::MatrixXd Surrogate::sobol_total() const {
  check_shape(*this);
  return expansion::sobol_total(indices, coefficients);
}

// ---------------------------------------------------------------- build

namespace {

// Highest level / degree the adaptive loop tries; beyond these the 1-D rules
// themselves lose accuracy (Clenshaw–Curtis 2^29 points, Gauss recurrences).
constexpr int kMaxSparseLevel = 25;
constexpr int kMaxDegree = 60;
// Latin hypercube designs of the surrogate are seeded by this fixed value so that
// a case gives the same surrogate on every run (common practice: fixed seeds).
constexpr std::uint64_t kLatinHypercubeSeed = 0x5eed1a7cULL;
// A coefficient below this share of its column's standard deviation is round-off
// for the report of which inputs matter (double precision leaves ~1e-16).
constexpr double kNegligibleCoefficient = 1e-10;

SourceLocation at(const casefile::SurrogateOptions& options, const std::string& key) {
  SourceLocation where = options.where;
  where.key = key;
  return where;
}

}  // namespace

const char* method_name(casefile::SurrogateMethod method) {
  switch (method) {
    case casefile::SurrogateMethod::sparse_grid: return "sparse-grid";
    case casefile::SurrogateMethod::tensor_grid: return "tensor-grid";
    case casefile::SurrogateMethod::regression: return "regression";
    case casefile::SurrogateMethod::adaptive_sparse_grid: return "adaptive-sparse-grid";
    case casefile::SurrogateMethod::sparse_regression: return "sparse-regression";
  }
  throw std::logic_error("unknown surrogate method");
}

bool is_dimension_adaptive(casefile::SurrogateMethod method) {
  return method == casefile::SurrogateMethod::adaptive_sparse_grid ||
         method == casefile::SurrogateMethod::sparse_regression;
}

namespace {

// The fixed methods run hold-out points beside the design for the error estimate
// (regression too: its corrected leave-one-out error measured 0.24 of the true
// error on a small design, docs/performance.md; it remains the fallback).
bool uses_hold_out(casefile::SurrogateMethod method) {
  return method == casefile::SurrogateMethod::sparse_grid || method == casefile::SurrogateMethod::tensor_grid ||
         method == casefile::SurrogateMethod::regression;
}

// Runs of the first step of a dimension-adaptive build (its hold-out included).
int dimension_adaptive_first_runs(const std::vector<germ::FamilySpec>& families,
                                  const casefile::SurrogateOptions& options) {
  if (options.method == casefile::SurrogateMethod::adaptive_sparse_grid)
    return detail::adaptive_sparse_grid_first_runs(families) +
           std::max(detail::kMinHoldOutRuns,
                    detail::hold_out_size(options.max_model_runs - detail::adaptive_sparse_grid_first_runs(families)));
  return detail::sparse_regression_first_runs(families, options.max_model_runs) +
         std::max(detail::kMinHoldOutRuns, detail::sparse_regression_hold_out(families, options.max_model_runs));
}

void validate(const std::vector<germ::FamilySpec>& families, const casefile::SurrogateOptions& options) {
  if (families.empty())
    throw InputError(at(options, "uncertain"),
                     std::string("the ") + method_name(options.method) +
                         " surrogate needs at least one uncertain input (the germ has dimension 0)");
  if (options.max_model_runs < 1)
    throw InputError(at(options, "surrogate.max_model_runs"),
                     "must be at least 1, got " + std::to_string(options.max_model_runs));
  if ((options.adaptive || is_dimension_adaptive(options.method)) && !(options.tolerance > 0.0)) {
    std::ostringstream m;
    m << "must be positive for an adaptive surrogate, got " << options.tolerance;
    throw InputError(at(options, "surrogate.tolerance"), m.str());
  }
  switch (options.method) {
    case casefile::SurrogateMethod::adaptive_sparse_grid:
    case casefile::SurrogateMethod::sparse_regression: {
      const int first = dimension_adaptive_first_runs(families, options);
      if (first > options.max_model_runs) {
        std::ostringstream m;
        m << "the first " << method_name(options.method) << " step over " << families.size() << " germ dimensions needs "
          << first << " model runs"
          << (options.method == casefile::SurrogateMethod::adaptive_sparse_grid
                  ? " (the centre, 4 Leja points per dimension and " + std::to_string(detail::kMinHoldOutRuns) +
                        " hold-out runs)"
                  : " (two per linear basis function and " + std::to_string(detail::kMinHoldOutRuns) +
                        " hold-out runs)")
          << ", more than max_model_runs = " << options.max_model_runs;
        throw InputError(at(options, "surrogate.max_model_runs"), m.str());
      }
      if (options.method == casefile::SurrogateMethod::sparse_regression && !(options.q_norm > 0.0 && options.q_norm <= 1.0)) {
        std::ostringstream m;
        m << "must lie in (0, 1], got " << options.q_norm;
        throw InputError(at(options, "surrogate.q_norm"), m.str());
      }
      break;
    }
    case casefile::SurrogateMethod::sparse_grid:
      if (options.level < 1 || options.level > kMaxSparseLevel)
        throw InputError(at(options, "surrogate.level"),
                         "must lie in 1.." + std::to_string(kMaxSparseLevel) + ", got " + std::to_string(options.level));
      if (options.nested)
        for (std::size_t k = 0; k < families.size(); ++k)
          if (families[k].family != germ::Family::legendre)
            throw InputError(at(options, "surrogate.nested"),
                             "nested Clenshaw-Curtis rules exist only for uniform (legendre) germ variables; germ "
                             "dimension " + std::to_string(k) + " is " + germ::to_string(families[k]));
      break;
    case casefile::SurrogateMethod::tensor_grid:
    case casefile::SurrogateMethod::regression:
      if (options.degree < 0 || options.degree > kMaxDegree)
        throw InputError(at(options, "surrogate.degree"),
                         "must lie in 0.." + std::to_string(kMaxDegree) + ", got " + std::to_string(options.degree));
      if (!(options.q_norm > 0.0 && options.q_norm <= 1.0)) {
        std::ostringstream m;
        m << "must lie in (0, 1], got " << options.q_norm;
        throw InputError(at(options, "surrogate.q_norm"), m.str());
      }
      if (options.method == casefile::SurrogateMethod::regression && !(options.oversampling >= 2.0)) {
        std::ostringstream m;
        m << "must be at least 2 (model runs per basis function), got " << options.oversampling;
        throw InputError(at(options, "surrogate.oversampling"), m.str());
      }
      break;
  }
}

// The design of one level (sparse grid) or degree (tensor grid, regression).
struct Design {
  int setting = 0;
  Eigen::MatrixXd points;
  design::SparseGrid grid;  // sparse grid only
  MultiIndexSet indices;    // regression only (before projection)
  LinearProjection tensor;  // tensor grid only
};

// Upper bound on the design's runs, computed without building it.
double design_size_bound(const std::vector<germ::FamilySpec>& families, const casefile::SurrogateOptions& options,
                         int setting) {
  const int d = static_cast<int>(families.size());
  switch (options.method) {
    case casefile::SurrogateMethod::tensor_grid: return tensor_grid_size(d, setting);
    case casefile::SurrogateMethod::regression: {
      // Size of the index set without listing it when it would be enormous.
      double total_degree_size = 1.0;  // C(d + p, p)
      for (int j = 1; j <= setting; ++j) total_degree_size = total_degree_size * (d + j) / j;
      if (total_degree_size > 1e7) return total_degree_size * options.oversampling;
      return regression_size(static_cast<int>(hyperbolic_set(d, setting, options.q_norm).rows()), options.oversampling);
    }
    case casefile::SurrogateMethod::sparse_grid: return 0.0;  // counted after building (cheap, no runs)
    case casefile::SurrogateMethod::adaptive_sparse_grid:
    case casefile::SurrogateMethod::sparse_regression: break;
  }
  throw std::logic_error("design_size_bound: not a fixed-design method");
}

Design make_design(const std::vector<germ::FamilySpec>& families, const casefile::SurrogateOptions& options,
                   int setting) {
  Design design;
  design.setting = setting;
  switch (options.method) {
    case casefile::SurrogateMethod::sparse_grid:
      design.grid = design::build_sparse_grid(families, setting, options.nested);
      design.points = design.grid.points;
      break;
    case casefile::SurrogateMethod::tensor_grid: {
      design.tensor = tensor_projection(families, setting, options.q_norm);
      design.points = design.tensor.points;
      break;
    }
    case casefile::SurrogateMethod::regression: {
      design.indices = hyperbolic_set(static_cast<int>(families.size()), setting, options.q_norm);
      const int n = regression_size(static_cast<int>(design.indices.rows()), options.oversampling);
      design.points = options.design == casefile::RegressionDesign::sobol
                          ? design::sobol_design(families, n)
                          : design::latin_hypercube_design(families, n, kLatinHypercubeSeed);
      break;
    }
    case casefile::SurrogateMethod::adaptive_sparse_grid:
    case casefile::SurrogateMethod::sparse_regression: throw std::logic_error("make_design: not a fixed-design method");
  }
  return design;
}

struct Fit {
  int setting = 0;
  MultiIndexSet indices;
  Eigen::MatrixXd coefficients;  // [P, n_columns]
  Eigen::VectorXd column_mse;    // regression: corrected leave-one-out mean squared error per column
  Eigen::MatrixXd matrix;        // W of the fit, [P, N]
  Eigen::MatrixXd points;        // its design points, [N, d]
};

Fit fit(const std::vector<germ::FamilySpec>& families, const casefile::SurrogateOptions& options, const Design& design,
        detail::RunCache& cache) {
  const Eigen::MatrixXd values = cache.values(design.points);
  Fit result;
  result.setting = design.setting;
  result.points = design.points;
  switch (options.method) {
    case casefile::SurrogateMethod::sparse_grid: {
      const LinearProjection projection = sparse_pseudo_spectral_projection(families, design.grid);
      result.indices = projection.indices;
      result.coefficients.noalias() = projection.matrix * values;
      result.matrix = projection.matrix;
      break;
    }
    case casefile::SurrogateMethod::tensor_grid:
      result.indices = design.tensor.indices;
      result.coefficients.noalias() = design.tensor.matrix * values;
      result.matrix = design.tensor.matrix;
      break;
    case casefile::SurrogateMethod::regression: {
      const RegressionProjection projection = regression_on_points(families, design.indices, design.points);
      result.indices = projection.indices;
      result.coefficients.noalias() = projection.matrix * values;
      result.column_mse = corrected_leave_one_out_mse(projection, values, result.coefficients);
      result.matrix = projection.matrix;
      break;
    }
    case casefile::SurrogateMethod::adaptive_sparse_grid:
    case casefile::SurrogateMethod::sparse_regression: throw std::logic_error("fit: not a fixed-design method");
  }
  return result;
}

struct Start {
  int setting = 0;
};

Start start_of(const casefile::SurrogateOptions& options) {
  Start s;
  switch (options.method) {
    case casefile::SurrogateMethod::sparse_grid:
      s.setting = options.adaptive ? std::max(2, options.level) : options.level;
      break;
    case casefile::SurrogateMethod::tensor_grid:
    case casefile::SurrogateMethod::regression:
      s.setting = options.adaptive ? std::max(1, options.degree) : options.degree;
      break;
    case casefile::SurrogateMethod::adaptive_sparse_grid:
    case casefile::SurrogateMethod::sparse_regression: break;
  }
  return s;
}

const char* setting_name(casefile::SurrogateMethod method) {
  return method == casefile::SurrogateMethod::sparse_grid ? "level" : "degree";
}

// The first design of a fixed-design build; throws InputError when it exceeds the
// budget. *runs: its distinct runs, *hold_out: the hold-out runs that fit beside it.
Design first_design(const std::vector<germ::FamilySpec>& families, const casefile::SurrogateOptions& options,
                    int* runs, int* hold_out) {
  const Start start = start_of(options);
  const auto over_budget = [&](double runs_needed) {
    std::ostringstream m;
    m << "the first " << method_name(options.method) << " design (" << setting_name(options.method) << " "
      << start.setting << ") needs " << runs_needed << " model runs, more than max_model_runs = "
      << options.max_model_runs;
    return InputError(at(options, "surrogate.max_model_runs"), m.str());
  };
  const double bound = design_size_bound(families, options, start.setting);
  if (bound > options.max_model_runs) throw over_budget(bound);
  Design design = make_design(families, options, start.setting);
  const int count = detail::RunCache(0, nullptr).count_new(design.points);
  if (count > options.max_model_runs) throw over_budget(count);
  if (runs) *runs = count;
  if (hold_out) *hold_out = uses_hold_out(options.method) ? detail::hold_out_size(options.max_model_runs - count) : 0;
  return design;
}

void finish_summary(SurrogateSummary& out, const detail::RunCache& cache, int n_times, int n_outputs,
                    const std::vector<std::pair<int, double>>& history) {
  for (auto& note : detail::saturation_notes(cache, n_times, n_outputs)) out.notes.push_back(std::move(note));
  const std::string stalled = detail::stall_note(history);
  if (!stalled.empty() && !out.tolerance_met) out.notes.push_back(stalled);
}

Surrogate make_surrogate(const std::vector<germ::FamilySpec>& families, MultiIndexSet indices,
                         Eigen::MatrixXd coefficients, int n_times, int n_outputs) {
  Surrogate surrogate;
  surrogate.families = families;
  surrogate.indices = std::move(indices);
  surrogate.coefficients = std::move(coefficients);
  surrogate.n_times = n_times;
  surrogate.n_outputs = n_outputs;
  return surrogate;
}

// "runs after each refinement: a, b, …" (at most 40 numbers, the middle elided).
std::string runs_note(const std::vector<int>& runs) {
  std::ostringstream m;
  m << "runs after each step:";
  const std::size_t n = runs.size();
  for (std::size_t i = 0; i < n; ++i) {
    if (n > 40 && i == 20) {
      m << " …";
      i = n - 20;
    }
    m << (i ? ", " : " ") << runs[i];
  }
  return m.str();
}

Surrogate build_dimension_adaptive(const std::vector<germ::FamilySpec>& families, int n_times, int n_outputs,
                                   const casefile::SurrogateOptions& options, const ModelEvaluator& evaluate,
                                   SurrogateSummary& out) {
  detail::RunCache cache(n_times * n_outputs, &evaluate);
  detail::AdaptiveOutcome outcome =
      options.method == casefile::SurrogateMethod::adaptive_sparse_grid
          ? detail::adaptive_sparse_grid(families, n_times, n_outputs, options, cache)
          : detail::sparse_regression(families, n_times, n_outputs, options, cache);
  out.model_runs = cache.size();
  out.level_reached = 0;
  out.degree_reached = outcome.indices.rowwise().sum().maxCoeff();
  out.error_estimate = outcome.error_estimate;
  out.tolerance_met = outcome.tolerance_met;
  out.runs_per_refinement = outcome.runs_per_refinement;
  out.stop_reason = outcome.stop_reason;
  // Which inputs matter: the terms that carry variance. An exploration of the
  // adaptive grid may leave terms of an inert input whose coefficients are
  // round-off (below kNegligibleCoefficient of the column's standard deviation
  // in every column); they do not count as retained.
  MultiIndexSet carrying(0, outcome.indices.cols());
  {
    const Eigen::RowVectorXd sd =
        outcome.coefficients.bottomRows(outcome.coefficients.rows() - 1).colwise().norm();
    std::vector<Eigen::Index> keep;
    for (Eigen::Index r = 0; r < outcome.indices.rows(); ++r)
      if ((outcome.coefficients.row(r).cwiseAbs().array() > kNegligibleCoefficient * sd.array()).any()) keep.push_back(r);
    carrying.resize(static_cast<Eigen::Index>(keep.size()), outcome.indices.cols());
    for (std::size_t j = 0; j < keep.size(); ++j) carrying.row(static_cast<Eigen::Index>(j)) = outcome.indices.row(keep[j]);
  }
  for (Eigen::Index k = 0; k < carrying.cols(); ++k) {
    int degree = 0, terms = 0;
    for (Eigen::Index r = 0; r < carrying.rows(); ++r)
      if (carrying(r, k) > 0) degree = std::max(degree, carrying(r, k)), ++terms;
    out.retained_degree_per_input.push_back(degree);
    out.retained_terms_per_input.push_back(terms);
  }
  std::ostringstream head;
  head << out.method << ": " << out.model_runs << " model runs, " << outcome.indices.rows()
       << " basis functions, total degree " << out.degree_reached;
  out.notes.push_back(head.str());
  out.notes.push_back("stopped: " + outcome.stop_reason);
  for (auto& note : outcome.notes) out.notes.push_back(std::move(note));
  out.notes.push_back(runs_note(outcome.runs_per_refinement));
  out.notes.push_back(detail::retained_per_input(carrying));
  finish_summary(out, cache, n_times, n_outputs, outcome.history);

  return make_surrogate(families, std::move(outcome.indices), std::move(outcome.coefficients), n_times, n_outputs);
}

}  // namespace

int planned_model_runs(const std::vector<germ::FamilySpec>& families, const casefile::SurrogateOptions& options) {
  validate(families, options);
  if (is_dimension_adaptive(options.method)) return dimension_adaptive_first_runs(families, options);
  int runs = 0, hold_out = 0;
  first_design(families, options, &runs, &hold_out);
  return runs + hold_out;
}

Surrogate build_surrogate(const std::vector<germ::FamilySpec>& families, int n_times, int n_outputs,
                          const casefile::SurrogateOptions& options, const ModelEvaluator& evaluate,
                          SurrogateSummary* summary) {
  if (n_times < 1 || n_outputs < 1) throw std::logic_error("build_surrogate: needs at least one time and one output");
  validate(families, options);
  const casefile::SurrogateMethod method = options.method;
  SurrogateSummary local;
  SurrogateSummary& out = summary ? *summary : local;
  out = SurrogateSummary{};
  out.method = method_name(method);
  if (is_dimension_adaptive(method)) return build_dimension_adaptive(families, n_times, n_outputs, options, evaluate, out);

  int design_runs = 0, n_hold = 0;
  const Design first = first_design(families, options, &design_runs, &n_hold);
  const int n_columns = n_times * n_outputs;
  if (options.nested && method != casefile::SurrogateMethod::sparse_grid)
    out.notes.push_back("surrogate.nested applies to sparse grids only and was ignored");

  detail::RunCache cache(n_columns, &evaluate);
  const Eigen::MatrixXd hold_points = detail::hold_out_points(families, n_hold);
  Eigen::MatrixXd hold_values;
  {
    // One evaluator call for every point of the first design and the hold-out.
    Eigen::MatrixXd all(first.points.rows() + hold_points.rows(), static_cast<Eigen::Index>(families.size()));
    all << first.points, hold_points;
    hold_values = cache.values(all).bottomRows(hold_points.rows());
  }
  Fit current = fit(families, options, first, cache);

  const auto estimate = [&](const Fit& f) -> Eigen::VectorXd {
    // Regression without hold-out runs (budget too short) falls back to its
    // corrected leave-one-out error.
    const Eigen::VectorXd mse = method == casefile::SurrogateMethod::regression && n_hold == 0
                                    ? f.column_mse
                                    : detail::hold_out_mse(families, f.indices, f.coefficients, hold_points, hold_values);
    return detail::pooled_relative_rmse(mse, f.coefficients, n_times, n_outputs);
  };
  const auto all_within = [&](const Eigen::VectorXd& e) {
    for (Eigen::Index i = 0; i < e.size(); ++i)
      if (!(e[i] <= options.tolerance)) return false;
    return true;
  };

  Eigen::VectorXd errors = estimate(current);
  std::vector<std::pair<int, double>> history{{cache.size(), errors.maxCoeff()}};
  if (uses_hold_out(method) && n_hold == 0)
    out.notes.push_back(std::string(method == casefile::SurrogateMethod::regression
                                        ? "error estimate by corrected leave-one-out (optimistic on small designs)"
                                        : "no error estimate") +
                        ": max_model_runs leaves fewer than " + std::to_string(detail::kMinHoldOutRuns) +
                        " runs for the hold-out beside the design");

  if (options.adaptive) {
    if (method == casefile::SurrogateMethod::regression && options.design == casefile::RegressionDesign::latin_hypercube)
      out.notes.push_back("Latin hypercube designs are not nested: each degree ran a fresh design");
    const int max_setting = method == casefile::SurrogateMethod::sparse_grid ? kMaxSparseLevel : kMaxDegree;
    while (true) {
      std::ostringstream note;
      if (all_within(errors)) {
        note << "tolerance " << options.tolerance << " met at " << setting_name(method) << " " << current.setting;
        out.notes.push_back(note.str());
        break;
      }
      const int next = current.setting + 1;
      if (next > max_setting) {
        note << "stopped at the highest supported " << setting_name(method) << " " << current.setting
             << " before meeting tolerance " << options.tolerance;
        out.notes.push_back(note.str());
        break;
      }
      const double bound = design_size_bound(families, options, next);
      int needed = 0;
      std::optional<Design> design;
      if (bound <= options.max_model_runs) {
        design = make_design(families, options, next);
        needed = cache.size() + cache.count_new(design->points);
      }
      if (!design || needed > options.max_model_runs) {
        note << "run budget max_model_runs = " << options.max_model_runs << " reached: " << setting_name(method) << " "
             << next << " would need " << (design ? needed : static_cast<int>(std::min(bound, 2e9)))
             << " runs in all; stopped at " << setting_name(method) << " " << current.setting
             << " before meeting tolerance " << options.tolerance;
        out.notes.push_back(note.str());
        break;
      }
      current = fit(families, options, *design, cache);
      errors = estimate(current);
      out.runs_per_refinement.push_back(cache.size());
      history.emplace_back(cache.size(), errors.maxCoeff());
    }
  }

  out.model_runs = cache.size();
  out.level_reached = method == casefile::SurrogateMethod::sparse_grid ? current.setting : 0;
  out.degree_reached = current.indices.rowwise().sum().maxCoeff();
  out.error_estimate = errors;
  out.tolerance_met = all_within(errors);
  {
    std::ostringstream note;
    note << out.method << " " << setting_name(method) << " " << current.setting << ": " << out.model_runs
         << " model runs";
    if (n_hold > 0) note << " (" << n_hold << " of them hold-out runs for the error estimate)";
    note << ", " << current.indices.rows() << " basis functions, total degree " << out.degree_reached;
    out.notes.insert(out.notes.begin(), note.str());
  }
  if (method == casefile::SurrogateMethod::regression && n_hold > 0) {
    // The corrected leave-one-out error beside the hold-out value, as a guide.
    const Eigen::VectorXd loo = detail::pooled_relative_rmse(current.column_mse, current.coefficients, n_times, n_outputs);
    out.notes.push_back("corrected leave-one-out estimate (not used, optimistic on small designs): largest " +
                        significant_digits(loo.maxCoeff(), 2));
  }
  if (!options.adaptive && !out.tolerance_met)
    out.notes.push_back("error estimate above tolerance (non-adaptive build: level and degree were not raised)");
  finish_summary(out, cache, n_times, n_outputs, history);

  out.covariance = linear_fit_covariance(current.matrix, basis_matrix(families, current.indices, current.points),
                                         cache.values(current.points), current.coefficients);
  return make_surrogate(families, std::move(current.indices), std::move(current.coefficients), n_times, n_outputs);
}

Surrogate constant_surrogate(const Eigen::MatrixXd& nominal_outputs) {
  Surrogate s;
  s.n_times = static_cast<int>(nominal_outputs.rows());
  s.n_outputs = static_cast<int>(nominal_outputs.cols());
  s.indices.resize(1, 0);
  s.coefficients.resize(1, static_cast<Eigen::Index>(s.n_times) * s.n_outputs);
  for (int t = 0; t < s.n_times; ++t)
    for (int o = 0; o < s.n_outputs; ++o) s.coefficients(0, t * s.n_outputs + o) = nominal_outputs(t, o);
  return s;
}

void surrogate_outputs(const Surrogate& surrogate, const Eigen::MatrixXd& points, const std::vector<int>& columns,
                       Eigen::MatrixXd& Y) {
  Eigen::MatrixXd values;
  surrogate.evaluate(points, values, columns);
  Y.setZero(points.rows(), static_cast<Eigen::Index>(surrogate.n_times) * surrogate.n_outputs);
  for (std::size_t k = 0; k < columns.size(); ++k) Y.col(columns[k]) = values.col(static_cast<Eigen::Index>(k));
}

SurrogateStage surrogate_stage(const std::vector<germ::FamilySpec>& families, const Eigen::MatrixXd& nominal_outputs,
                               const casefile::SurrogateOptions& options, const ModelEvaluator& evaluate) {
  SurrogateStage stage;
  if (families.empty()) {
    stage.surrogate = constant_surrogate(nominal_outputs);
    stage.summary.method = "none (no uncertain inputs)";
    stage.summary.model_runs = 1;
    stage.summary.error_estimate = Eigen::VectorXd::Zero(nominal_outputs.cols());
    stage.summary.notes.push_back("no uncertain inputs: every statistic is the nominal run's");
  } else {
    stage.surrogate = build_surrogate(families, static_cast<int>(nominal_outputs.rows()),
                                      static_cast<int>(nominal_outputs.cols()), options, evaluate, &stage.summary);
  }
  return stage;
}

}  // namespace sigmatube::expansion
