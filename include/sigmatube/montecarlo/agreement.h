// SPDX-License-Identifier: MIT
#pragma once
// Verdict of the Monte Carlo cross-check: does the surrogate tell the same story as
// the full model? The surrogate is evaluated at the very germ points of the Monte
// Carlo runs, so the comparison is paired (paired.h):
//
//   per constraint   the 2×2 table of surrogate / model violations: path violations
//                    for scope = path; for scope = pointwise the table at the time
//                    where the model saw the most violations in the window.
//                    b surrogate-only, c model-only, n compared runs,
//                    p_S = (both + b)/n, p_M = (both + c)/n, d = p_S − p_M.
//                    Exact McNemar p-value, Holm-adjusted over all constraints.
//   disagree         Holm-adjusted p ≤ false_alarm_level (family-wise false-alarm
//                    rate over the constraints) AND practically relevant:
//                    |d| > relative_tolerance · p_M, or p_S and p_M lie on different
//                    sides of the bound ε (the difference could flip the verdict).
//   too few runs     not significant, and a relevant difference could not have been
//                    detected: n·Δ < m_min, with Δ = max(relative_tolerance·max(p_S, p_M),
//   to tell          |ε − max(p_S, p_M)|) the smallest difference that matters and m_min
//                    the fewest one-sided discordant runs that can reach the first
//                    Holm threshold false_alarm_level / m.
//   agree            otherwise (significant but irrelevant differences included).
//   validation       relative RMSE (monte_carlo.h) of the outputs the constraints read
//                    must be ≤ max_relative_rmse (default 0.05, common practice for a
//                    surrogate used for tail probabilities: 5 % of the spread); other
//                    outputs only give a warning line naming output and worst time.
//   overall          disagree when a constraint disagrees or the validation of a
//                    constraint output fails; else too few runs to tell when a
//                    constraint says so; else agree.
//
// Likely cause of a disagreement, named from evidence, first match wins:
//   "nonsmooth behaviour such as saturation"  at least half the discordant runs
//                                             drove a commanded input past its limit
//   "nonsmooth behaviour such as a kink"      kurtosis of the path-minimum clearance
//                                             error n·Σe⁴/(Σe²)² > 10 (a Gaussian error
//                                             has 3; a fit across a kink errs strongly
//                                             on few runs — a heuristic, common practice)
//   "degree too low"                          validation of the constraint's outputs failed
//   "tail misfit"                             the bulk fits but the violations do not
// followed by the constraint output with the largest validation RMSE/std and the
// report time where its RMSE is largest.
#include <string>
#include <vector>

#include <Eigen/Core>

#include "sigmatube/constraints/violation_statistics.h"
#include "sigmatube/montecarlo/monte_carlo.h"

// Layer montecarlo/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::montecarlo {

struct AgreementOptions {
  double false_alarm_level = 1e-3;   // family-wise, Holm over constraints
  double relative_tolerance = 0.2;   // |p_S − p_M| / p_M that is practically relevant
  double max_relative_rmse = 0.05;   // validation RMSE / std
  double kink_kurtosis = 10.0;       // clearance-error kurtosis above which a kink is named
  // Output columns each constraint reads (same order as the constraints); outputs not
  // read by any constraint only warn. Empty: every output decides.
  std::vector<std::vector<int>> constraint_outputs;
  std::vector<std::string> output_names;  // for messages; empty: "output <o>"
  Eigen::VectorXd times;                  // report times in seconds, for messages
};

enum class Verdict { agree, disagree, too_few_runs };
/// "agree", "disagree", "too few runs to tell".
std::string to_string(Verdict verdict);

struct ConstraintAgreement {
  std::string name;
  Verdict verdict = Verdict::agree;
  double surrogate_probability = 0.0;        // of the surrogate samples (the reported one)
  double montecarlo_probability = 0.0;       // p_M on the compared runs
  long long montecarlo_violations = 0;
  BinomialInterval montecarlo_interval;      // Clopper–Pearson for p_M
  int time_index = -1;                       // pointwise scope: the time compared; −1 for path scope
  long long compared_runs = 0;
  long long surrogate_only = 0, model_only = 0;
  double surrogate_probability_on_runs = 0.0;  // p_S on the compared runs
  PairedDifference difference;
  double mcnemar_p = 1.0;
  double holm_p = 1.0;
  bool significant = false, relevant = false;
  std::string cause;                         // empty unless they disagree
  std::string note;                          // one line for the report
};

struct Agreement {
  Verdict overall = Verdict::agree;
  bool validation_assessed = false;
  bool validation_ok = true;            // over the outputs that decide
  double worst_relative_rmse = 0.0;     // over the outputs that decide
  int worst_output = -1;
  std::vector<std::string> warnings;    // outputs no constraint reads that fail validation
  std::vector<ConstraintAgreement> constraints;
  std::string cause;                    // one line: why it disagrees / cannot tell; empty when agree
  std::string summary;                  // several lines
};

/// @param surrogate   violation statistics of the surrogate samples (same constraints, same order)
/// @param montecarlo  with paired counts (a surrogate evaluator was given); without them the
///                    constraints are "too few runs to tell" and the validation is not assessed
/// @throws std::logic_error when the constraint lists differ.
Agreement assess_agreement(const constraints::ViolationResults& surrogate, const MonteCarloResult& montecarlo,
                           const AgreementOptions& options = {});

}  // namespace sigmatube::montecarlo
