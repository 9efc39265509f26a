// SPDX-License-Identifier: MIT
#pragma once
// Pieces shared by the surrogate builds (internal to expansion/): the cache of
// model runs, the calibrated error estimates, and the two dimension-adaptive
// builds (Smolyak pseudo-spectral projection on an adaptive index set, and
// sparse regression).
#include <cmath>
#include <cstdint>
#include <limits>
#include <map>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/core/error.h"
#include "sigmatube/expansion/surrogate.h"

namespace sigmatube::expansion::detail {

// Model runs made so far, keyed by exact germ coordinates: designs of different
// levels or degrees that share a point (nested rules, the Gauss node 0, the
// prefix of a Sobol sequence) run it once.
class RunCache {
 public:
  RunCache(int n_columns, const ModelEvaluator* evaluate) : n_columns_(n_columns), evaluate_(evaluate) {}

  int size() const { return static_cast<int>(rows_.size()); }
  int columns() const { return n_columns_; }
  /// Every run's values, in the order they ran.
  const std::vector<Eigen::RowVectorXd>& runs() const { return store_; }

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


// ---------------------------------------------------------------- error estimates
//
// Every estimate is the relative root-mean-square error per output, on the scale
// the Monte Carlo validation measures (montecarlo/monte_carlo.h):
//   e_o = √( Σ_t MSE_{t,o} / Σ_t s_{t,o}² ),  s_{t,o}² = Σ_{α≠0} C[α, c]²,
// with MSE_{t,o} the estimated mean squared error E[(f_c − f̂_c)²] of column
// c = t·n_outputs + o and the denominator floored at 1e-12·max(1, rms mean) like
// the validation's.

/// Pools column mean squared errors [n_columns] into e_o [n_outputs].
Eigen::VectorXd pooled_relative_rmse(const Eigen::VectorXd& column_mse, const Eigen::MatrixXd& coefficients,
                                     int n_times, int n_outputs);

/// Hold-out points: `n` germ points drawn from the germ distribution with the
/// counter-based generator under a fixed seed (independent of the Monte Carlo seed).
Eigen::MatrixXd hold_out_points(const std::vector<germ::FamilySpec>& families, int n);

/// Mean squared error per column of the expansion (indices, coefficients) at the
/// hold-out points against the model values there.
Eigen::VectorXd hold_out_mse(const std::vector<germ::FamilySpec>& families, const MultiIndexSet& indices,
                             const Eigen::MatrixXd& coefficients, const Eigen::MatrixXd& points,
                             const Eigen::MatrixXd& values);

/// Hold-out runs of a projection build: min(kHoldOutRuns, runs left), 0 when fewer
/// than kMinHoldOutRuns are left.
constexpr int kHoldOutRuns = 40;
constexpr int kMinHoldOutRuns = 10;
int hold_out_size(int runs_left);

/// Corrected leave-one-out factor of Chapelle, Vapnik & Bengio (Machine Learning
/// 48, 2002) as used by Blatman & Sudret (J. Comput. Phys. 230, 2011):
///   T(P, N) = N/(N − P) · (1 + tr((ΨᵀΨ)⁻¹)),
/// given tr((ΨᵀΨ)⁻¹). +∞ when N ≤ P.
double corrected_loo_factor(int n_points, int basis_size, double trace_inverse_gram);

/// Notes on saturation in the design runs: a column whose largest or smallest
/// value is shared (to 1e-9 of its range) by at least 5 % and at least 3 runs is
/// clipped somewhere (actuator limit, contact, switching) and a polynomial
/// converges slowly there. Names the worst output and report time.
std::vector<std::string> saturation_notes(const RunCache& cache, int n_times, int n_outputs);

/// Note when the error estimate stalled: the last refinements doubled the runs
/// but lowered the worst estimate by less than 30 %. `history` holds
/// (runs, worst estimate) after each refinement. Empty when not stalled.
std::string stall_note(const std::vector<std::pair<int, double>>& history);

// ---------------------------------------------------------------- adaptive builds

struct AdaptiveOutcome {
  MultiIndexSet indices;
  Eigen::MatrixXd coefficients;
  Eigen::VectorXd error_estimate;       // per output, as above
  std::vector<int> runs_per_refinement; // runs in all after each refinement step
  std::vector<std::string> notes;
  std::string stop_reason;
  bool tolerance_met = false;
  std::vector<std::pair<int, double>> history;  // (runs, worst estimate)
};

/// Runs of the first step of each adaptive method (checked in `check`).
int adaptive_sparse_grid_first_runs(const std::vector<germ::FamilySpec>& families);
int sparse_regression_first_runs(const std::vector<germ::FamilySpec>& families, int max_model_runs);

/// Dimension-adaptive Smolyak pseudo-spectral projection on Leja rules.
AdaptiveOutcome adaptive_sparse_grid(const std::vector<germ::FamilySpec>& families, int n_times, int n_outputs,
                                     const casefile::SurrogateOptions& options, RunCache& cache);

/// Degree-adaptive sparse regression (simultaneous orthogonal matching pursuit
/// with corrected leave-one-out selection) on a growing Sobol design.
AdaptiveOutcome sparse_regression(const std::vector<germ::FamilySpec>& families, int n_times, int n_outputs,
                                  const casefile::SurrogateOptions& options, RunCache& cache);

/// "input: degree d, n terms" per input of the retained index set (which inputs matter).
std::string retained_per_input(const MultiIndexSet& indices);

}  // namespace sigmatube::expansion::detail
