// SPDX-License-Identifier: MIT
#pragma once
// The cross-check stage of an analysis: Monte Carlo runs of the full model
// (monte_carlo.h), the surrogate validated on the same germ points, and the
// agreement of the two (agreement.h).
#include <vector>

#include <Eigen/Core>

#include "sigmatube/casefile/case_options.h"
#include "sigmatube/constraints/constraint.h"
#include "sigmatube/constraints/violation_statistics.h"
#include "sigmatube/expansion/surrogate.h"
#include "sigmatube/germ/family.h"
#include "sigmatube/montecarlo/agreement.h"
#include "sigmatube/montecarlo/monte_carlo.h"

// Layer montecarlo/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::montecarlo {

struct CrossCheck {
  MonteCarloResult runs;
  Agreement agreement;
};

/// run_monte_carlo with `surrogate` as the validated evaluator, then
/// assess_agreement against the surrogate's own violation statistics
/// (`surrogate_violations`, same constraints in the same order). The agreement's
/// constraint outputs and report times are filled in from `constraints` and `times`
/// when `agreement_options` leaves them empty.
CrossCheck cross_check(const casefile::MonteCarloOptions& options, const std::vector<germ::FamilySpec>& families,
                       const Eigen::VectorXd& times_in_seconds, int n_outputs,
                       const std::vector<constraints::Constraint>& constraints, const RunSample& run_sample,
                       const MonteCarloRunOptions& run_options, const expansion::Surrogate& surrogate,
                       const constraints::ViolationResults& surrogate_violations, const Progress& progress = nullptr,
                       AgreementOptions agreement_options = {});

}  // namespace sigmatube::montecarlo
