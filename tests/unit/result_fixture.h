// SPDX-License-Identifier: MIT
#pragma once
// An invented analysis result for the tests of the result/ folder (summary,
// JSON, compare, report), plus a helper to run the Debian Python.
//
// Invented scenario: a chaser flies a straight line x = 25 m, y = −150 + 0.5 t m
// past a keep-out circle of radius 15 m at the origin, with isotropic Gaussian
// position error of standard deviation σ(t) = 1 + 0.01 t m driven by three
// Hermite germ variables: x = μx + σ ξ1, y = μy + σ (0.8 ξ2 + 0.6 ξ3). With
// that model the keep-out pointwise probability is the noncentral chi-square
// CDF P(χ²₂(λ = |μ|²/σ²) ≤ r²/σ²) (Boost.Math non_central_chi_squared) and
// the corridor (x ≤ 40 m) probability is the normal tail 1 − Φ((40 − μx)/σ).
// Other numbers (path probability, clearance moments) are plausible values
// built from these, not the output of the library.
#include <unistd.h>

#include <array>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <memory>
#include <stdexcept>
#include <string>

#include <boost/math/distributions/non_central_chi_squared.hpp>
#include <boost/math/distributions/normal.hpp>
#include <boost/math/special_functions/beta.hpp>

#include "sigmatube/core/counter_rng.h"
#include "sigmatube/result/analysis_result.h"

