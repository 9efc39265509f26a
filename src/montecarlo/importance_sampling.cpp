// SPDX-License-Identifier: MIT
#include "sigmatube/montecarlo/importance_sampling.h"

#include <boost/math/distributions/normal.hpp>
#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <stdexcept>

#include "sigmatube/constraints/violation_statistics.h"
#include "sigmatube/core/counter_rng.h"
#include "sigmatube/core/distributed.h"
#include "sigmatube/core/error.h"

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

// A chunk's partial sums as doubles for the other MPI ranks (integers and the
// failure messages' bytes bit-copied), and back.
double bits_of(long long v) {
  double d;
  std::memcpy(&d, &v, sizeof d);
  return d;
}
long long integer_of(double d) {
  long long v;
  std::memcpy(&v, &d, sizeof v);
  return v;
}
std::vector<double> pack(const Partial& p) {
  std::vector<double> out{bits_of(p.successful), bits_of(p.failed), bits_of(p.violations), p.sum_wi, p.sum_wi2,
                          p.sum_wf, bits_of(static_cast<long long>(p.failures.size()))};
  for (const auto& [sample, message] : p.failures) {
    out.push_back(bits_of(sample));
    out.push_back(bits_of(static_cast<long long>(message.size())));
    const std::size_t words = (message.size() + sizeof(double) - 1) / sizeof(double);
    const std::size_t at = out.size();
    out.resize(at + words, 0.0);
    if (!message.empty()) std::memcpy(out.data() + at, message.data(), message.size());
  }
  return out;
}
Partial unpack(const double* data, std::size_t size) {
  std::size_t at = 0;
  const auto next = [&]() {
    if (at >= size) throw std::logic_error("importance_sample: partial sums too short");
    return data[at++];
  };
  Partial p;
  p.successful = integer_of(next());
  p.failed = integer_of(next());
  p.violations = integer_of(next());
  p.sum_wi = next();
  p.sum_wi2 = next();
  p.sum_wf = next();
  const long long n_failures = integer_of(next());
  if (n_failures < 0 || static_cast<unsigned long long>(n_failures) > size)
    throw std::logic_error("importance_sample: bad failure count");
  for (long long f = 0; f < n_failures; ++f) {
    const long long sample = integer_of(next()), length = integer_of(next());
    const std::size_t words = length < 0 ? 0 : (static_cast<std::size_t>(length) + sizeof(double) - 1) / sizeof(double);
    if (length < 0 || words > size - at) throw std::logic_error("importance_sample: bad failure message");
    std::string message(static_cast<std::size_t>(length), '\0');
    if (length > 0) std::memcpy(message.data(), data + at, message.size());
    at += words;
    p.failures.emplace_back(sample, std::move(message));
  }
  if (at != size) throw std::logic_error("importance_sample: partial sums too long");
  return p;
}
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
// log Φ(−β); past the double range of Φ(−β) (β ≳ 37) the leading term of the Mills-ratio
// expansion, log φ(β) − log β (Abramowitz & Stegun 26.2.12).
double log_tail(double beta) {
  const boost::math::normal_distribution<double> normal(0.0, 1.0);
  const double p = boost::math::cdf(boost::math::complement(normal, beta));
  if (p > 0.0) return std::log(p);
  return -0.5 * beta * beta - std::log(beta * std::sqrt(2.0 * M_PI));
}
}  // namespace

