// SPDX-License-Identifier: MIT
#include "sigmatube/montecarlo/cross_check.h"

namespace sigmatube::montecarlo {

CrossCheck cross_check(const casefile::MonteCarloOptions& options, const std::vector<germ::FamilySpec>& families,
                       const Eigen::VectorXd& times, int n_outputs,
                       const std::vector<constraints::Constraint>& constraints, const RunSample& run_sample,
                       const MonteCarloRunOptions& run_options, const expansion::Surrogate& surrogate,
                       const constraints::ViolationResults& surrogate_violations, const Progress& progress,
                       AgreementOptions agreement_options) {
  const SurrogateEvaluator evaluate_surrogate = [&](const Eigen::MatrixXd& xi, Eigen::MatrixXd& values) {
    surrogate.evaluate(xi, values);
  };
  CrossCheck out;
  out.runs = run_monte_carlo(options, families, times, n_outputs, constraints, run_sample, run_options,
                             evaluate_surrogate, progress);
  if (agreement_options.constraint_outputs.empty())
    for (const auto& c : constraints) agreement_options.constraint_outputs.push_back(c.output_indices());
  if (agreement_options.times.size() == 0) agreement_options.times = times;
  out.agreement = assess_agreement(surrogate_violations, out.runs, agreement_options);
  return out;
}

}  // namespace sigmatube::montecarlo
