// SPDX-License-Identifier: MIT
#include "sigmatube/montecarlo/rare_events.h"

#include <limits>

#include "sigmatube/constraints/surrogate_sampling.h"
#include "sigmatube/constraints/violation_statistics.h"
#include "sigmatube/core/counter_rng.h"

namespace sigmatube::montecarlo {
namespace {
// Surrogate points per screen for the starts of the design-point search.
constexpr long long kDesignPointScreening = 20000;
constexpr unsigned long long kScreeningStream = 0xD1B54A32D192ED03ULL;
// Screens are z = s·N(0, I) for these spreads s, in turn, until kScreeningViolations
// violating points are pooled: a region at β ≈ 4.3 shows in 1 of ~1e5 nominal draws but
// in ~1 % of the draws at s = 2, so that every region near the most probable one
// offers starts (only the surrogate is evaluated).
constexpr double kScreeningSpreads[] = {1.0, 1.5, 2.0, 3.0};
constexpr long long kScreeningViolations = 50;
}  // namespace

RareEventEstimate rare_event_estimate(const germ::Germ& germ, const expansion::Surrogate& surrogate,
                                      const constraints::Constraint& constraint, const Eigen::VectorXd& times,
                                      const RareEventOptions& options, const RunSample& run_sample) {
  const int d = germ.dimension();
  const int n_out = surrogate.n_outputs;
  const std::vector<int> columns = constraints::constraint_columns({constraint}, surrogate.n_times, n_out);
  // The constraint's outputs: columns holds t·n_out + o for them, time by time.
  const std::size_t n_used = columns.size() / static_cast<std::size_t>(surrogate.n_times);
  // Path-minimum clearance of the surrogate at standard-normal points z (rows), as
  // ViolationStatistics::path_minimum computes it on the full [N, T·n_out] outputs,
  // but with one [N, n_out] block per report time holding only the constraint's
  // outputs (the others stay zero, as surrogate_outputs leaves them): the screens
  // never fill a full-width matrix (20 000 × T·n_out doubles).
  // The constraint's coefficient columns are packed once for all screens and the
  // many one-point evaluations of the design-point search.
  const expansion::PackedColumns packed(surrogate.coefficients, columns);
  const auto path_minimum = [&](const Eigen::MatrixXd& z) {
    Eigen::MatrixXd values;
    surrogate.evaluate(germ::germ_points(germ, z), packed, values);
    Eigen::MatrixXd block = Eigen::MatrixXd::Zero(z.rows(), n_out);
    Eigen::VectorXd minimum = Eigen::VectorXd::Constant(z.rows(), std::numeric_limits<double>::infinity());
    Eigen::VectorXd c(z.rows());
    for (Eigen::Index t = 0; t < times.size(); ++t) {
      if (!constraint.in_window(times[t])) continue;
      for (std::size_t j = 0; j < n_used; ++j) {
        const std::size_t k = static_cast<std::size_t>(t) * n_used + j;
        block.col(columns[k] % n_out) = values.col(static_cast<Eigen::Index>(k));
      }
      constraint.clearance(block, times[t], c);
      minimum = minimum.cwiseMin(c);
    }
    return minimum;
  };
  const CounterRng rng(options.seed ^ kScreeningStream);
  Eigen::MatrixXd screen(0, d);
  Eigen::VectorXd g_screen(0);
  long long first = 0;
  for (const double spread : kScreeningSpreads) {
    const Eigen::MatrixXd z = spread * germ::standard_normal_points(rng, first, kDesignPointScreening, d);
    const Eigen::VectorXd g = path_minimum(z);
    first += kDesignPointScreening;
    screen.conservativeResize(screen.rows() + z.rows(), d);
    screen.bottomRows(z.rows()) = z;
    g_screen.conservativeResize(g_screen.size() + g.size());
    g_screen.tail(g.size()) = g;
    if ((g_screen.array() < 0.0).count() >= kScreeningViolations) break;
  }
  const LimitState g = [&](const Eigen::VectorXd& z) { return path_minimum(z.transpose())[0]; };
  RareEventEstimate out;
  out.design_points = find_design_points(g, screen, g_screen);
  out.design_point = out.design_points.front();
  out.proposal = mixture_over(out.design_points, kDefensiveShare);
  ImportanceSamplingOptions is_options;
  is_options.samples = options.samples;
  is_options.seed = options.seed;
  is_options.confidence = options.confidence;
  is_options.threads = options.threads;
  is_options.cov_target = options.cov_target;
  out.sampling = importance_sample_constraint(out.proposal, constraint, times, n_out,
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