std::vector<MostProbablePoint> find_design_points(const LimitState& g, const Eigen::MatrixXd& screen,
                                                  const Eigen::VectorXd& g_screen, const DesignPointSearchOptions& options) {
  if (screen.rows() != g_screen.size() || screen.cols() == 0 || options.max_points < 1)
    throw std::logic_error("find_design_points: bad screen or options");
  const int d = static_cast<int>(screen.cols());
  std::vector<Eigen::Index> violating;
  for (Eigen::Index i = 0; i < screen.rows(); ++i)
    if (g_screen[i] < 0.0) violating.push_back(i);
  // Stable order by ‖z‖ (ties by row), so the starts do not depend on the sort implementation.
  std::stable_sort(violating.begin(), violating.end(), [&](Eigen::Index a, Eigen::Index b) {
    return screen.row(a).squaredNorm() < screen.row(b).squaredNorm();
  });
  std::vector<Eigen::VectorXd> starts;
  for (const Eigen::Index i : violating) {
    if (static_cast<int>(starts.size()) >= options.max_points) break;
    const Eigen::VectorXd z = screen.row(i).transpose();
    const double norm = z.norm();
    bool separate = norm > 0.0;
    for (const auto& s : starts) separate = separate && s.dot(z) < options.separation_cosine * s.norm() * norm;
    if (separate) starts.push_back(z);
  }
  std::vector<MostProbablePoint> found;
  if (starts.empty()) found.push_back(find_most_probable_point(g, d, std::nullopt, options.hlrf));
  for (const auto& s : starts) found.push_back(find_most_probable_point(g, d, s, options.hlrf));
  std::stable_sort(found.begin(), found.end(),
                   [](const MostProbablePoint& a, const MostProbablePoint& b) { return a.beta < b.beta; });
  const double most = log_tail(found.front().beta);
  std::vector<MostProbablePoint> kept;
  for (auto& p : found) {
    bool duplicate = false;
    for (const auto& k : kept) duplicate = duplicate || (p.z - k.z).norm() <= options.duplicate_distance * std::max(1.0, k.beta);
    if (duplicate || log_tail(p.beta) < std::log(options.relevance) + most) continue;
    kept.push_back(std::move(p));
  }
  return kept;
}

