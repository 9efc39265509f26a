// SPDX-License-Identifier: MIT
#include "sigmatube/montecarlo/rare_events.h"

#include <algorithm>

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
// Surrogate points evaluated at once by a screen (bounds its memory, see path_minimum).
constexpr Eigen::Index kScreenBlock = 2048;
}  // namespace

RareEventEstimate rare_event_estimate(const germ::Germ& germ, const expansion::Surrogate& surrogate,
                                      const constraints::Constraint& constraint, const Eigen::VectorXd& times,
                                      const RareEventOptions& options, const RunSample& run_sample) {
  const int d = germ.dimension();
  // Path-minimum clearance of the surrogate at standard-normal points z (rows),
  // from the constraint's own outputs only ([N, T·outputs read]): the screens never
  // fill a full-width matrix (20 000 × T·n_out doubles). The constraint's
  // coefficient columns are packed once for all screens and the many one-point
  // evaluations of the design-point search.
  const constraints::CompactOutputs compact = constraints::compact_outputs({constraint}, surrogate.n_times, surrogate.n_outputs);
  const int n_read = static_cast<int>(compact.outputs.size());
  const expansion::PackedColumns packed(surrogate.coefficients, compact.columns);
  // Rows go in blocks of kScreenBlock, so the values never take more than
  // kScreenBlock × T·outputs read doubles (each row's minimum is its own).
  const auto path_minimum = [&](const Eigen::MatrixXd& z) {
    const Eigen::MatrixXd points = germ::germ_points(germ, z);
    Eigen::VectorXd minimum(z.rows());
    Eigen::MatrixXd values;
    for (Eigen::Index start = 0; start < points.rows(); start += kScreenBlock) {
      const Eigen::Index rows = std::min<Eigen::Index>(kScreenBlock, points.rows() - start);
      surrogate.evaluate(points.middleRows(start, rows), packed, values);
      constraints::ViolationStatistics::path_minimum(compact.constraints.front(), times, n_read, values,
                                                     minimum.segment(start, rows));
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
  out.sampling = importance_sample_constraint(out.proposal, constraint, times, surrogate.n_outputs,
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
