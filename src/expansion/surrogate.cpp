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
#include "sigmatube/design/sampling_design.h"
#include "sigmatube/design/sparse_grid.h"
#include "sigmatube/expansion/multi_index.h"
#include "sigmatube/expansion/polynomial_basis.h"
#include "sigmatube/expansion/pseudo_spectral_projection.h"
#include "sigmatube/expansion/regression.h"
#include "sigmatube/expansion/sobol_indices.h"
#include "sigmatube/expansion/tensor_projection.h"

namespace sigmatube::expansion {

// ---------------------------------------------------------------- Surrogate

Eigen::MatrixXd Surrogate::basis_matrix(const Eigen::MatrixXd& points) const {
  return expansion::basis_matrix(families, indices, points);
}

void Surrogate::evaluate(const Eigen::MatrixXd& points, Eigen::MatrixXd& values, const std::vector<int>& columns) const {
  if (points.cols() != dimension()) throw std::logic_error("Surrogate::evaluate: points have the wrong dimension");
  Eigen::MatrixXd selected;
  const Eigen::MatrixXd* c = &coefficients;
  if (!columns.empty()) {
    selected.resize(coefficients.rows(), static_cast<Eigen::Index>(columns.size()));
    for (std::size_t j = 0; j < columns.size(); ++j) {
      if (columns[j] < 0 || columns[j] >= coefficients.cols())
        throw std::logic_error("Surrogate::evaluate: column out of range");
      selected.col(static_cast<Eigen::Index>(j)) = coefficients.col(columns[j]);
    }
    c = &selected;
  }
  values.resize(points.rows(), c->cols());
  // Blocks of rows keep Ψ small when a million samples are evaluated at once.
  constexpr Eigen::Index kBlockRows = 4096;
  Eigen::MatrixXd psi;
  for (Eigen::Index start = 0; start < points.rows(); start += kBlockRows) {
    const Eigen::Index rows = std::min(kBlockRows, points.rows() - start);
    psi.resize(rows, basis_size());
    basis_matrix_into(families, indices, points.middleRows(start, rows), psi);
    values.middleRows(start, rows).noalias() = psi * (*c);
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

// Denominator floor of the relative error estimates: an output whose standard
// deviation is below 1e-9·(1 + |mean|) is constant to the accuracy a model run
// delivers (integrator tolerances are ~1e-8 relative), so its coefficient
// differences are measured against that floor instead of against ~0.
constexpr double kStdFloorRelative = 1e-9;
// Highest level / degree the adaptive loop tries; beyond these the 1-D rules
// themselves lose accuracy (Clenshaw–Curtis 2^29 points, Gauss recurrences).
constexpr int kMaxSparseLevel = 25;
constexpr int kMaxDegree = 60;
// Latin hypercube designs of the surrogate are seeded by this fixed value so that
// a case gives the same surrogate on every run (common practice: fixed seeds).
constexpr std::uint64_t kLatinHypercubeSeed = 0x5eed1a7cULL;

SourceLocation at(const casefile::SurrogateOptions& options, const std::string& key) {
  SourceLocation where = options.where;
  where.key = key;
  return where;
}

const char* method_name(casefile::SurrogateMethod method) {
  switch (method) {
    case casefile::SurrogateMethod::sparse_grid: return "sparse-grid";
    case casefile::SurrogateMethod::tensor_grid: return "tensor-grid";
    case casefile::SurrogateMethod::regression: return "regression";
  }
  throw std::logic_error("unknown surrogate method");
}

void validate(const std::vector<germ::FamilySpec>& families, const casefile::SurrogateOptions& options) {
  if (families.empty())
    throw InputError(at(options, "uncertain"),
                     std::string("the ") + method_name(options.method) +
                         " surrogate needs at least one uncertain input (the germ has dimension 0)");
  if (options.max_model_runs < 1)
    throw InputError(at(options, "surrogate.max_model_runs"),
                     "must be at least 1, got " + std::to_string(options.max_model_runs));
  if (options.adaptive && !(options.tolerance > 0.0)) {
    std::ostringstream m;
    m << "must be positive for an adaptive surrogate, got " << options.tolerance;
    throw InputError(at(options, "surrogate.tolerance"), m.str());
  }
  switch (options.method) {
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

// Model runs made so far, keyed by exact germ coordinates: designs of different
// levels or degrees that share a point (nested rules, the Gauss node 0, the
// prefix of a Sobol sequence) run it once.
class RunCache {
 public:
  RunCache(int n_columns, const ModelEvaluator* evaluate) : n_columns_(n_columns), evaluate_(evaluate) {}

  int size() const { return static_cast<int>(rows_.size()); }

  int count_new(const Eigen::MatrixXd& points) const {
    std::map<std::vector<double>, int> fresh;
    for (Eigen::Index i = 0; i < points.rows(); ++i) {
      std::vector<double> key = row_key(points, i);
      if (!rows_.count(key)) fresh.emplace(std::move(key), 0);
    }
    return static_cast<int>(fresh.size());
  }

  /// Runs every new point (one evaluator call) and returns Y [points.rows(), n_columns].
  Eigen::MatrixXd values(const Eigen::MatrixXd& points) {
    std::vector<Eigen::Index> missing;
    std::map<std::vector<double>, int> pending;
    for (Eigen::Index i = 0; i < points.rows(); ++i) {
      std::vector<double> key = row_key(points, i);
      if (!rows_.count(key) && !pending.count(key)) {
        pending.emplace(std::move(key), static_cast<int>(missing.size()));
        missing.push_back(i);
      }
    }
    if (!missing.empty()) {
      if (evaluate_ == nullptr || !*evaluate_) throw std::logic_error("RunCache: no evaluator");
      Eigen::MatrixXd new_points(static_cast<Eigen::Index>(missing.size()), points.cols());
      for (std::size_t j = 0; j < missing.size(); ++j) new_points.row(static_cast<Eigen::Index>(j)) = points.row(missing[j]);
      Eigen::MatrixXd new_values(new_points.rows(), n_columns_);
      (*evaluate_)(new_points, new_values);
      if (new_values.rows() != new_points.rows() || new_values.cols() != n_columns_)
        throw std::logic_error("model evaluator returned values of the wrong shape");
      for (Eigen::Index j = 0; j < new_values.rows(); ++j) {
        for (Eigen::Index c = 0; c < n_columns_; ++c) {
          if (!std::isfinite(new_values(j, c))) {
            std::ostringstream m;
            m << "surrogate model run " << (size() + j) << " returned a non-finite value in column " << c;
            throw NumericalError(m.str(), size() + j, std::numeric_limits<double>::quiet_NaN());
          }
        }
        rows_.emplace(row_key(new_points, j), static_cast<int>(store_.size()));
        store_.push_back(new_values.row(j));
      }
    }
    Eigen::MatrixXd result(points.rows(), n_columns_);
    for (Eigen::Index i = 0; i < points.rows(); ++i) result.row(i) = store_[rows_.at(row_key(points, i))];
    return result;
  }

 private:
  static std::vector<double> row_key(const Eigen::MatrixXd& points, Eigen::Index i) {
    std::vector<double> key(static_cast<std::size_t>(points.cols()));
    for (Eigen::Index k = 0; k < points.cols(); ++k) key[static_cast<std::size_t>(k)] = points(i, k);
    return key;
  }
  int n_columns_;
  const ModelEvaluator* evaluate_;
  std::map<std::vector<double>, int> rows_;
  std::vector<Eigen::RowVectorXd> store_;
};

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
  }
  return 0.0;
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
  }
  return design;
}

struct Fit {
  int setting = 0;
  MultiIndexSet indices;
  Eigen::MatrixXd coefficients;  // [P, n_columns]
  Eigen::VectorXd loo;           // regression: ε_LOO per column
};

Fit fit(const std::vector<germ::FamilySpec>& families, const casefile::SurrogateOptions& options, const Design& design,
        RunCache& cache) {
  const Eigen::MatrixXd values = cache.values(design.points);
  Fit result;
  result.setting = design.setting;
  switch (options.method) {
    case casefile::SurrogateMethod::sparse_grid: {
      const LinearProjection projection = sparse_pseudo_spectral_projection(families, design.grid);
      result.indices = projection.indices;
      result.coefficients.noalias() = projection.matrix * values;
      break;
    }
    case casefile::SurrogateMethod::tensor_grid:
      result.indices = design.tensor.indices;
      result.coefficients.noalias() = design.tensor.matrix * values;
      break;
    case casefile::SurrogateMethod::regression: {
      const RegressionProjection projection = regression_on_points(families, design.indices, design.points);
      result.indices = projection.indices;
      result.coefficients.noalias() = projection.matrix * values;
      result.loo = relative_leave_one_out_error(projection, values, result.coefficients);
      break;
    }
  }
  return result;
}

// max(sd_c, floor) per column of a fit, the denominator of the relative estimates.
Eigen::VectorXd scale_of(const Fit& f) {
  const Eigen::Index n_columns = f.coefficients.cols();
  Eigen::VectorXd scale(n_columns);
  for (Eigen::Index c = 0; c < n_columns; ++c) {
    const double sd = f.coefficients.col(c).tail(f.coefficients.rows() - 1).norm();
    scale[c] = std::max(sd, kStdFloorRelative * (1.0 + std::abs(f.coefficients(0, c))));
  }
  return scale;
}

// ‖C_fine − C_coarse‖₂ / max(sd, floor) per column, over the union of both index sets.
Eigen::VectorXd difference_estimate(const Fit& fine, const Fit& coarse) {
  const std::vector<int> coarse_in_fine = rows_in(coarse.indices, fine.indices);
  Eigen::MatrixXd difference = fine.coefficients;
  Eigen::RowVectorXd outside = Eigen::RowVectorXd::Zero(fine.coefficients.cols());
  for (std::size_t r = 0; r < coarse_in_fine.size(); ++r) {
    const Eigen::Index row = static_cast<Eigen::Index>(r);
    if (coarse_in_fine[r] >= 0)
      difference.row(coarse_in_fine[r]) -= coarse.coefficients.row(row);
    else
      outside += coarse.coefficients.row(row).array().square().matrix();
  }
  const Eigen::VectorXd norm = (difference.colwise().squaredNorm() + outside).cwiseSqrt().transpose();
  return norm.cwiseQuotient(scale_of(fine));
}

// ‖C_{|α| = p}‖₂ / max(sd, floor) per column: the part of the expansion that the
// highest total degree carries.
Eigen::VectorXd top_degree_estimate(const Fit& f) {
  const Eigen::VectorXi degree = f.indices.rowwise().sum();
  const int top = degree.maxCoeff();
  Eigen::RowVectorXd squared = Eigen::RowVectorXd::Zero(f.coefficients.cols());
  for (Eigen::Index r = 0; r < f.indices.rows(); ++r)
    if (degree[r] == top && top > 0) squared += f.coefficients.row(r).array().square().matrix();
  return squared.cwiseSqrt().transpose().cwiseQuotient(scale_of(f));
}

// Per output: the column estimates pooled over report times, weighted by each
// column's spread, so that a report time where the output hardly varies (say the
// initial instant of an unperturbed state) cannot dominate:
//   norm ratios (‖ΔC_c‖/s_c):     √(Σ_t ‖ΔC_c‖²) / √(Σ_t s_c²)
//   ratios of squares (LOO):      Σ_t ε_c s_c² / Σ_t s_c²
// i.e. the relative error of the output's whole time history. NaN wins.
Eigen::VectorXd per_output(const Eigen::VectorXd& columns, const Eigen::VectorXd& scale, bool ratio_of_squares,
                           int n_times, int n_outputs) {
  Eigen::VectorXd result = Eigen::VectorXd::Constant(n_outputs, 0.0);
  for (int o = 0; o < n_outputs; ++o) {
    double numerator = 0.0, denominator = 0.0;
    bool nan = false;
    for (int t = 0; t < n_times; ++t) {
      const double e = columns[t * n_outputs + o];
      const double s2 = scale[t * n_outputs + o] * scale[t * n_outputs + o];
      if (std::isnan(e)) nan = true;
      numerator += ratio_of_squares ? e * s2 : e * e * s2;
      denominator += s2;
    }
    result[o] = nan ? std::numeric_limits<double>::quiet_NaN()
                    : (ratio_of_squares ? numerator / denominator : std::sqrt(numerator / denominator));
  }
  return result;
}

struct Start {
  int setting = 0;
  bool needs_previous = false;  // the estimate compares with setting − 1
};

Start start_of(const casefile::SurrogateOptions& options) {
  Start s;
  switch (options.method) {
    case casefile::SurrogateMethod::sparse_grid:
      // Level 1 (one point) has no coarser level to compare with.
      s.setting = options.adaptive ? std::max(2, options.level) : options.level;
      s.needs_previous = s.setting >= 2;
      break;
    case casefile::SurrogateMethod::tensor_grid:
      s.setting = options.adaptive ? std::max(1, options.degree) : options.degree;
      s.needs_previous = options.adaptive;
      break;
    case casefile::SurrogateMethod::regression:
      s.setting = options.adaptive ? std::max(1, options.degree) : options.degree;
      break;
  }
  return s;
}

const char* setting_name(casefile::SurrogateMethod method) {
  return method == casefile::SurrogateMethod::sparse_grid ? "level" : "degree";
}

// The first design(s) a build runs; throws InputError when they exceed the budget.
std::vector<Design> first_designs(const std::vector<germ::FamilySpec>& families,
                                  const casefile::SurrogateOptions& options, int* runs) {
  validate(families, options);
  const Start start = start_of(options);
  const auto over_budget = [&](double runs_needed) {
    std::ostringstream m;
    m << "the first " << method_name(options.method) << " design (" << setting_name(options.method) << " "
      << start.setting << (start.needs_previous ? " and the one below it for the error estimate" : "") << ") needs "
      << runs_needed << " model runs, more than max_model_runs = " << options.max_model_runs;
    return InputError(at(options, "surrogate.max_model_runs"), m.str());
  };
  const double bound = design_size_bound(families, options, start.setting);
  if (bound > options.max_model_runs) throw over_budget(bound);
  std::vector<Design> designs;
  designs.push_back(make_design(families, options, start.setting));
  if (start.needs_previous) designs.push_back(make_design(families, options, start.setting - 1));
  Eigen::Index total_rows = 0;
  for (const auto& d : designs) total_rows += d.points.rows();
  Eigen::MatrixXd all(total_rows, static_cast<Eigen::Index>(families.size()));
  Eigen::Index row = 0;
  for (const auto& d : designs) {
    all.middleRows(row, d.points.rows()) = d.points;
    row += d.points.rows();
  }
  const int count = RunCache(0, nullptr).count_new(all);
  if (count > options.max_model_runs) throw over_budget(count);
  if (runs) *runs = count;
  return designs;
}

}  // namespace

int planned_model_runs(const std::vector<germ::FamilySpec>& families, const casefile::SurrogateOptions& options) {
  int runs = 0;
  first_designs(families, options, &runs);
  return runs;
}

Surrogate build_surrogate(const std::vector<germ::FamilySpec>& families, int n_times, int n_outputs,
                          const casefile::SurrogateOptions& options, const ModelEvaluator& evaluate,
                          SurrogateSummary* summary) {
  if (n_times < 1 || n_outputs < 1) throw std::logic_error("build_surrogate: needs at least one time and one output");
  std::vector<Design> designs = first_designs(families, options, nullptr);
  const int n_columns = n_times * n_outputs;
  const casefile::SurrogateMethod method = options.method;
  const Start start = start_of(options);
  SurrogateSummary local;
  SurrogateSummary& out = summary ? *summary : local;
  out = SurrogateSummary{};
  out.method = method_name(method);
  if (options.nested && method != casefile::SurrogateMethod::sparse_grid)
    out.notes.push_back("surrogate.nested applies to sparse grids only and was ignored");

  RunCache cache(n_columns, &evaluate);
  {
    // One evaluator call for every point of the first design(s).
    Eigen::Index rows = 0;
    for (const auto& d : designs) rows += d.points.rows();
    Eigen::MatrixXd all(rows, static_cast<Eigen::Index>(families.size()));
    rows = 0;
    for (const auto& d : designs) {
      all.middleRows(rows, d.points.rows()) = d.points;
      rows += d.points.rows();
    }
    cache.values(all);
  }
  std::optional<Fit> coarse;
  if (designs.size() > 1) coarse = fit(families, options, designs[1], cache);
  Fit current = fit(families, options, designs[0], cache);

  const auto estimate = [&](const Fit& f, const std::optional<Fit>& previous) -> Eigen::VectorXd {
    switch (method) {
      case casefile::SurrogateMethod::sparse_grid:
        if (previous) return difference_estimate(f, *previous);
        return Eigen::VectorXd::Constant(n_columns, std::numeric_limits<double>::quiet_NaN());
      case casefile::SurrogateMethod::tensor_grid:
        return previous ? difference_estimate(f, *previous) : top_degree_estimate(f);
      case casefile::SurrogateMethod::regression: return f.loo;
    }
    throw std::logic_error("unknown method");
  };
  const auto all_within = [&](const Eigen::VectorXd& e) {
    for (Eigen::Index i = 0; i < e.size(); ++i)
      if (!(e[i] <= options.tolerance)) return false;
    return true;
  };

  const bool loo = method == casefile::SurrogateMethod::regression;
  Eigen::VectorXd errors = per_output(estimate(current, coarse), scale_of(current), loo, n_times, n_outputs);
  if (method == casefile::SurrogateMethod::sparse_grid && !start.needs_previous)
    out.notes.push_back("sparse-grid level 1 has no coarser level: no error estimate");

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
      coarse = std::move(current);
      current = fit(families, options, *design, cache);
      errors = per_output(estimate(current, coarse), scale_of(current), loo, n_times, n_outputs);
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
         << " model runs, " << current.indices.rows() << " basis functions, total degree " << out.degree_reached;
    out.notes.insert(out.notes.begin(), note.str());
  }
  if (!options.adaptive && !out.tolerance_met)
    out.notes.push_back("error estimate above tolerance (non-adaptive build: level and degree were not raised)");

  Surrogate surrogate;
  surrogate.families = families;
  surrogate.indices = std::move(current.indices);
  surrogate.coefficients = std::move(current.coefficients);
  surrogate.n_times = n_times;
  surrogate.n_outputs = n_outputs;
  return surrogate;
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
