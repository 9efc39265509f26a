// SPDX-License-Identifier: MIT
#include "sigmatube/montecarlo/short_number.h"
#include "sigmatube/montecarlo/agreement.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>
#include <stdexcept>

namespace sigmatube::montecarlo {
namespace {
std::string g(double value) { return short_number(value); }

std::string output_name(const AgreementOptions& options, int o) {
  if (o >= 0 && static_cast<std::size_t>(o) < options.output_names.size()) return options.output_names[static_cast<std::size_t>(o)];
  return "output " + std::to_string(o);
}

// "output x, worst at t = 12.5 s" from the per-time validation RMSE.
std::string where_worst(const MonteCarloResult& mc, const AgreementOptions& options, int o) {
  std::string text = output_name(options, o);
  if (mc.validation_rmse_by_time.rows() > 0 && o >= 0 && o < mc.validation_rmse_by_time.cols()) {
    Eigen::Index worst = 0;
    mc.validation_rmse_by_time.col(o).maxCoeff(&worst);
    if (worst < options.times.size()) text += " at t = " + g(options.times[worst]) + " s";
  }
  return text;
}
}  // namespace

std::string to_string(Verdict verdict) {
  switch (verdict) {
    case Verdict::agree: return "agree";
    case Verdict::disagree: return "disagree";
    case Verdict::too_few_runs: return "too few runs to tell";
  }
  return "agree";
}

Agreement assess_agreement(const constraints::ViolationResults& surrogate, const MonteCarloResult& mc,
                           const AgreementOptions& options) {
  const std::size_t m = surrogate.constraints.size();
  if (m != mc.violations.constraints.size()) {
    throw std::logic_error("assess_agreement: surrogate and Monte Carlo constraint lists differ");
  }
  if (!options.constraint_outputs.empty() && options.constraint_outputs.size() != m) {
    throw std::logic_error("assess_agreement: constraint_outputs has the wrong length");
  }
  const bool paired = mc.validated && mc.paired.size() == m;
  Agreement out;
  out.validation_assessed = mc.validated;
  const Eigen::Index n_out = mc.validation_relative_rmse.size();
  std::vector<char> decides(static_cast<std::size_t>(n_out), options.constraint_outputs.empty() ? 1 : 0);
  for (const auto& list : options.constraint_outputs)
    for (int o : list)
      if (o >= 0 && o < n_out) decides[static_cast<std::size_t>(o)] = 1;
  const auto fails = [&](Eigen::Index o) {
    return !(mc.validation_relative_rmse[o] <= options.max_relative_rmse);  // NaN fails
  };
  if (mc.validated) {
    for (Eigen::Index o = 0; o < n_out; ++o) {
      const double r = mc.validation_relative_rmse[o];
      if (!decides[static_cast<std::size_t>(o)]) {
        if (fails(o)) {
          out.warnings.push_back("validation: " + where_worst(mc, options, static_cast<int>(o)) + " has RMSE/std " + g(r) +
                                 " (limit " + g(options.max_relative_rmse) +
                                 "); no constraint reads it, so it does not decide the verdict");
        }
        continue;
      }
      if (out.worst_output < 0 || r > out.worst_relative_rmse || std::isnan(r)) {
        out.worst_relative_rmse = r;
        out.worst_output = static_cast<int>(o);
      }
    }
    out.validation_ok = out.worst_output < 0 || !fails(out.worst_output);
  }

  // Per constraint: the table, the McNemar p-value, then Holm over all of them.
  std::vector<double> p_values(m, std::nan(""));
  for (std::size_t j = 0; j < m; ++j) {
    const auto& s = surrogate.constraints[j];
    const auto& model = mc.violations.constraints[j];
    if (s.name != model.name) throw std::logic_error("assess_agreement: constraint order differs");
    ConstraintAgreement a;
    a.name = s.name;
    a.surrogate_probability = s.governing_probability();
    long long both = 0;
    if (s.scope == casefile::ConstraintScope::path) {
      a.montecarlo_violations = model.path_violations;
      if (paired) {
        both = mc.paired[j].both;
        a.surrogate_only = mc.paired[j].surrogate_only;
        a.model_only = mc.paired[j].model_only;
      }
    } else {
      long long most = -1;
      for (std::size_t t = 0; t < model.pointwise_violations.size(); ++t) {
        if (model.in_window[t] && model.pointwise_violations[t] > most) {
          most = model.pointwise_violations[t];
          a.time_index = static_cast<int>(t);
        }
      }
      a.montecarlo_violations = std::max<long long>(most, 0);
      if (paired && a.time_index >= 0) {
        const auto t = static_cast<std::size_t>(a.time_index);
        both = mc.paired[j].both_t[t];
        a.surrogate_only = mc.paired[j].surrogate_only_t[t];
        a.model_only = mc.paired[j].model_only_t[t];
      }
    }
    const long long n = mc.successful_runs;
    a.compared_runs = paired ? mc.paired[j].runs : 0;
    a.montecarlo_probability = n > 0 ? static_cast<double>(a.montecarlo_violations) / static_cast<double>(n) : NAN;
    a.montecarlo_interval = clopper_pearson(a.montecarlo_violations, n, mc.confidence);
    if (paired && a.compared_runs > 0) {
      const double nc = static_cast<double>(a.compared_runs);
      a.surrogate_probability_on_runs = static_cast<double>(both + a.surrogate_only) / nc;
      a.difference = paired_difference(a.surrogate_only, a.model_only, a.compared_runs, mc.confidence);
      a.mcnemar_p = exact_mcnemar_p(a.surrogate_only, a.model_only);
      p_values[j] = a.mcnemar_p;
    }
    out.constraints.push_back(std::move(a));
  }
  const std::vector<double> holm = holm_adjusted(p_values);
  const long long tested = static_cast<long long>(std::count_if(p_values.begin(), p_values.end(),
                                                                [](double p) { return !std::isnan(p); }));
  const long long m_min =
      smallest_detectable_discordance(options.false_alarm_level / static_cast<double>(std::max<long long>(tested, 1)));

  for (std::size_t j = 0; j < m; ++j) {
    auto& a = out.constraints[j];
    const double epsilon = surrogate.constraints[j].max_probability;
    std::ostringstream note;
    note << "surrogate " << g(a.surrogate_probability) << " vs Monte Carlo " << g(a.montecarlo_probability) << " ["
         << g(a.montecarlo_interval.lower) << ", " << g(a.montecarlo_interval.upper) << "]";
    if (std::isnan(p_values[j])) {
      a.verdict = Verdict::too_few_runs;
      note << "; not compared on the same runs";
      a.note = note.str();
      continue;
    }
    a.holm_p = holm[j];
    const double p_s = a.surrogate_probability_on_runs, p_m = a.montecarlo_probability;
    const double d = a.difference.estimate;
    a.significant = a.holm_p <= options.false_alarm_level;
    const bool flips = (p_s > epsilon) != (p_m > epsilon);
    a.relevant = std::abs(d) > options.relative_tolerance * p_m || flips;
    const double reference = std::max(p_s, p_m);
    const double smallest_relevant = std::max(options.relative_tolerance * reference, std::abs(epsilon - reference));
    const bool detectable = static_cast<double>(a.compared_runs) * smallest_relevant >= static_cast<double>(m_min);
    note << "; paired on " << a.compared_runs << " runs: " << a.surrogate_only << " surrogate-only, " << a.model_only
         << " model-only violations, difference " << g(d) << " [" << g(a.difference.lower) << ", "
         << g(a.difference.upper) << "], McNemar p " << g(a.mcnemar_p) << " (Holm " << g(a.holm_p) << ")";
    if (a.significant && a.relevant) {
      a.verdict = Verdict::disagree;
      const PairedCounts& pc = mc.paired[j];
      const long long discordant = pc.surrogate_only + pc.model_only;
      const double kurtosis = pc.sum_e2 > 0.0 ? static_cast<double>(pc.runs) * pc.sum_e4 / (pc.sum_e2 * pc.sum_e2) : 0.0;
      // The constraint's worst output by validation RMSE/std.
      int worst = -1;
      bool outputs_fail = false;
      if (!options.constraint_outputs.empty()) {
        for (int o : options.constraint_outputs[j]) {
          if (o < 0 || o >= mc.validation_relative_rmse.size()) continue;
          if (worst < 0 || mc.validation_relative_rmse[o] > mc.validation_relative_rmse[worst]) worst = o;
          outputs_fail = outputs_fail || fails(o);
        }
      } else {
        worst = out.worst_output;
        outputs_fail = !out.validation_ok;
      }
      if (discordant > 0 && 2 * pc.discordant_saturated >= discordant) {
        a.cause = "nonsmooth behaviour such as saturation";
      } else if (kurtosis > options.kink_kurtosis) {
        a.cause = "nonsmooth behaviour such as a kink";
      } else if (outputs_fail) {
        a.cause = "degree too low";
      } else {
        a.cause = "tail misfit";
      }
      if (worst >= 0) a.cause += " (" + where_worst(mc, options, worst) + ")";
      note << "; likely cause: " << a.cause;
    } else if (!a.significant && !detectable) {
      a.verdict = Verdict::too_few_runs;
      note << "; too few runs to tell: a relevant difference of " << g(smallest_relevant) << " needs about "
           << g(static_cast<double>(m_min) / std::max(smallest_relevant, 1e-300)) << " runs";
    } else {
      a.verdict = Verdict::agree;
      if (a.significant) note << "; the difference is significant but below the relevance tolerance";
    }
    a.note = note.str();
  }

  bool any_disagree = !out.validation_ok, any_unknown = false;
  for (const auto& a : out.constraints) {
    any_disagree = any_disagree || a.verdict == Verdict::disagree;
    any_unknown = any_unknown || a.verdict == Verdict::too_few_runs;
  }
  out.overall = any_disagree ? Verdict::disagree : any_unknown ? Verdict::too_few_runs : Verdict::agree;

  // One-line cause.
  std::string cause;
  for (const auto& a : out.constraints) {
    if (a.verdict != Verdict::disagree) continue;
    cause += (cause.empty() ? "" : "; ") + a.name + ": " + a.cause;
  }
  if (!out.validation_ok) {
    const bool saturated = mc.saturation_fraction > 0.0;
    cause += (cause.empty() ? "" : "; ") + std::string("validation RMSE/std ") + g(out.worst_relative_rmse) + " of " +
             where_worst(mc, options, out.worst_output) + " above " + g(options.max_relative_rmse) + ": " +
             (saturated ? "nonsmooth behaviour such as saturation" : "degree too low");
  }
  if (cause.empty() && out.overall == Verdict::too_few_runs) {
    for (const auto& a : out.constraints)
      if (a.verdict == Verdict::too_few_runs) cause += (cause.empty() ? "" : ", ") + a.name;
    cause = "too few runs to tell for " + cause;
  }
  out.cause = cause;

  std::ostringstream summary;
  summary << "surrogate and Monte Carlo: " << to_string(out.overall);
  if (!out.cause.empty()) summary << " (" << out.cause << ")";
  if (out.validation_assessed) {
    summary << "; worst validation RMSE/std of a constraint output " << g(out.worst_relative_rmse) << " (limit "
            << g(options.max_relative_rmse) << ")";
  } else {
    summary << "; validation not assessed (no surrogate on the Monte Carlo samples)";
  }
  summary << "; false-alarm level " << g(options.false_alarm_level) << " over " << m << " constraint"
          << (m == 1 ? "" : "s") << " (Holm)";
  if (mc.saturation_fraction > 0.0) summary << "; " << g(100.0 * mc.saturation_fraction) << "% of runs saturated an input";
  for (const auto& w : out.warnings) summary << "\n  warning: " << w;
  for (const auto& a : out.constraints) summary << "\n  " << a.name << ": " << to_string(a.verdict) << ", " << a.note;
  out.summary = summary.str();
  return out;
}

}  // namespace sigmatube::montecarlo
