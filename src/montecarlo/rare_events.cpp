// SPDX-License-Identifier: MIT
#include "sigmatube/montecarlo/rare_events.h"

#include "sigmatube/constraints/surrogate_sampling.h"
#include "sigmatube/constraints/violation_statistics.h"
#include "sigmatube/core/counter_rng.h"

namespace sigmatube::montecarlo {
namespace {
// Surrogate points screened for the start of the design-point search.
constexpr long long kDesignPointScreening = 20000;
constexpr unsigned long long kScreeningStream = 0xD1B54A32D192ED03ULL;
}  // namespace

RareEventEstimate rare_event_estimate(const germ::Germ& germ, const expansion::Surrogate& surrogate,
                                      const constraints::Constraint& constraint, const Eigen::VectorXd& times,
                                      const RareEventOptions& options, const RunSample& run_sample) {
  const int d = germ.dimension();
  const int n_out = surrogate.n_outputs;
  const std::vector<int> columns = constraints::constraint_columns({constraint}, surrogate.n_times, n_out);
  // Path-minimum clearance of the surrogate at standard-normal points z (rows).
  const auto path_minimum = [&](const Eigen::MatrixXd& z) {
    Eigen::MatrixXd Y;
    expansion::surrogate_outputs(surrogate, germ::germ_points(germ, z), columns, Y);
    Eigen::VectorXd minimum(z.rows());
    constraints::ViolationStatistics::path_minimum(constraint, times, n_out, Y, minimum);
    return minimum;
  };
  const CounterRng rng(options.seed ^ kScreeningStream);
  const Eigen::MatrixXd screen = germ::standard_normal_points(rng, 0, kDesignPointScreening, d);
  const Eigen::VectorXd g_screen = path_minimum(screen);
  const auto start = closest_violating_sample(screen, g_screen);
  const LimitState g = [&](const Eigen::VectorXd& z) { return path_minimum(z.transpose())[0]; };
  RareEventEstimate out;
  out.design_point = find_most_probable_point(g, d, start);
  ImportanceSamplingOptions is_options;
  is_options.samples = options.samples;
  is_options.seed = options.seed;
  is_options.confidence = options.confidence;
  is_options.threads = options.threads;
  is_options.cov_target = options.cov_target;
  out.sampling = importance_sample_constraint(out.design_point.z, constraint, times, n_out,
                                              in_standard_normal_space(germ.specs(), run_sample), is_options);
  return out;
}

std::vector<std::optional<RareEventEstimate>> rare_events(const germ::Germ& germ,
                                                          const expansion::Surrogate& surrogate,
                                                          const std::vector<constraints::Constraint>& constraints,
                                                          const Eigen::VectorXd& times,
                                                          const RareEventOptions& options,
                                                          const RunSample& run_sample) {
  std::vector<std::optional<RareEventEstimate>> out(constraints.size());
  for (std::size_t k = 0; k < constraints.size(); ++k)
    if (!(constraints[k].max_probability() > options.threshold) && !(k < options.skip.size() && options.skip[k]))
      out[k] = rare_event_estimate(germ, surrogate, constraints[k], times, options, run_sample);
  return out;
}

}  // namespace sigmatube::montecarlo
