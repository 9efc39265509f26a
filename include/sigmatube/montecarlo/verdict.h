// SPDX-License-Identifier: MIT
#pragma once
// The bound verdict of one constraint from all the evidence there is: the surrogate
// samples, the full-model Monte Carlo runs and, for rare-event bounds, importance
// sampling of the full model. The rules:
//
//   1. Evidence of violation is never overruled. The constraint exceeds its bound ε
//      when the surrogate probability p_S > ε, or when the pessimistic Monte Carlo
//      estimate (failed runs counted as violations, (k + f)/N) > ε.
//   2. A rare-event estimate may refine, never overrule: when it is usable (its
//      coefficient of variation met the target) and its pessimistic estimate (failed
//      runs counted as violations) is > ε, the constraint exceeds; when it is ≤ ε the
//      verdict of rule 1 stands and names the estimate as support.
//   3. An importance-sampling estimate that did not reach its CoV target (or failed)
//      gives no verdict: rule 1 decides and the line says so.
#include <optional>
#include <string>

namespace sigmatube::montecarlo {

struct RareEventEvidence {
  double probability = 0.0;             // failed runs counted safe
  double pessimistic_probability = 0.0; // failed runs counted as violations
  double lower = 0.0, upper = 0.0;      // interval of `probability`
  double coefficient_of_variation = 0.0;
  double effective_sample_size = 0.0;
  long long runs = 0;
  bool converged = false;               // CoV target met
};

struct BoundEvidence {
  double max_probability = 0.0;          // ε
  double surrogate_probability = 0.0;    // governing probability of the surrogate samples
  bool surrogate_within = true;          // the surrogate's own verdict (margin ≥ 0 ⇔ p_S ≤ ε)
  bool has_montecarlo = false;
  double montecarlo_pessimistic = 0.0;   // (k + f)/N, governing
  long long montecarlo_violations = 0;   // k
  long long montecarlo_failed = 0;       // f
  long long montecarlo_runs = 0;         // N
  std::optional<RareEventEvidence> rare_event;
};

struct BoundVerdict {
  bool within = true;
  std::string basis;  // "surrogate", "Monte Carlo", "importance sampling", joined by " and "
  std::string line;   // one line for the report, starting with "meets" or "exceeds"
};

BoundVerdict decide_bound(const BoundEvidence& evidence, const std::string& surrogate_line);

}  // namespace sigmatube::montecarlo
