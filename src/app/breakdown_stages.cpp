// SPDX-License-Identifier: MIT
#include "sigmatube/app/breakdown_stages.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <mutex>

#include "sigmatube/constraints/quantile_tube.h"
#include "sigmatube/constraints/surrogate_sampling.h"
#include "sigmatube/core/parallel.h"
#include "sigmatube/core/counter_rng.h"
#include "sigmatube/expansion/basis_product.h"
#include "sigmatube/expansion/grouped_sobol.h"
#include "sigmatube/model/deterministic_tube.h"

namespace sigmatube::app {
namespace {

// Sample points of the clearance regressions: 10 000 rows keep Ψ at 10 000·P
// doubles and give each coefficient a sampling error of about 1 % of the std.
constexpr long long kClearanceFitSamples = 10000;
// A deviation counts as above the bound beyond this relative slack (integration
// tolerance of the runs, rtol 1e-8 by default, with room).
constexpr double kExceedanceSlack = 1e-6;

// Germ points of the first n samples of the standard-normal stream.
Eigen::MatrixXd stream_points(const germ::Germ& germ, unsigned long long stream_seed, long long n) {
  const int d = germ.dimension();
  const CounterRng rng(stream_seed);
  Eigen::MatrixXd z(n, d);
  for (Eigen::Index i = 0; i < n; ++i)
    for (int j = 0; j < d; ++j) z(i, j) = rng.normal(static_cast<std::uint64_t>(i), static_cast<std::uint64_t>(j));
  return germ::germ_points(germ, z);
}

result::Cube rows_to_cube(const Eigen::MatrixXd& flat, int n_times, int n_outputs) {
  result::Cube cube;
  for (int t = 0; t < n_times; ++t) cube.push_back(flat.middleRows(static_cast<Eigen::Index>(t) * n_outputs, n_outputs));
  return cube;
}

std::vector<int> position_columns(const result::AnalysisResult& r) {
  std::vector<int> columns;
  for (const auto& name : r.tube.position) {
    const auto it = std::find(r.output_names.begin(), r.output_names.end(), name);
    columns.push_back(static_cast<int>(it - r.output_names.begin()));
  }
  return columns;
}

}  // namespace

void quantile_stage(const LoadedCase& loaded, const expansion::Surrogate& surrogate, unsigned long long stream_seed,
                    long long samples, int threads, result::AnalysisResult& r) {
  std::vector<double> epsilons;
  for (const auto& c : loaded.constraints) epsilons.push_back(c.max_probability());
  auto& s = r.surrogate;
  s.quantile_levels = constraints::quantile_levels(epsilons);
  const int n_times = static_cast<int>(r.time.size()), n_out = static_cast<int>(r.output_names.size());
  const int d = loaded.germ->dimension();
  if (d == 0) {
    s.quantile_samples = 1;
    for (int t = 0; t < n_times; ++t)
      s.quantiles.push_back(r.nominal_outputs.row(t).transpose().replicate(1, static_cast<Eigen::Index>(s.quantile_levels.size())));
    return;
  }
  s.quantile_samples = std::min(samples, kQuantileSamples);
  const Eigen::MatrixXd points = stream_points(*loaded.germ, stream_seed, s.quantile_samples);
  s.quantiles = rows_to_cube(constraints::surrogate_quantiles(surrogate, points, s.quantile_levels, threads), n_times, n_out);
}

void input_share_stage(const LoadedCase& loaded, const expansion::Surrogate& surrogate,
                       const expansion::SurrogateSummary& summary, unsigned long long stream_seed, long long samples,
                       double confidence, int threads, result::AnalysisResult& r) {
  const auto& germ = *loaded.germ;
  auto& s = r.surrogate;
  s.input_names = germ.input_names();
  s.sobol_confidence = confidence;
  const int n_times = static_cast<int>(r.time.size()), n_out = static_cast<int>(r.output_names.size());
  if (germ.dimension() == 0) {
    s.sobol_first_by_input.assign(static_cast<std::size_t>(n_times), Eigen::MatrixXd(n_out, 0));
    s.sobol_total_by_input = s.sobol_first_by_input_lower = s.sobol_first_by_input_upper = s.sobol_first_by_input;
    s.sobol_total_by_input_lower = s.sobol_total_by_input_upper = s.sobol_first_by_input;
    for (auto& c : r.constraints)
      c.sobol_first_by_input = c.sobol_total_by_input = c.sobol_first_by_input_lower = c.sobol_first_by_input_upper =
          c.sobol_total_by_input_lower = c.sobol_total_by_input_upper = Eigen::MatrixXd(n_times, 0);
    return;
  }
  const std::vector<std::vector<int>> groups = germ.input_dimensions();
  const bool has_covariance = summary.covariance.gram.rows() == surrogate.basis_size() &&
                              summary.covariance.residual_variance.size() == surrogate.coefficients.cols();
  const expansion::GroupedSobol outputs = expansion::grouped_sobol(
      surrogate.indices, surrogate.coefficients, groups, has_covariance ? &summary.covariance : nullptr, confidence);
  s.sobol_first_by_input = rows_to_cube(outputs.first, n_times, n_out);
  s.sobol_total_by_input = rows_to_cube(outputs.total, n_times, n_out);
  s.sobol_first_by_input_lower = rows_to_cube(outputs.first_lower, n_times, n_out);
  s.sobol_first_by_input_upper = rows_to_cube(outputs.first_upper, n_times, n_out);
  s.sobol_total_by_input_lower = rows_to_cube(outputs.total_lower, n_times, n_out);
  s.sobol_total_by_input_upper = rows_to_cube(outputs.total_upper, n_times, n_out);

  if (loaded.constraints.empty()) return;
  // Clearances at sample points, fitted on the surrogate's basis by least squares
  // (normal equations: the orthonormal basis makes ΨᵀΨ/N ≈ I, well conditioned).
  const long long n = std::min(samples, kClearanceFitSamples);
  const Eigen::MatrixXd points = stream_points(germ, stream_seed, n);
  const Eigen::MatrixXd basis = surrogate.basis_matrix(points);
  const Eigen::Index P = basis.cols();
  const Eigen::MatrixXd gram_inverse_source = basis.transpose() * basis;
  const Eigen::LDLT<Eigen::MatrixXd> normal(gram_inverse_source);
  expansion::CoefficientCovariance cov;
  cov.gram = normal.solve(Eigen::MatrixXd::Identity(P, P));
  // Clearances of every constraint at every time, from the outputs the constraints
  // read only; report times, then constraints, spread over threads (each item
  // writes its own columns or constraint: the same values for any thread count).
  const constraints::CompactOutputs compact = constraints::compact_outputs(loaded.constraints, n_times, n_out);
  const int n_read = static_cast<int>(compact.outputs.size());
  Eigen::MatrixXd selected(P, static_cast<Eigen::Index>(compact.columns.size()));
  for (std::size_t j = 0; j < compact.columns.size(); ++j)
    selected.col(static_cast<Eigen::Index>(j)) = surrogate.coefficients.col(compact.columns[j]);
  std::vector<Eigen::MatrixXd> clearances(loaded.constraints.size(), Eigen::MatrixXd(n, n_times));
  parallel_for(static_cast<std::size_t>(n_times), threads, [&](std::size_t ts) {
    const Eigen::Index t = static_cast<Eigen::Index>(ts);
    Eigen::MatrixXd block(n, n_read);
    expansion::basis_product(basis, expansion::PackedColumns(selected, t * n_read, n_read), block);
    Eigen::VectorXd c(n);
    for (std::size_t k = 0; k < compact.constraints.size(); ++k) {
      compact.constraints[k].clearance(block, r.time[ts], c);
      clearances[k].col(t) = c;
    }
  });
  parallel_for(loaded.constraints.size(), threads, [&](std::size_t k) {
    const Eigen::MatrixXd& clearance = clearances[k];
    const Eigen::MatrixXd coefficients = normal.solve(basis.transpose() * clearance);
    expansion::CoefficientCovariance fit = cov;
    fit.residual_variance = Eigen::VectorXd::Constant(n_times, std::numeric_limits<double>::quiet_NaN());
    if (n > P)
      fit.residual_variance = (clearance - basis * coefficients).colwise().squaredNorm().transpose() / double(n - P);
    const expansion::GroupedSobol shares = expansion::grouped_sobol(surrogate.indices, coefficients, groups, &fit, confidence);
    auto& c = r.constraints[k];
    c.sobol_first_by_input = shares.first;
    c.sobol_total_by_input = shares.total;
    c.sobol_first_by_input_lower = shares.first_lower;
    c.sobol_first_by_input_upper = shares.first_upper;
    c.sobol_total_by_input_lower = shares.total_lower;
    c.sobol_total_by_input_upper = shares.total_upper;
  });
}

void tube_stage(const LoadedCase& loaded, result::AnalysisResult& r) {
  if (!loaded.options.tube) return;
  const auto& o = *loaded.options.tube;
  const model::DeterministicTube tube =
      model::deterministic_tube(*loaded.closed_loop, loaded.options, o.position, o.sigma, o.key_where.of("position", o.where));
  auto& t = r.tube;
  t.done = true;
  t.position = o.position;
  t.sigma = o.sigma;
  t.radius = tube.radius;
  t.rate = tube.rate;
  t.metric = tube.metric;
  t.metric_kind = tube.metric_kind;
  t.bounded = tube.bounded;
  t.no_bound_reason = tube.no_bound_reason;
  t.assumptions = tube.assumptions;
  // The radius carries the position's unit when every component has the same one.
  t.units.clear();
  bool same = true;
  for (std::size_t k = 0; k < o.position.size(); ++k) {
    const auto it = std::find(r.output_names.begin(), r.output_names.end(), o.position[k]);
    const std::string u = it != r.output_names.end() && r.output_units.size() == r.output_names.size()
                              ? r.output_units[static_cast<std::size_t>(it - r.output_names.begin())]
                              : "";
    if (k == 0) t.units = u;
    else if (u != t.units) same = false;
  }
  if (!same) t.units.clear();
}

struct TubeCheck::State {
  bool active = false;
  int n_times = 0, n_out = 0;
  std::vector<int> columns;
  Eigen::MatrixXd nominal;
  Eigen::VectorXd radius;
  std::mutex mutex;
  long long runs = 0, exceedances = 0;
  Eigen::VectorXd largest;  // [T]
};

TubeCheck::TubeCheck(const result::AnalysisResult& r) : state_(std::make_unique<State>()) {
  auto& s = *state_;
  s.active = r.tube.done;
  if (!s.active) return;
  s.n_times = static_cast<int>(r.time.size());
  s.n_out = static_cast<int>(r.output_names.size());
  s.columns = position_columns(r);
  s.nominal = r.nominal_outputs;
  s.radius = r.tube.radius;
  s.largest = Eigen::VectorXd::Zero(s.n_times);
}

TubeCheck::~TubeCheck() = default;

void TubeCheck::observe(const double* rows, long long count, const std::uint8_t* ok) {
  auto& s = *state_;
  if (!s.active) return;
  const long long width = static_cast<long long>(s.n_times) * s.n_out;
  Eigen::VectorXd largest = Eigen::VectorXd::Zero(s.n_times);
  long long runs = 0, exceed = 0;
  for (long long i = 0; i < count; ++i) {
    if (ok && !ok[i]) continue;
    ++runs;
    const double* row = rows + i * width;
    for (int t = 0; t < s.n_times; ++t) {
      double d2 = 0.0;
      for (int c : s.columns) {
        const double e = row[static_cast<long long>(t) * s.n_out + c] - s.nominal(t, c);
        d2 += e * e;
      }
      const double d = std::sqrt(d2);
      largest[t] = std::max(largest[t], d);
      const double bound = s.radius[t];
      if (std::isfinite(bound) && d > bound * (1.0 + kExceedanceSlack) + kExceedanceSlack * 1e-6) ++exceed;
    }
  }
  std::lock_guard<std::mutex> lock(s.mutex);
  s.runs += runs;
  s.exceedances += exceed;
  s.largest = s.largest.cwiseMax(largest);
}

void TubeCheck::finish(result::AnalysisResult& r) const {
  const auto& s = *state_;
  if (!s.active || s.runs == 0) return;
  auto& t = r.tube;
  t.runs_checked = s.runs;
  t.exceedances = s.exceedances;
  Eigen::Index at = 0;
  t.largest_observed_deviation = s.largest.maxCoeff(&at);
  t.conservatism = t.largest_observed_deviation > 0.0 ? s.radius[at] / t.largest_observed_deviation
                                                      : std::numeric_limits<double>::quiet_NaN();
}

}  // namespace sigmatube::app
