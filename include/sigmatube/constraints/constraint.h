// SPDX-License-Identifier: MIT
#pragma once
// One constraint of a case, turned into a clearance function c(t) on the report
// outputs: c ≥ 0 is safe, c < 0 is a violation, and c is a signed distance where
// the type has one. The same object serves samples of the surrogate and of the full
// model: it only sees [N, n_out] blocks of outputs at one report time.
//
// Clearance per type (p = the outputs named in `position`):
//   outside-sphere     |p − c| − r                                   (exact signed distance)
//   outside-ellipsoid  (‖D⁻¹(p − c)‖ − 1)·min_i a_i, D = diag(a)     (see below)
//   inside-box         inside: min_i min(p_i − low_i, high_i − p_i);
//                      outside: −‖max(low − p, 0, p − high)‖          (exact signed distance)
//   inside-cone        signed Euclidean distance to the surface of the single-nappe cone
//                      with apex a, axis u, half angle α (positive inside). With
//                      h = (p − a)·û, ρ = |p − a − h û|: inside h sinα − ρ cosα; outside
//                      −(ρ cosα − h sinα) where h cosα + ρ sinα ≥ 0, else −|p − a| (apex).
//   half-space         (offset − n·p)/|n|                             (exact signed distance)
//   input-limit        min(u − low, high − u) on the output "cmd.<input>"
//   expression         the muparser expression `clearance`, evaluated per sample
//
// Ellipsoid: the map y = D⁻¹(p − c) sends the ellipsoid to the unit sphere and is
// Lipschitz with constant 1/min a_i, so |(‖y‖ − 1)·min a_i| ≤ the true Euclidean
// distance to the surface on either side. The clearance therefore has the exact
// sign, vanishes exactly on the surface, is first-order exact near the surface for
// a sphere, and never overstates the distance (conservative outside, understates the
// depth of a violation inside).
//
// Expressions: variables are the output names and `t` (seconds). muparser names
// may not contain '.', so every '.' in an output name is replaced by '_' in the
// expression (e.g. "cmd.ax" is written `cmd_ax`); expression_alias() gives the
// spelling. An alias that collides with another output's name is an InputError.
#include <memory>
#include <string>
#include <utility>
#include <vector>

#include <Eigen/Core>

#include "sigmatube/casefile/case_options.h"

// Layer constraints/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::constraints {

/// The spelling of an output name inside a clearance expression: '.' → '_'.
std::string expression_alias(const std::string& output_name);

/// The case-file name of a constraint type ("outside-sphere", …).
std::string kind_name(casefile::ConstraintKind kind);

class Constraint {
 public:
  /// @throws InputError (at options.where) for names that are not outputs, geometry
  ///   that does not match the position's size, a zero normal/axis, a cone half
  ///   angle outside (0, 90) degrees, non-positive radius or semi-axes, an empty or
  ///   reversed window, or an expression with a syntax error (the message names the
  ///   position in the expression, counted from 0 as muparser does).
  Constraint(const casefile::ConstraintOptions& options, const std::vector<std::string>& output_names);
  ~Constraint();
  Constraint(Constraint&&) noexcept;
  Constraint& operator=(Constraint&&) noexcept;
  Constraint(const Constraint&);
  Constraint& operator=(const Constraint&);

  const std::string& name() const;
  casefile::ConstraintKind type() const;
  double max_probability() const;
  casefile::ConstraintScope scope() const;
  const SourceLocation& where() const;
  const casefile::ConstraintOptions& options() const;
  /// Closed window [first, second] in seconds; (−∞, +∞) when the case gives none.
  std::pair<double, double> window() const;
  /// t inside the closed window, with a tolerance of 1e-9·max(1, |t|) s so that report
  /// times computed by accumulation still hit a window end written in the case.
  bool in_window(double t) const;
  /// Output columns the clearance reads.
  const std::vector<int>& output_indices() const;
  /// The same constraint reading output o from column column_of[o] of a block
  /// (for blocks that hold only the outputs some constraints read).
  /// @throws std::logic_error when an output it reads has no column (column_of[o] < 0 or o out of range).
  Constraint with_output_columns(const std::vector<int>& column_of) const;

  /// c[i] = clearance of row i of `block` ([N, n_out], the outputs at time t).
  /// Const and safe to call from several threads at once (expression evaluators are
  /// taken from an internal pool under a mutex, one per concurrent caller).
  void clearance(const Eigen::Ref<const Eigen::MatrixXd>& block, double t, Eigen::Ref<Eigen::VectorXd> c) const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace sigmatube::constraints
