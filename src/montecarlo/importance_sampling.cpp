// SPDX-License-Identifier: MIT
#include "sigmatube/montecarlo/importance_sampling.h"

#include <boost/math/distributions/normal.hpp>
#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>

#include "sigmatube/constraints/violation_statistics.h"
#include "sigmatube/core/counter_rng.h"
#include "sigmatube/core/error.h"
#include "sigmatube/core/parallel.h"

namespace sigmatube::montecarlo {
namespace {
// Fixed number of chunks in flight, so the merge order never depends on the thread count.
constexpr long long kChunksPerWave = 16;
constexpr int kMaxHalvings = 30;

Eigen::VectorXd gradient(const LimitState& g, const Eigen::VectorXd& z, double h) {
  Eigen::VectorXd grad(z.size());
  Eigen::VectorXd probe = z;
  for (Eigen::Index j = 0; j < z.size(); ++j) {
    probe[j] = z[j] + h;
    const double up = g(probe);
    probe[j] = z[j] - h;
    const double down = g(probe);
    probe[j] = z[j];
    grad[j] = (up - down) / (2.0 * h);
  }
  return grad;
}

struct Partial {
  long long successful = 0, failed = 0, violations = 0;
  double sum_wi = 0.0, sum_wi2 = 0.0, sum_wf = 0.0;
  std::vector<std::pair<long long, std::string>> failures;
};
}  // namespace

std::optional<Eigen::VectorXd> closest_violating_sample(const Eigen::MatrixXd& z, const Eigen::VectorXd& g) {
  if (z.rows() != g.size()) throw std::logic_error("closest_violating_sample: z and g differ in length");
  Eigen::Index best = -1;
  double best_norm2 = 0.0;
  for (Eigen::Index i = 0; i < z.rows(); ++i) {
    if (!(g[i] < 0.0)) continue;
    const double norm2 = z.row(i).squaredNorm();
    if (best < 0 || norm2 < best_norm2) {
      best = i;
      best_norm2 = norm2;
    }
  }
  if (best < 0) return std::nullopt;
  return Eigen::VectorXd(z.row(best).transpose());
}

MostProbablePoint find_most_probable_point(const LimitState& g, int dimension, const std::optional<Eigen::VectorXd>& start,
                                           const MostProbablePointOptions& options) {
  if (dimension <= 0 || !g) throw std::logic_error("find_most_probable_point: bad dimension or missing limit state");
  MostProbablePoint result;
  Eigen::VectorXd z = start ? *start : Eigen::VectorXd::Zero(dimension);
  if (z.size() != dimension) throw std::logic_error("find_most_probable_point: start point has the wrong size");
  const double g_scale = std::max(1.0, std::abs(g(Eigen::VectorXd::Zero(dimension))));
  double gz = g(z);
  for (int k = 1; k <= options.max_iterations; ++k) {
    const Eigen::VectorXd grad = gradient(g, z, options.gradient_step);
    const double grad_norm2 = grad.squaredNorm();
    if (!(grad_norm2 > 0.0) || !std::isfinite(grad_norm2)) {
      throw NumericalError("most probable point: the limit-state gradient vanished or is not finite");
    }
    const Eigen::VectorXd target = ((grad.dot(z) - gz) / grad_norm2) * grad;
    const Eigen::VectorXd direction = target - z;
    // Merit ½‖z‖² + c|g| with c above ‖z‖/‖∇g‖ (Zhang & Der Kiureghian 1997).
    const double c = 2.0 * z.norm() / std::sqrt(grad_norm2) + 10.0;
    const double merit = 0.5 * z.squaredNorm() + c * std::abs(gz);
    double step = 1.0;
    Eigen::VectorXd next = z + direction;
    double g_next = g(next);
    for (int h = 0; h < kMaxHalvings && 0.5 * next.squaredNorm() + c * std::abs(g_next) > merit; ++h) {
      step *= 0.5;
      next = z + step * direction;
      g_next = g(next);
    }
    const double moved = (next - z).norm();
    const double scale = std::max(1.0, z.norm());
    z = next;
    gz = g_next;
    result.iterations = k;
    if (moved <= options.tolerance * scale && std::abs(gz) <= options.limit_state_tolerance * g_scale) {
      result.converged = true;
      break;
    }
  }
  result.z = z;
  result.beta = z.norm();
  result.limit_state = gz;
  return result;
}

namespace {
ImportanceSamplingResult finish(const Partial& total, long long n_samples, const Eigen::VectorXd& z_star,
                                const ImportanceSamplingOptions& options) {
  ImportanceSamplingResult r;
  r.samples = n_samples;
  r.successful_samples = total.successful;
  r.failed_samples = total.failed;
  r.first_failures = total.failures;
  r.violations = total.violations;
  r.design_point = z_star;
  const double n = static_cast<double>(total.successful + total.failed);
  if (total.successful == 0) {
    r.probability = r.standard_error = r.lower = r.upper = r.effective_sample_size = std::nan("");
    r.coefficient_of_variation = r.pessimistic_probability = std::nan("");
    return r;
  }
  r.probability = total.sum_wi / n;
  r.pessimistic_probability = (total.sum_wi + total.sum_wf) / n;
  const double variance = n > 1.0 ? std::max(0.0, (total.sum_wi2 - n * r.probability * r.probability) / (n - 1.0)) : 0.0;
  r.standard_error = std::sqrt(variance / n);
  const boost::math::normal_distribution<double> normal(0.0, 1.0);
  const double z_level = boost::math::quantile(normal, 0.5 * (1.0 + options.confidence));
  r.lower = std::max(0.0, r.probability - z_level * r.standard_error);
  r.upper = r.probability + z_level * r.standard_error;
  r.effective_sample_size = total.sum_wi2 > 0.0 ? total.sum_wi * total.sum_wi / total.sum_wi2 : 0.0;
  r.coefficient_of_variation =
      r.probability > 0.0 ? r.standard_error / r.probability : std::numeric_limits<double>::infinity();
  r.converged = options.cov_target > 0.0 && total.violations >= kMinimumViolations &&
                r.coefficient_of_variation <= options.cov_target;
  return r;
}
}  // namespace

ImportanceSamplingResult importance_sample(const Eigen::VectorXd& z_star, const ViolationIndicator& violated,
                                           const ImportanceSamplingOptions& options) {
  if (options.samples < 0 || options.chunk_size <= 0 || !violated || z_star.size() == 0 || options.batch_size <= 0 ||
      options.cov_target < 0.0) {
    throw std::logic_error("importance_sample: bad options");
  }
  const long long n_max = options.samples;
  const long long chunk = options.chunk_size;
  const Eigen::Index d = z_star.size();
  const double half_beta2 = 0.5 * z_star.squaredNorm();
  const CounterRng rng(options.seed + options.stream);
  Partial total;
  long long done = 0;
  while (done < n_max) {
    // Next batch [done, batch_end), cut into chunks of fixed size from `done`.
    const long long batch_end = options.cov_target > 0.0 ? std::min(n_max, done + options.batch_size) : n_max;
    const long long n_chunks = (batch_end - done + chunk - 1) / chunk;
    for (long long wave = 0; wave < n_chunks; wave += kChunksPerWave) {
      const long long in_wave = std::min(kChunksPerWave, n_chunks - wave);
      std::vector<Partial> partial(static_cast<std::size_t>(in_wave));
      parallel_for(static_cast<std::size_t>(in_wave), options.threads, [&](std::size_t w) {
        Partial& p = partial[w];
        const long long begin = done + (wave + static_cast<long long>(w)) * chunk;
        const long long end = std::min(batch_end, begin + chunk);
        Eigen::VectorXd u(d);
        for (long long i = begin; i < end; ++i) {
          for (Eigen::Index j = 0; j < d; ++j) u[j] = rng.normal(static_cast<std::uint64_t>(i), static_cast<std::uint64_t>(j));
          const Eigen::VectorXd z = z_star + u;
          // w = φ(z)/φ(z − z*) = exp(−z*·z + ‖z*‖²/2) = exp(−z*·u − ‖z*‖²/2).
          const double weight = std::exp(-z_star.dot(u) - half_beta2);
          std::string error;
          const int outcome = violated(z, i, &error);
          if (outcome < 0) {
            ++p.failed;
            p.sum_wf += weight;
            if (static_cast<int>(p.failures.size()) < options.reported_failures) {
              p.failures.emplace_back(i, error.empty() ? "run failed (no message)" : error);
            }
            continue;
          }
          ++p.successful;
          if (outcome > 0) {
            ++p.violations;
            p.sum_wi += weight;
            p.sum_wi2 += weight * weight;
          }
        }
      });
      for (auto& p : partial) {
        total.successful += p.successful;
        total.failed += p.failed;
        total.violations += p.violations;
        total.sum_wi += p.sum_wi;
        total.sum_wi2 += p.sum_wi2;
        total.sum_wf += p.sum_wf;
        for (auto& f : p.failures) {
          if (static_cast<int>(total.failures.size()) < options.reported_failures) total.failures.push_back(std::move(f));
        }
      }
    }
    done = batch_end;
    if (options.cov_target > 0.0 && finish(total, done, z_star, options).converged) break;
  }
  return finish(total, done, z_star, options);
}

ImportanceSamplingResult importance_sample_constraint(const Eigen::VectorXd& z_star, const constraints::Constraint& constraint,
                                                      const Eigen::VectorXd& times, int n_outputs,
                                                      const RunStandardNormalSample& run,
                                                      const ImportanceSamplingOptions& options) {
  if (!run || n_outputs <= 0 || times.size() == 0) throw std::logic_error("importance_sample_constraint: bad arguments");
  bool any = false;
  for (Eigen::Index t = 0; t < times.size(); ++t) any = any || constraint.in_window(times[t]);
  if (!any) throw InputError(constraint.where(), "constraint '" + constraint.name() + "': its window contains no report time");
  const Eigen::Index columns = times.size() * n_outputs;
  return importance_sample(
      z_star,
      [&](const Eigen::VectorXd& z, long long sample, std::string* error) -> int {
        std::vector<double> outputs(static_cast<std::size_t>(columns), std::nan(""));
        if (!run(z.data(), sample, outputs.data(), error)) return -1;
        const Eigen::Map<const Eigen::MatrixXd> row(outputs.data(), 1, columns);
        Eigen::VectorXd minimum(1);
        constraints::ViolationStatistics::path_minimum(constraint, times, n_outputs, row, minimum);
        if (std::isnan(minimum[0])) throw NumericalError("constraint '" + constraint.name() + "': clearance is NaN", sample, std::nan(""));
        return minimum[0] < 0.0 ? 1 : 0;
      },
      options);
}

RunStandardNormalSample in_standard_normal_space(
    const std::vector<germ::FamilySpec>& families,
    std::function<bool(const double* xi, long long sample, double* outputs, std::string* error)> run_in_germ_space) {
  return [families, run = std::move(run_in_germ_space)](const double* z, long long sample, double* outputs,
                                                         std::string* error) {
    std::vector<double> xi(families.size());
    for (std::size_t j = 0; j < families.size(); ++j) xi[j] = germ::from_standard_normal(families[j], z[j]);
    return run(xi.data(), sample, outputs, error);
  };
}

}  // namespace sigmatube::montecarlo