MixtureProposal mixture_over(const std::vector<MostProbablePoint>& design_points, double defensive) {
  if (design_points.empty() || !(defensive >= 0.0 && defensive < 1.0))
    throw std::logic_error("mixture_over: no design point or a defensive share outside [0, 1)");
  MixtureProposal q;
  q.defensive = defensive;
  // Shares relative to the most probable point, so that far in the tail they cannot all underflow.
  double top = -std::numeric_limits<double>::infinity();
  for (const auto& p : design_points) top = std::max(top, log_tail(p.beta));
  double total = 0.0;
  for (const auto& p : design_points) {
    q.centres.push_back(p.z);
    q.shares.push_back(std::exp(log_tail(p.beta) - top));
    total += q.shares.back();
  }
  for (auto& a : q.shares) a *= (1.0 - defensive) / total;
  return q;
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

namespace {
void check_proposal(const MixtureProposal& q) {
  // Shares are set by code, never read from a file: a rounding slack of 1e-9 (common practice).
  constexpr double kShareSlack = 1e-9;
  if (q.centres.empty() || q.centres.size() != q.shares.size() || q.centres[0].size() == 0 || !(q.defensive >= 0.0))
    throw std::logic_error("importance_sample: empty or inconsistent mixture proposal");
  double total = q.defensive;
  for (std::size_t k = 0; k < q.centres.size(); ++k) {
    if (q.centres[k].size() != q.centres[0].size() || !(q.shares[k] >= 0.0) || !q.centres[k].allFinite())
      throw std::logic_error("importance_sample: bad mixture component");
    total += q.shares[k];
  }
  if (std::abs(total - 1.0) > kShareSlack) throw std::logic_error("importance_sample: mixture shares do not sum to 1");
}
}  // namespace

ImportanceSamplingResult importance_sample(const Eigen::VectorXd& z_star, const ViolationIndicator& violated,
                                           const ImportanceSamplingOptions& options) {
  return importance_sample(MixtureProposal::around(z_star), violated, options);
}

ImportanceSamplingResult importance_sample(const MixtureProposal& proposal, const ViolationIndicator& violated,
                                           const ImportanceSamplingOptions& options) {
  if (options.samples < 0 || options.chunk_size <= 0 || !violated || options.batch_size <= 0 ||
      options.cov_target < 0.0) {
    throw std::logic_error("importance_sample: bad options");
  }
  check_proposal(proposal);
  const long long n_max = options.samples;
  const long long chunk = options.chunk_size;
  const Eigen::Index d = proposal.centres[0].size();
  const std::size_t n_centres = proposal.centres.size();
  // log α_k − ‖c_k‖²/2 per centre; a zero share leaves the component out of q.
  std::vector<double> log_offset(n_centres);
  for (std::size_t k = 0; k < n_centres; ++k)
    log_offset[k] = std::log(proposal.shares[k]) - 0.5 * proposal.centres[k].squaredNorm();
  const double log_defensive = std::log(proposal.defensive);  // −∞ without a defensive share
  const bool single = n_centres == 1 && !(proposal.defensive > 0.0);
  // w = φ(z)/q(z) = 1/Σ exp(l_k), l_0 = log α₀, l_k = log α_k + c_k·z − ‖c_k‖²/2 (log-sum-exp).
  const auto weight_at = [&](const Eigen::VectorXd& z) {
    double top = log_defensive;
    std::vector<double> l(n_centres);
    for (std::size_t k = 0; k < n_centres; ++k) {
      l[k] = log_offset[k] + proposal.centres[k].dot(z);
      top = std::max(top, l[k]);
    }
    double sum = std::exp(log_defensive - top);
    for (std::size_t k = 0; k < n_centres; ++k) sum += std::exp(l[k] - top);
    return std::exp(-top) / sum;
  };
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
      // The chunks of a wave over MPI ranks and threads; every rank then adds
      // the same partial sums in chunk order (the single-process result).
      run_distributed_items(static_cast<std::size_t>(in_wave), options.threads, [&](std::size_t w) {
        Partial& p = partial[w];
        const long long begin = done + (wave + static_cast<long long>(w)) * chunk;
        const long long end = std::min(batch_end, begin + chunk);
        Eigen::VectorXd z(d);
        for (long long i = begin; i < end; ++i) {
          const auto sample = static_cast<std::uint64_t>(i);
          // Component: 0 = defensive N(0, I), else centre k − 1 (cumulative shares).
          std::size_t component = 1;
          if (!single) {
            const double pick = rng.uniform(sample, static_cast<std::uint64_t>(d));
            double cumulative = proposal.defensive;
            component = pick < cumulative ? 0 : n_centres;
            for (std::size_t k = 0; component == n_centres && k + 1 < n_centres; ++k) {
              cumulative += proposal.shares[k];
              if (pick < cumulative) component = k + 1;
            }
          }
          for (Eigen::Index j = 0; j < d; ++j) z[j] = rng.normal(sample, static_cast<std::uint64_t>(j));
          if (component > 0) z += proposal.centres[component - 1];
          const double weight = weight_at(z);
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
      }, [&](std::size_t w) { return pack(partial[w]); },
      [&](std::size_t w, const double* data, std::size_t size) { partial[w] = unpack(data, size); });
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
    if (options.cov_target > 0.0 && finish(total, done, proposal.centres[0], options).converged) break;
  }
  return finish(total, done, proposal.centres[0], options);
}

ImportanceSamplingResult importance_sample_constraint(const MixtureProposal& proposal, const constraints::Constraint& constraint,
                                                      const Eigen::VectorXd& times, int n_outputs,
                                                      const RunStandardNormalSample& run,
                                                      const ImportanceSamplingOptions& options) {
  if (!run || n_outputs <= 0 || times.size() == 0) throw std::logic_error("importance_sample_constraint: bad arguments");
  bool any = false;
  for (Eigen::Index t = 0; t < times.size(); ++t) any = any || constraint.in_window(times[t]);
  if (!any) throw InputError(constraint.where(), "constraint '" + constraint.name() + "': its window contains no report time");
  const Eigen::Index columns = times.size() * n_outputs;
  return importance_sample(
      proposal,
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
