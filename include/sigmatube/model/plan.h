// SPDX-License-Identifier: MIT
#pragma once
// The plan: reference states x_ref(t) and feedforward inputs u_ff(t) at knot
// times, read from a CSV file with a header row. The first column is `t`
// [s, strictly increasing]; the other columns name states or inputs of the
// model, in any order and any subset. A state without a column has reference 0;
// an input without a column has feedforward 0. Blank lines and lines starting
// with '#' are skipped; cells may be surrounded by spaces.
//
// Interpolation between knots, per column:
//   linear  piecewise linear;
//   cubic   natural cubic spline (second derivative 0 at both ends; de Boor,
//           A Practical Guide to Splines, 1978, ch. IV), C² inside the span.
// Outside [t0, tf] the plan holds its end values.
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/casefile/case_options.h"
#include "sigmatube/model/model.h"

// Layer model/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::model {

class Plan {
 public:
  /// Reads options.path (errors name options.file).
  /// @throws InputError naming the file, the line and the column for: a missing
  ///   or unreadable file, no `t` column first, a column naming no state or input
  ///   (nearest name suggested), a repeated column, a non-numeric or non-finite
  ///   cell, a row with the wrong cell count, fewer than 2 rows, times not
  ///   strictly increasing.
  Plan(const casefile::PlanOptions& options, const Model& model);

  /// From values: states [knots, n_states], inputs [knots, n_inputs].
  /// @throws InputError for fewer than 2 knots, non-increasing times or wrong shapes.
  Plan(std::vector<double> times, Eigen::MatrixXd states, Eigen::MatrixXd inputs,
       casefile::Interpolation interpolation);

  const std::vector<double>& times() const { return times_; }
  double start_time() const { return times_.front(); }
  double end_time() const { return times_.back(); }
  int state_count() const { return static_cast<int>(states_.cols()); }
  int input_count() const { return static_cast<int>(inputs_.cols()); }
  casefile::Interpolation interpolation() const { return interpolation_; }

  /// x_ref(t) and u_ff(t); either pointer may be null. Does not allocate.
  void evaluate(double t, double* reference_state, double* feedforward) const;
  /// evaluate() with the knot interval searched from `hint` (this caller's last
  /// interval, start with 0; updated): O(1) for times that move a little between
  /// calls (model/grid_walk.h). The same values, bit for bit.
  void evaluate(double t, std::size_t& hint, double* reference_state, double* feedforward) const;
  Eigen::VectorXd reference_state(double t) const;
  Eigen::VectorXd feedforward(double t) const;

 private:
  void prepare();
  using KnotRows = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;
  void evaluate_columns(const KnotRows& values, const KnotRows& second, std::size_t k, double t, double* out) const;

  std::vector<double> times_;
  Eigen::MatrixXd states_, inputs_;                 // [knots, columns]
  Eigen::MatrixXd state_second_, input_second_;     // spline second derivatives (cubic only)
  // The same values knot by knot (row-major), so that one evaluation reads two
  // adjacent rows instead of one cache line per column.
  KnotRows state_rows_, input_rows_, state_second_rows_, input_second_rows_;
  casefile::Interpolation interpolation_ = casefile::Interpolation::linear;
};

}  // namespace sigmatube::model
