// SPDX-License-Identifier: MIT
#include "sigmatube/montecarlo/short_number.h"
#include "sigmatube/montecarlo/monte_carlo.h"

#include "sigmatube/core/running_moments.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <optional>
#include <sstream>
#include <stdexcept>

#include "sigmatube/core/counter_rng.h"
#include "sigmatube/core/error.h"
#include "sigmatube/core/parallel.h"

namespace sigmatube::montecarlo {
namespace {
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
// Chunks in flight per wave. The partial accumulators are merged into the total
// one by one in chunk order, so the wave size changes no result (and the thread
// count none either); it only sets how often the threads meet: with 64 chunks
// of 32 runs, two threads meet once per 2048 runs instead of once per 512.
constexpr long long kChunksPerWave = 64;
using RowMajor = Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>;

struct Partial {
  explicit Partial(const std::vector<constraints::Constraint>& c, const Eigen::VectorXd& times, int n_out, long long max_n,
                   Eigen::Index columns)
      : stats(c, times, n_out, max_n), mean(Eigen::VectorXd::Zero(columns)), m2(Eigen::VectorXd::Zero(columns)),
        squared_error(Eigen::VectorXd::Zero(columns)) {}
  constraints::ViolationStatistics stats;
  long long successful = 0, failed = 0, saturated = 0;
  Eigen::VectorXd mean, m2;       // per column of Y
  Eigen::VectorXd squared_error;  // per column of Y, summed over runs
  std::vector<PairedCounts> paired;
  std::vector<std::pair<long long, std::string>> failures;
};


std::string format_g(double value) { return short_number(value); }
}  // namespace

std::vector<SaturationLimit> saturation_limits(const std::vector<casefile::InputLimit>& limits,
                                               const std::vector<std::string>& output_names) {
  std::vector<SaturationLimit> out;
  for (const auto& limit : limits) {
    const std::string name = "cmd." + limit.input;
    const auto it = std::find(output_names.begin(), output_names.end(), name);
    if (it == output_names.end()) throw InputError(limit.where, "no output '" + name + "' for the limit on input '" + limit.input + "'");
    out.push_back({static_cast<int>(it - output_names.begin()), limit.low, limit.high});
  }
  return out;
}

void germ_point(const std::vector<germ::FamilySpec>& families, unsigned long long seed, long long sample, double* xi) {
  const CounterRng rng(seed);
  for (std::size_t j = 0; j < families.size(); ++j) {
    xi[j] = germ::from_standard_normal(families[j], rng.normal(static_cast<std::uint64_t>(sample), j));
  }
}

std::string MonteCarloResult::summary() const {
  std::ostringstream out;
  out << "Monte Carlo: " << successful_runs << " of " << runs << " runs succeeded";
  if (failed_runs > 0) {
    out << "; " << failed_runs << " failed: excluded from moments and validation, counted as unknown in probabilities";
    for (const auto& [sample, message] : first_failures) out << "\n  run " << sample << ": " << message;
  }
  for (const auto& c : constraints) {
    out << "\n  " << c.name << ": path probability " << format_g(c.path_probability) << " ("
        << c.path_violations << " of " << successful_runs << "), " << format_g(100 * confidence) << "% interval ["
        << format_g(c.path_interval.lower) << ", " << format_g(c.path_interval.upper) << "]";
  }
  if (!constraints.empty()) {
    out << "\n  any constraint: " << format_g(joint_probability) << ", interval [" << format_g(joint_interval.lower) << ", "
        << format_g(joint_interval.upper) << "]";
  }
  if (saturated_runs > 0) out << "\n  " << saturated_runs << " runs saturated a commanded input";
  return out.str();
}

MonteCarloResult run_monte_carlo(const casefile::MonteCarloOptions& options, const std::vector<germ::FamilySpec>& families,
                                 const Eigen::VectorXd& times, int n_outputs,
                                 const std::vector<constraints::Constraint>& constraints, const RunSample& run_sample,
                                 const MonteCarloRunOptions& run_options, const SurrogateEvaluator& surrogate,
                                 const Progress& progress) {
  if (options.runs < 0 || n_outputs <= 0 || times.size() == 0 || !run_sample || run_options.chunk_size <= 0) {
    throw std::logic_error("run_monte_carlo: bad sizes or missing run callback");
  }
  for (const auto& s : run_options.saturation) {
    if (s.output < 0 || s.output >= n_outputs) throw std::logic_error("run_monte_carlo: saturation output out of range");
  }
  const long long runs = options.runs;
  const Eigen::Index T = times.size();
  const Eigen::Index columns = T * n_outputs;
  const int d = static_cast<int>(families.size());
  const long long chunk = run_options.chunk_size;
  const long long kept = std::min<long long>(std::max(run_options.kept_runs, 0), runs);

  MonteCarloResult result;
  result.runs = runs;
  result.confidence = options.confidence;
  result.kept_outputs.setConstant(kept, columns, kNaN);
  for (long long i = 0; i < kept; ++i) result.kept_samples.push_back(i);

  Partial total(constraints, times, n_outputs, runs, columns);
  const long long n_chunks = (runs + chunk - 1) / chunk;
  // The wave's buffers live across waves (resized only for a shorter last wave),
  // so that megabytes of outputs are not allocated and page-faulted per wave.
  RowMajor wave_outputs;
  std::vector<std::uint8_t> wave_ok;
  Eigen::MatrixXd wave_xi;
  for (long long wave = 0; wave < n_chunks; wave += kChunksPerWave) {
    const long long in_wave = std::min(kChunksPerWave, n_chunks - wave);
    // With a row runner the whole wave is run first (possibly over ranks);
    // the chunks below then only read their rows.
    const long long wave_begin = wave * chunk, wave_end = std::min(runs, (wave + in_wave) * chunk);
    if (run_options.run_rows) {
      const Eigen::Index wave_rows = wave_end - wave_begin;
      wave_xi.resize(wave_rows, d);
      parallel_for_chunks(static_cast<std::size_t>(wave_rows), static_cast<std::size_t>(chunk), run_options.threads,
                          [&](std::size_t b, std::size_t e) {
                            std::vector<double> point(static_cast<std::size_t>(d));
                            for (std::size_t r = b; r < e; ++r) {
                              germ_point(families, options.seed, wave_begin + static_cast<long long>(r), point.data());
                              for (int j = 0; j < d; ++j) wave_xi(static_cast<Eigen::Index>(r), j) = point[static_cast<std::size_t>(j)];
                            }
                          });
      wave_outputs.resize(wave_rows, columns);  // every row is written by run_rows (read only where ok)
      wave_ok.assign(static_cast<std::size_t>(wave_rows), 0);
      run_options.run_rows(wave_begin, wave_end, wave_xi, wave_outputs.data(), wave_ok.data());
    }
    // Each chunk's accumulators are made by the thread that fills them.
    std::vector<std::optional<Partial>> partial(static_cast<std::size_t>(in_wave));
    parallel_for(static_cast<std::size_t>(in_wave), run_options.threads, [&](std::size_t w) {
      Partial& p = partial[w].emplace(constraints, times, n_outputs, runs, columns);
      const long long begin = (wave + static_cast<long long>(w)) * chunk;
      const long long end = std::min(runs, begin + chunk);
      const Eigen::Index rows = end - begin;
      // The chunk's outputs, row-major as the runs write them: the wave's rows,
      // or rows of its own filled run by run. A failed run's row is NaN (never
      // read: the statistics take only the rows marked in `keep`).
      RowMajor own;
      if (!run_options.run_rows) own.resize(rows, columns);
      double* const out_rows = run_options.run_rows ? wave_outputs.data() + (begin - wave_begin) * columns : own.data();
      Eigen::MatrixXd xi(rows, d);
      std::vector<std::uint8_t> keep(static_cast<std::size_t>(rows), 0), saturated_row(static_cast<std::size_t>(rows), 0);
      std::vector<double> point(static_cast<std::size_t>(d));
      for (Eigen::Index r = 0; r < rows; ++r) {
        const long long sample = begin + r;
        double* const row = out_rows + r * columns;
        bool ran = false;
        std::string error;
        if (run_options.run_rows) {
          // The wave already drew this run's germ point and ran it.
          const Eigen::Index at = sample - wave_begin;
          xi.row(r) = wave_xi.row(at);
          ran = wave_ok[static_cast<std::size_t>(at)] != 0;
          if (!ran) {
            // Same run again, only for its message (failures are rare and deterministic).
            for (int j = 0; j < d; ++j) point[static_cast<std::size_t>(j)] = xi(r, j);
            std::fill(row, row + columns, kNaN);
            (void)run_sample(point.data(), sample, row, &error);
          }
        } else {
          germ_point(families, options.seed, sample, point.data());
          for (int j = 0; j < d; ++j) xi(r, j) = point[static_cast<std::size_t>(j)];
          std::fill(row, row + columns, kNaN);
          ran = run_sample(point.data(), sample, row, &error);
        }
        if (!ran) {
          std::fill(row, row + columns, kNaN);
          ++p.failed;
          if (static_cast<int>(p.failures.size()) < run_options.reported_failures) {
            p.failures.emplace_back(sample, error.empty() ? "run failed (no message)" : error);
          }
          continue;
        }
        keep[static_cast<std::size_t>(r)] = 1;
        ++p.successful;
        if (sample < kept) result.kept_outputs.row(sample) = Eigen::Map<const Eigen::RowVectorXd>(row, columns);  // each run owns its row
        bool saturated = false;
        for (const auto& s : run_options.saturation) {
          for (Eigen::Index t = 0; t < T && !saturated; ++t) {
            const double u = row[t * n_outputs + s.output];
            saturated = u < s.low || u > s.high;
          }
        }
        if (saturated) ++p.saturated;
        saturated_row[static_cast<std::size_t>(r)] = saturated ? 1 : 0;
      }
      if (p.successful == 0) return;
      const Eigen::Map<const RowMajor> R(out_rows, rows, columns);
      // Column-major for the statistics, which take the outputs of one report time as a block of columns.
      const Eigen::MatrixXd Y = R;
      p.stats.add(Y, keep, begin);
      // Two-pass moments over the chunk's successful runs, row after row (the
      // sums of every column in run order), on the row-major rows.
      for (Eigen::Index r = 0; r < rows; ++r) {
        if (keep[static_cast<std::size_t>(r)]) p.mean += R.row(r).transpose();
      }
      p.mean /= static_cast<double>(p.successful);
      for (Eigen::Index r = 0; r < rows; ++r) {
        if (keep[static_cast<std::size_t>(r)]) p.m2 += (R.row(r).transpose() - p.mean).cwiseAbs2();
      }
      if (surrogate) {
        // The successful runs' points and outputs (the chunk's own when all ran).
        const bool all = p.successful == rows;
        Eigen::MatrixXd xi_ok, y_ok;
        std::vector<std::uint8_t> saturated_ok;
        if (!all) {
          xi_ok.resize(p.successful, d);
          y_ok.resize(p.successful, columns);
          saturated_ok.assign(static_cast<std::size_t>(p.successful), 0);
          Eigen::Index k = 0;
          for (Eigen::Index r = 0; r < rows; ++r) {
            if (!keep[static_cast<std::size_t>(r)]) continue;
            xi_ok.row(k) = xi.row(r);
            y_ok.row(k) = R.row(r);
            saturated_ok[static_cast<std::size_t>(k)] = saturated_row[static_cast<std::size_t>(r)];
            ++k;
          }
        }
        const Eigen::MatrixXd& xs = all ? xi : xi_ok;
        const Eigen::MatrixXd& ys = all ? Y : y_ok;
        Eigen::MatrixXd values(p.successful, columns);
        surrogate(xs, values);
        if (values.rows() != p.successful || values.cols() != columns) {
          throw std::logic_error("run_monte_carlo: surrogate returned values of the wrong shape");
        }
        for (Eigen::Index c = 0; c < columns; ++c) p.squared_error[c] += (values.col(c) - ys.col(c)).squaredNorm();
        add_paired_runs(constraints, times, n_outputs, ys, values, all ? saturated_row : saturated_ok, p.paired);
      }
    });
    for (auto& slot : partial) {
      Partial& p = *slot;
      total.stats.merge(p.stats);
      merge_moments(total.successful, total.mean, total.m2, p.successful, p.mean, p.m2);
      total.successful += p.successful;
      total.failed += p.failed;
      total.saturated += p.saturated;
      total.squared_error += p.squared_error;
      if (total.paired.size() < p.paired.size()) total.paired.resize(p.paired.size());
      for (std::size_t k = 0; k < p.paired.size(); ++k) total.paired[k].merge(p.paired[k]);
      for (auto& f : p.failures) {
        if (static_cast<int>(total.failures.size()) < run_options.reported_failures) total.failures.push_back(std::move(f));
      }
    }
    if (progress) progress(std::min(runs, (wave + in_wave) * chunk), runs);
  }

  const long long n = total.successful;
  const double nd = static_cast<double>(n);
  result.successful_runs = n;
  result.failed_runs = total.failed;
  result.first_failures = std::move(total.failures);
  result.saturated_runs = total.saturated;
  result.saturation_fraction = n > 0 ? static_cast<double>(total.saturated) / nd : kNaN;
  result.mean.setConstant(T, n_outputs, kNaN);
  result.std.setConstant(T, n_outputs, kNaN);
  result.mean_standard_error.setConstant(T, n_outputs, kNaN);
  result.std_standard_error.setConstant(T, n_outputs, kNaN);
  for (Eigen::Index t = 0; t < T; ++t) {
    for (int o = 0; o < n_outputs; ++o) {
      const Eigen::Index c = t * n_outputs + o;
      if (n > 0) result.mean(t, o) = total.mean[c];
      if (n > 1) {
        const double s = std::sqrt(total.m2[c] / (nd - 1.0));
        result.std(t, o) = s;
        result.mean_standard_error(t, o) = s / std::sqrt(nd);
        result.std_standard_error(t, o) = s / std::sqrt(2.0 * (nd - 1.0));
      }
    }
  }
  result.violations = total.stats.results();
  for (const auto& s : result.violations.constraints) {
    ConstraintMonteCarlo c;
    c.name = s.name;
    c.pointwise_probability = s.pointwise_probability;
    c.path_violations = s.path_violations;
    c.path_probability = s.path_probability;
    c.path_interval = clopper_pearson(s.path_violations, n, options.confidence);
    const long long all = n + total.failed;
    c.path_interval_failures_safe = clopper_pearson(s.path_violations, all, options.confidence);
    c.path_interval_failures_violating = clopper_pearson(s.path_violations + total.failed, all, options.confidence);
    const double all_d = static_cast<double>(all);
    c.pessimistic_path_probability = all > 0 ? static_cast<double>(s.path_violations + total.failed) / all_d : kNaN;
    long long most = 0;
    for (std::size_t t = 0; t < s.pointwise_violations.size(); ++t)
      if (s.in_window[t]) most = std::max(most, s.pointwise_violations[t]);
    c.pessimistic_pointwise_probability = all > 0 ? static_cast<double>(most + total.failed) / all_d : kNaN;
    result.constraints.push_back(std::move(c));
  }
  result.joint_violations = result.violations.joint_violations;
  result.joint_probability = result.violations.joint_probability;
  result.joint_interval = clopper_pearson(result.joint_violations, n, options.confidence);
  result.validated = static_cast<bool>(surrogate) && n > 0;
  result.validation_rmse.setConstant(n_outputs, kNaN);
  result.validation_relative_rmse.setConstant(n_outputs, kNaN);
  result.validation_rmse_by_time.setConstant(T, n_outputs, kNaN);
  if (result.validated) {
    result.paired = std::move(total.paired);
    for (int o = 0; o < n_outputs; ++o) {
      double summed = 0.0;
      for (Eigen::Index t = 0; t < T; ++t) {
        summed += total.squared_error[t * n_outputs + o];
        result.validation_rmse_by_time(t, o) = std::sqrt(total.squared_error[t * n_outputs + o] / nd);
      }
      const double rmse = std::sqrt(summed / (nd * static_cast<double>(T)));
      double variance = 0.0, mean_square = 0.0;
      for (Eigen::Index t = 0; t < T; ++t) {
        const double s = std::isnan(result.std(t, o)) ? 0.0 : result.std(t, o);
        variance += s * s;
        mean_square += result.mean(t, o) * result.mean(t, o);
      }
      double scale = std::sqrt(variance / static_cast<double>(T));
      const double floor = 1e-12 * std::max(1.0, std::sqrt(mean_square / static_cast<double>(T)));
      scale = std::max(scale, floor);
      result.validation_rmse[o] = rmse;
      result.validation_relative_rmse[o] = rmse / scale;
    }
  }
  return result;
}

}  // namespace sigmatube::montecarlo
