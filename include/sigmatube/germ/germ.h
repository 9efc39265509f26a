// SPDX-License-Identifier: MIT
#pragma once
// The germ: every uncertain input of a case mapped onto independent standardized
// variables ξ = (ξ_1 … ξ_d), each of a Wiener–Askey family (germ/family.h), and
// the map back from ξ to the physical perturbation of one closed-loop run.
//
//   normal (scalar)        hermite,  x = mean + std·ξ
//   normal (vector)        hermite,  x = mean + L ξ,  L Lᵀ = covariance (Cholesky)
//   uniform                legendre, x = (low+high)/2 + (high-low)/2 · ξ
//   beta                   jacobi,   a = beta-1, b = alpha-1,  x = low + (high-low)(ξ+1)/2
//   gamma                  laguerre, a = shape-1,  x = scale·ξ
//   lognormal, truncated-normal, triangular
//                          isoprobabilistic map x = F⁻¹(Φ(ξ)) from a hermite ξ
//                          (docs/methods.md says why hermite)
//   gaussian-process       Karhunen–Loève on the report grid, one hermite ξ per
//                          mode, named "name[k]"
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/casefile/case_options.h"
#include "sigmatube/germ/family.h"
#include "sigmatube/model/closed_loop.h"

namespace sigmatube::germ {

/// What the Karhunen–Loève truncation of one gaussian-process input kept.
struct KarhunenLoeveSummary {
  std::string input_name;
  int modes = 0;
  double captured_variance_fraction = 0.0;  // Σ kept λ / Σ all λ of the discrete operator
};

/// What `applies_to` can name, and the grid a gaussian-process input lives on.
struct TargetSpace {
  std::vector<std::string> states, inputs, parameters;
  std::vector<double> disturbance_times;  // = ClosedLoop::disturbance_times()
};

TargetSpace targets_of(const model::ClosedLoop& closed_loop);

class Germ {
 public:
  /// Builds the germ for a case. `targets` supplies the state, input and
  /// parameter names for `applies_to` targets and the report grid for KL modes
  /// (make it with targets_of(closed_loop)). Throws InputError (naming the
  /// [[uncertain]] entry) for an unknown target, a covariance that is not
  /// symmetric positive definite, etc.
  static Germ build(const std::vector<casefile::UncertainOptions>& inputs, const TargetSpace& targets);

  int dimension() const { return static_cast<int>(specs_.size()); }
  const std::vector<FamilySpec>& specs() const { return specs_; }
  const std::vector<std::string>& names() const { return names_; }
  const std::vector<KarhunenLoeveSummary>& karhunen_loeve() const { return kl_; }

  /// Writes the perturbation for germ point xi (dimension() values) into
  /// `perturbation`, which must start as closed_loop.nominal(). Thread-safe.
  void apply(const double* xi, model::Perturbation& perturbation) const;

  /// ξ_j = from_standard_normal(spec_j, z_j) for all j.
  void from_standard_normal(const double* z, double* xi) const;

 private:
  // Private representation is the implementer's choice.
  std::vector<FamilySpec> specs_;
  std::vector<std::string> names_;
  std::vector<KarhunenLoeveSummary> kl_;
};

}  // namespace sigmatube::germ
