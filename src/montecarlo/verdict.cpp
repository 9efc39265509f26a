// SPDX-License-Identifier: MIT
#include "sigmatube/montecarlo/short_number.h"
#include "sigmatube/montecarlo/verdict.h"

#include <cstdio>
#include <sstream>

namespace sigmatube::montecarlo {
namespace {
std::string g(double value) { return short_number(value); }
void add_basis(std::string& basis, const char* what) { basis += (basis.empty() ? "" : " and ") + std::string(what); }
}  // namespace

BoundVerdict decide_bound(const BoundEvidence& e, const std::string& surrogate_line) {
  BoundVerdict v;
  const double eps = e.max_probability;
  std::ostringstream why;
  if (!e.surrogate_within) {
    v.within = false;
    add_basis(v.basis, "surrogate");
  }
  if (e.has_montecarlo && e.montecarlo_pessimistic > eps) {
    v.within = false;
    add_basis(v.basis, "Monte Carlo");
    why << "; Monte Carlo " << g(e.montecarlo_pessimistic) << " > " << g(eps) << " (" << e.montecarlo_violations;
    if (e.montecarlo_failed > 0) why << " + " << e.montecarlo_failed << " failed counted as violations";
    why << " of " << e.montecarlo_runs << " runs)";
  }
  if (e.rare_event) {
    const RareEventEvidence& r = *e.rare_event;
    why << "; importance sampling p = " << g(r.probability) << " [" << g(r.lower) << ", " << g(r.upper) << "], CoV "
        << g(r.coefficient_of_variation) << ", ESS " << g(r.effective_sample_size) << ", " << r.runs << " full-model runs";
    if (!r.converged) {
      why << ": CoV target not met, no verdict from it";
    } else if (r.pessimistic_probability > eps) {
      v.within = false;
      add_basis(v.basis, "importance sampling");
    } else if (v.within) {
      add_basis(v.basis, "importance sampling");
      why << " supports it";
    } else {
      why << " does not overrule the evidence of violation";
    }
  }
  if (v.basis.empty()) v.basis = e.has_montecarlo ? "surrogate and Monte Carlo" : "surrogate";
  std::ostringstream line;
  if (v.within) {
    line << surrogate_line;
  } else if (!e.surrogate_within) {
    line << surrogate_line;  // the surrogate's own line already says "exceeds"
  } else {
    line << "exceeds by " << v.basis << " (surrogate: " << surrogate_line << ")";
  }
  line << why.str();
  v.line = line.str();
  return v;
}

}  // namespace sigmatube::montecarlo
