// SPDX-License-Identifier: MIT
#pragma once
// Verdict of the Monte Carlo cross-check: does the surrogate tell the same story as
// the full model? The rules, kept simple on purpose:
//
//   probability   per constraint, the governing probability (path probability for
//                 scope = path; for scope = pointwise the pointwise probability at the
//                 time where Monte Carlo saw the most violations in the window) agrees
//                 when the surrogate value p_s lies in the Monte Carlo Clopper–Pearson
//                 interval widened by `widen_standard_errors` surrogate standard errors:
//                     lower − w·se_s ≤ p_s ≤ upper + w·se_s.
//                 k = 0 Monte Carlo violations: the interval is [0, upper(0, n)] with
//                 upper ≈ −ln(α/2)/n (≈ 3.7/n at 95%), the Monte Carlo resolution; the
//                 same rule then reads "agree when p_s ≤ that resolution + w·se_s", i.e.
//                 both are below what the runs can resolve.
//   validation    the largest validation RMSE / output std (monte_carlo.h) over the
//                 outputs must be ≤ max_relative_rmse (default 0.05, common practice
//                 for a surrogate used for tail probabilities: 5% of the spread).
//                 Not assessed when no surrogate evaluator was given.
//   overall       agree when every constraint agrees and validation passes.
//
// Likely cause when they disagree, first match wins:
//   "nonsmooth behaviour such as saturation"  saturation_fraction > 0 (some runs drove a
//                                             commanded input past its limit)
//   "degree too low"                          validation failed on smooth outputs
//   "too few runs"                            interval half-width > max_half_width_ratio·ε
//   "unexplained"                             none of the above
// When they agree but the interval's half-width exceeds max_half_width_ratio·ε, the
// note says the runs are too few to resolve the bound (the verdict stays agree).
#include <string>
#include <vector>

#include "sigmatube/constraints/violation_statistics.h"
#include "sigmatube/montecarlo/monte_carlo.h"

// Layer montecarlo/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::montecarlo {

struct AgreementOptions {
  double widen_standard_errors = 2.0;  // w above
  double max_relative_rmse = 0.05;     // validation RMSE / std
  double max_half_width_ratio = 1.0;   // "too few runs" when half-width > ratio · max_probability
};

enum class Verdict { agree, disagree };
std::string to_string(Verdict verdict);

struct ConstraintAgreement {
  std::string name;
  Verdict verdict = Verdict::agree;
  double surrogate_probability = 0.0;
  double surrogate_standard_error = 0.0;
  double montecarlo_probability = 0.0;
  long long montecarlo_violations = 0;
  BinomialInterval montecarlo_interval;
  int time_index = -1;       // pointwise scope: the time compared; −1 for path scope
  std::string cause;         // empty when they agree
  std::string note;          // one line for the report
};

struct Agreement {
  Verdict overall = Verdict::agree;
  bool validation_assessed = false;
  bool validation_ok = true;
  double worst_relative_rmse = 0.0;
  int worst_output = -1;
  std::vector<ConstraintAgreement> constraints;
  std::string summary;
};

/// @param surrogate   violation statistics of the surrogate samples (same constraints, same order)
/// @param saturation_fraction  fraction of Monte Carlo runs that saturated an input
/// @throws std::logic_error when the constraint lists differ.
Agreement assess_agreement(const constraints::ViolationResults& surrogate, const MonteCarloResult& montecarlo,
                           double saturation_fraction, const AgreementOptions& options = {});

}  // namespace sigmatube::montecarlo
