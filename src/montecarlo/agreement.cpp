// SPDX-License-Identifier: MIT
#include "sigmatube/montecarlo/agreement.h"

#include <cmath>
#include <cstdio>
#include <sstream>
#include <stdexcept>

namespace sigmatube::montecarlo {
namespace {
std::string g(double value) {
  char buffer[48];
  std::snprintf(buffer, sizeof buffer, "%.3g", value);
  return buffer;
}
}  // namespace

std::string to_string(Verdict verdict) { return verdict == Verdict::agree ? "agree" : "disagree"; }

Agreement assess_agreement(const constraints::ViolationResults& surrogate, const MonteCarloResult& mc,
                           double saturation_fraction, const AgreementOptions& options) {
  if (surrogate.constraints.size() != mc.violations.constraints.size()) {
    throw std::logic_error("assess_agreement: surrogate and Monte Carlo constraint lists differ");
  }
  Agreement out;
  out.validation_assessed = mc.validated;
  if (mc.validated) {
    for (Eigen::Index o = 0; o < mc.validation_relative_rmse.size(); ++o) {
      const double r = mc.validation_relative_rmse[o];
      if (out.worst_output < 0 || r > out.worst_relative_rmse || std::isnan(r)) {
        out.worst_relative_rmse = r;
        out.worst_output = static_cast<int>(o);
      }
    }
    out.validation_ok = out.worst_relative_rmse <= options.max_relative_rmse;  // NaN fails
  }
  const long long n = mc.successful_runs;
  for (std::size_t j = 0; j < surrogate.constraints.size(); ++j) {
    const auto& s = surrogate.constraints[j];
    const auto& m = mc.violations.constraints[j];
    if (s.name != m.name) throw std::logic_error("assess_agreement: constraint order differs");
    ConstraintAgreement a;
    a.name = s.name;
    if (s.scope == casefile::ConstraintScope::path) {
      a.surrogate_probability = s.path_probability;
      a.surrogate_standard_error = s.path_standard_error;
      a.montecarlo_violations = m.path_violations;
    } else {
      long long most = -1;
      for (std::size_t t = 0; t < m.pointwise_violations.size(); ++t) {
        if (m.in_window[t] && m.pointwise_violations[t] > most) {
          most = m.pointwise_violations[t];
          a.time_index = static_cast<int>(t);
        }
      }
      a.montecarlo_violations = std::max<long long>(most, 0);
      a.surrogate_probability = s.pointwise_probability[a.time_index];
      a.surrogate_standard_error = s.pointwise_standard_error[a.time_index];
    }
    a.montecarlo_probability = n > 0 ? static_cast<double>(a.montecarlo_violations) / static_cast<double>(n) : NAN;
    a.montecarlo_interval = clopper_pearson(a.montecarlo_violations, n, mc.confidence);
    const double widen = options.widen_standard_errors * a.surrogate_standard_error;
    const bool inside = a.surrogate_probability >= a.montecarlo_interval.lower - widen &&
                        a.surrogate_probability <= a.montecarlo_interval.upper + widen;
    const bool too_wide = a.montecarlo_interval.half_width() > options.max_half_width_ratio * s.max_probability;
    std::ostringstream note;
    note << "surrogate " << g(a.surrogate_probability) << " vs Monte Carlo " << g(a.montecarlo_probability) << " ["
         << g(a.montecarlo_interval.lower) << ", " << g(a.montecarlo_interval.upper) << "]";
    if (inside) {
      a.verdict = Verdict::agree;
      if (too_wide) note << "; too few runs to resolve the bound " << g(s.max_probability);
    } else {
      a.verdict = Verdict::disagree;
      if (saturation_fraction > 0.0) {
        a.cause = "nonsmooth behaviour such as saturation";
      } else if (out.validation_assessed && !out.validation_ok) {
        a.cause = "degree too low";
      } else if (too_wide) {
        a.cause = "too few runs";
      } else {
        a.cause = "unexplained";
      }
      note << "; likely cause: " << a.cause;
    }
    a.note = note.str();
    if (a.verdict == Verdict::disagree) out.overall = Verdict::disagree;
    out.constraints.push_back(std::move(a));
  }
  if (!out.validation_ok) out.overall = Verdict::disagree;
  std::ostringstream summary;
  summary << "surrogate and Monte Carlo " << to_string(out.overall);
  if (out.validation_assessed) {
    summary << "; worst validation RMSE/std " << g(out.worst_relative_rmse) << " (limit " << g(options.max_relative_rmse)
            << ")";
    if (!out.validation_ok) summary << (saturation_fraction > 0.0 ? ": nonsmooth behaviour such as saturation" : ": degree too low");
  } else {
    summary << "; validation not assessed (no surrogate on the Monte Carlo samples)";
  }
  if (saturation_fraction > 0.0) summary << "; " << g(100.0 * saturation_fraction) << "% of runs saturated an input";
  for (const auto& a : out.constraints) summary << "\n  " << a.name << ": " << to_string(a.verdict) << ", " << a.note;
  out.summary = summary.str();
  return out;
}

}  // namespace sigmatube::montecarlo