namespace sigmatube::result::testing {

inline void clopper_pearson_interval(long long k, long long n, double confidence, double out[2]) {
  const double a = 1 - confidence;
  out[0] = k == 0 ? 0.0 : boost::math::ibeta_inv(double(k), double(n - k + 1), a / 2);
  out[1] = k == n ? 1.0 : boost::math::ibeta_inv(double(k + 1), double(n - k), 1 - a / 2);
}

inline AnalysisResult make_fixture_result(bool with_montecarlo = true) {
  AnalysisResult r;
  r.tool_version = "0.1.0";
  r.case_sha256 = "9f2c4e1a0b7d3c5e8f6a1b2c3d4e5f60718293a4b5c6d7e8f90a1b2c3d4e5f6a";
  r.created_utc = "2026-12-01T12:00:00Z";
  r.seed = 20261201;
  r.title = "Invented fly-by <A&B> \"test\"";
  r.case_path = "examples/invented_flyby.toml";
  r.command = "run";
  const int T = 61;
  const double dt = 10.0;
  r.output_names = {"x", "y"};
  r.nominal_outputs.resize(T, 2);
  for (int k = 0; k < T; ++k) {
    r.time.push_back(k * dt);
    r.nominal_outputs(k, 0) = 25.0;
    r.nominal_outputs(k, 1) = -150.0 + 0.5 * k * dt;
  }
  auto sigma = [&](int k) { return 1.0 + 0.01 * r.time[std::size_t(k)]; };

  SurrogateResult& s = r.surrogate;
  s.done = true;
  s.method = "sparse-grid";
  s.germ_names = {"nav-position[0]", "nav-position[1]", "nav-position[2]"};
  s.germ_families = {"hermite", "hermite", "hermite"};
  s.multi_indices.resize(4, 3);
  s.multi_indices << 0, 0, 0, 1, 0, 0, 0, 1, 0, 0, 0, 1;
  s.mean = r.nominal_outputs;
  s.std.resize(T, 2);
  for (int k = 0; k < T; ++k) {
    const double sg = sigma(k);
    s.std(k, 0) = s.std(k, 1) = sg;
    Eigen::MatrixXd c(2, 4);
    c << s.mean(k, 0), sg, 0, 0, s.mean(k, 1), 0, 0.8 * sg, 0.6 * sg;
    s.coefficients.push_back(c);
    Eigen::MatrixXd first(2, 3);
    first << 1, 0, 0, 0, 0.64, 0.36;
    s.sobol_first.push_back(first);
    s.sobol_total.push_back(first);
  }
  s.model_runs = 25;
  s.level_reached = 2;
  s.degree_reached = 1;
  s.tolerance_met = true;
  s.error_estimate = Eigen::Vector2d(3.1e-9, 2.7e-9);
  s.samples = 100000;
  s.karhunen_loeve = {};

  const boost::math::normal standard;
  const double z99 = boost::math::quantile(standard, 0.99);  // ε = 1e-2
  const double cantelli = std::sqrt(0.99 / 0.01);

  // Keep-out circle (path scope).
  ConstraintResult ko;
  ko.name = "keep-out";
  ko.type = "outside-sphere";
  ko.scope = "path";
  ko.max_probability = 1e-2;
  ko.window[0] = 0, ko.window[1] = 600;
  ko.position = {"x", "y"};
  ko.center = {0.0, 0.0};
  ko.radius = 15.0;
  // Corridor x ≤ 40 m (pointwise scope).
  ConstraintResult co;
  co.name = "corridor";
  co.type = "half-space";
  co.scope = "pointwise";
  co.max_probability = 1e-2;
  co.window[0] = 0, co.window[1] = 600;
  co.position = {"x", "y"};
  for (ConstraintResult* c : {&ko, &co}) {
    c->pointwise_probability.resize(T);
    c->pointwise_standard_error.resize(T);
    c->clearance_mean.resize(T);
    c->clearance_std.resize(T);
    c->clearance_quantile.resize(T);
  }
  for (int k = 0; k < T; ++k) {
    const double sg = sigma(k);
    const double distance = std::hypot(s.mean(k, 0), s.mean(k, 1));
    const boost::math::non_central_chi_squared ncx2(2.0, distance * distance / (sg * sg));
    const double p_ko = boost::math::cdf(ncx2, ko.radius * ko.radius / (sg * sg));
    const double p_co = boost::math::cdf(boost::math::complement(standard, (40.0 - s.mean(k, 0)) / sg));
    const std::pair<ConstraintResult*, std::pair<double, double>> rows[] = {{&ko, {p_ko, distance - ko.radius}},
                                                                            {&co, {p_co, 40.0 - s.mean(k, 0)}}};
    for (const auto& [c, values] : rows) {
      c->pointwise_probability[k] = values.first;
      c->pointwise_standard_error[k] = std::sqrt(values.first * (1 - values.first) / double(s.samples));
      c->clearance_mean[k] = values.second;
      c->clearance_std[k] = sg;
      c->clearance_quantile[k] = values.second - z99 * sg;
      c->gaussian_ok.push_back(c->clearance_quantile[k] >= 0);
      c->cantelli_ok.push_back(values.second - cantelli * sg >= 0);
    }
  }
  for (ConstraintResult* c : {&ko, &co}) {
    Eigen::Index worst_p, worst_q;
    c->worst_pointwise_probability = c->pointwise_probability.maxCoeff(&worst_p);
    c->margin = c->clearance_quantile.minCoeff(&worst_q);
    c->worst_time = r.time[std::size_t(worst_q)];
    c->required_backoff = (c->clearance_mean - c->clearance_quantile).maxCoeff();
    // Invented: the path probability exceeds the worst pointwise one by half.
    c->path_probability = std::min(1.0, 1.5 * c->worst_pointwise_probability);
    c->path_standard_error = std::sqrt(c->path_probability * (1 - c->path_probability) / double(s.samples));
    const double p = c->scope == "path" ? c->path_probability : c->worst_pointwise_probability;
    c->within_bound = p <= c->max_probability;
    c->verdict = c->within_bound ? "within its bound" : "exceeds its bound";
  }
  co.reformulation_note = "Cantelli's bound is conservative here: it fails at times where sampling meets the bound.";

  if (with_montecarlo) {
    MonteCarloResult& m = r.montecarlo;
    m.done = true;
    m.runs = 20000;
    m.failed_runs = 0;
    m.confidence = 0.95;
    m.seed = 7;
    const CounterRng rng(m.seed);
    m.mean = s.mean;
    m.std = s.std;
    m.mean_standard_error = s.std / std::sqrt(double(m.runs));
    m.std_standard_error = s.std / std::sqrt(2.0 * double(m.runs - 1));
    for (int k = 0; k < T; ++k)
      for (int j = 0; j < 2; ++j) {
        // A realistic Monte Carlo estimate: the exact value plus its sampling error.
        m.mean(k, j) += m.mean_standard_error(k, j) * rng.normal(std::uint64_t(k), std::uint64_t(j));
        m.std(k, j) += m.std_standard_error(k, j) * rng.normal(std::uint64_t(k), std::uint64_t(2 + j));
      }
    m.validation_rmse = Eigen::Vector2d(0.004, 0.005);
    m.validation_relative_rmse = Eigen::Vector2d(0.001, 0.0012);
    for (int run = 0; run < 30; ++run) {
      Eigen::MatrixXd out(T, 2);
      const double x1 = rng.normal(std::uint64_t(1000 + run), 0), x2 = rng.normal(std::uint64_t(1000 + run), 1),
                   x3 = rng.normal(std::uint64_t(1000 + run), 2);
      for (int k = 0; k < T; ++k) {
        out(k, 0) = s.mean(k, 0) + sigma(k) * x1;
        out(k, 1) = s.mean(k, 1) + sigma(k) * (0.8 * x2 + 0.6 * x3);
      }
      m.sample_outputs.push_back(out);
    }
    for (ConstraintResult* c : {&ko, &co}) {
      c->has_montecarlo = true;
      c->montecarlo.pointwise_probability.resize(T);
      for (int k = 0; k < T; ++k)
        c->montecarlo.pointwise_probability[k] =
            double(std::llround(c->pointwise_probability[k] * double(m.runs))) / double(m.runs);
      c->montecarlo.path_violations = std::llround(c->path_probability * double(m.runs));
      c->montecarlo.path_probability = double(c->montecarlo.path_violations) / double(m.runs);
      clopper_pearson_interval(c->montecarlo.path_violations, m.runs, m.confidence, c->montecarlo.path_interval);
      c->agreement = "agree";
    }
    m.agreement = "agree";
    m.joint_path_probability = co.montecarlo.path_probability;
    m.joint_path_interval[0] = co.montecarlo.path_interval[0];
    m.joint_path_interval[1] = co.montecarlo.path_interval[1];
  }
  r.constraints = {ko, co};
  return r;
}

/// A fresh folder under the system temporary folder, removed by its destructor.
struct TemporaryFolder {
  std::filesystem::path path;
  TemporaryFolder() {
    static int counter = 0;
    path = std::filesystem::temp_directory_path() /
           ("sigmatube-result-test-" + std::to_string(::getpid()) + "-" + std::to_string(counter++));
    std::filesystem::create_directories(path);
  }
  ~TemporaryFolder() {
    std::error_code ignored;
    std::filesystem::remove_all(path, ignored);
  }
};

/// Runs `script` with the Debian Python (SIGMATUBE_PYTHON) and returns its
/// standard output; throws if Python exits with an error.
inline std::string run_python(const std::string& script, const std::filesystem::path& folder) {
  const auto file = folder / "check.py";
  std::ofstream(file) << script;
  const std::string command = std::string(SIGMATUBE_PYTHON) + " " + file.string() + " 2>&1";
  std::unique_ptr<FILE, int (*)(FILE*)> pipe(::popen(command.c_str(), "r"), ::pclose);
  if (!pipe) throw std::runtime_error("cannot start python");
  std::string out;
  std::array<char, 4096> buffer;
  while (std::fgets(buffer.data(), int(buffer.size()), pipe.get())) out += buffer.data();
  const int status = ::pclose(pipe.release());
  if (status != 0) throw std::runtime_error("python failed: " + out);
  return out;
}

}  // namespace sigmatube::result::testing
