// SPDX-License-Identifier: MIT
// Monte Carlo driver on a cheap analytic "model" whose probabilities, moments and
// surrogate error are known in closed form.
#include "sigmatube/montecarlo/monte_carlo.h"

#include "sigmatube/core/running_moments.h"

#include <gtest/gtest.h>

#include <boost/math/distributions/normal.hpp>
#include <algorithm>
#include <cmath>
#include <cstring>

namespace sigmatube::montecarlo {
namespace {
using casefile::ConstraintKind;

// Outputs per time t (grid 0..4 s): y = a_t + 2 ξ₁ + ξ₂ (ξ₁, ξ₂ standard normal),
// w = ξ₃ (uniform on [−1, 1]), cmd.u = 0.1 ξ₁.
const Eigen::VectorXd kTimes = Eigen::VectorXd::LinSpaced(5, 0.0, 4.0);
const double kA[5] = {0.0, 0.5, 1.0, 0.7, 0.2};
const std::vector<std::string> kOutputs = {"y", "w", "cmd.u"};
const std::vector<germ::FamilySpec> kFamilies = {{germ::Family::hermite}, {germ::Family::hermite}, {germ::Family::legendre}};

void model(const double* xi, double* out) {
  for (int t = 0; t < 5; ++t) {
    out[t * 3 + 0] = kA[t] + 2.0 * xi[0] + xi[1];
    out[t * 3 + 1] = xi[2];
    out[t * 3 + 2] = 0.1 * xi[0];
  }
}

std::vector<constraints::Constraint> make_constraints() {
  casefile::ConstraintOptions ceiling;  // safe where y ≤ 4
  ceiling.name = "ceiling";
  ceiling.type = ConstraintKind::half_space;
  ceiling.position = {"y"};
  ceiling.normal = {1.0};
  ceiling.offset = 4.0;
  ceiling.max_probability = 0.05;
  casefile::ConstraintOptions band;  // safe where |w| ≤ 0.9, only for t ≥ 2 s
  band.name = "band";
  band.type = ConstraintKind::inside_box;
  band.position = {"w"};
  band.low = {-0.9};
  band.high = {0.9};
  band.window_in_seconds = std::make_pair(2.0, 4.0);
  band.max_probability = 0.2;
  return {constraints::Constraint(ceiling, kOutputs), constraints::Constraint(band, kOutputs)};
}

MonteCarloResult run(int threads, long long runs, bool fail_some, const SurrogateEvaluator& surrogate = nullptr,
                     const Progress& progress = nullptr) {
  casefile::MonteCarloOptions options;
  options.runs = runs;
  options.seed = 99;
  options.confidence = 0.95;
  MonteCarloRunOptions run_options;
  run_options.threads = threads;
  run_options.chunk_size = 50;
  run_options.kept_runs = 10;
  run_options.saturation = {{2, -0.15, 0.15}};
  const auto constraints = make_constraints();
  return run_monte_carlo(options, kFamilies, kTimes, 3, constraints,
                         [&](const double* xi, long long sample, double* out, std::string* error) {
                           if (fail_some && sample % 97 == 5) {
                             *error = "step size underflow in run " + std::to_string(sample);
                             return false;
                           }
                           model(xi, out);
                           return true;
                         },
                         run_options, surrogate, progress);
}

TEST(MonteCarlo, ClopperPearsonIntervalCoversClosedFormPathProbability) {
  constexpr long long kRuns = 4000;
  const auto r = run(2, kRuns, false);
  ASSERT_EQ(r.successful_runs, kRuns);
  const boost::math::normal_distribution<double> normal(0.0, 1.0);
  // y_t = a_t + √5 Z with one Z for all times: path violation ⟺ max a + √5 Z > 4,
  // p = 1 − Φ((4 − 1)/√5) (closed form).
  const double p_ceiling = boost::math::cdf(boost::math::complement(normal, 3.0 / std::sqrt(5.0)));
  EXPECT_TRUE(r.constraints[0].path_interval.contains(p_ceiling))
      << "p = " << p_ceiling << " interval [" << r.constraints[0].path_interval.lower << ", "
      << r.constraints[0].path_interval.upper << "]";
  // |ξ₃| > 0.9 for ξ₃ ~ U(−1, 1): p = 0.1 exactly (closed form).
  EXPECT_TRUE(r.constraints[1].path_interval.contains(0.1));
  // Joint: the two events are independent: 1 − (1 − p₁)(1 − 0.1).
  const double joint = 1.0 - (1.0 - p_ceiling) * 0.9;
  EXPECT_TRUE(r.joint_interval.contains(joint));
  // Moments within 4 standard errors (common practice): E y_0 = 0, sd √5; E w = 0, sd 1/√3.
  EXPECT_NEAR(r.mean(0, 0), 0.0, 4 * r.mean_standard_error(0, 0));
  EXPECT_NEAR(r.std(0, 0), std::sqrt(5.0), 4 * r.std_standard_error(0, 0));
  EXPECT_NEAR(r.mean(3, 1), 0.0, 4 * r.mean_standard_error(3, 1));
  EXPECT_NEAR(r.std(3, 1), 1.0 / std::sqrt(3.0), 4 * r.std_standard_error(3, 1) + 0.01);
  // Saturation |0.1 ξ₁| > 0.15 ⟺ |ξ₁| > 1.5: 2(1 − Φ(1.5)) ≈ 0.134 (closed form).
  const double p_saturation = 2.0 * boost::math::cdf(boost::math::complement(normal, 1.5));
  EXPECT_NEAR(r.saturation_fraction, p_saturation, 4 * std::sqrt(p_saturation * (1 - p_saturation) / kRuns));
  std::printf("ceiling exact %.5f, MC %.5f [%.5f, %.5f]; band MC %.5f [%.5f, %.5f]; saturation %.4f vs %.4f\n",
              p_ceiling, r.constraints[0].path_probability, r.constraints[0].path_interval.lower,
              r.constraints[0].path_interval.upper, r.constraints[1].path_probability,
              r.constraints[1].path_interval.lower, r.constraints[1].path_interval.upper, r.saturation_fraction,
              p_saturation);
  // Outside the band's window the pointwise probability is NaN.
  EXPECT_TRUE(std::isnan(r.constraints[1].pointwise_probability[0]));
  // The kept runs are the first samples, exactly as the model gives them.
  double xi[3], out[15];
  germ_point(kFamilies, 99, 7, xi);
  model(xi, out);
  for (int c = 0; c < 15; ++c) EXPECT_EQ(r.kept_outputs(7, c), out[c]);
}

TEST(MonteCarlo, ThreadCountDoesNotChangeAnyBit) {
  std::vector<long long> done;
  const auto a = run(1, 1234, true, nullptr, [&](long long d, long long total) {
    EXPECT_EQ(total, 1234);
    done.push_back(d);
  });
  const auto b = run(2, 1234, true);
  ASSERT_FALSE(done.empty());
  EXPECT_TRUE(std::is_sorted(done.begin(), done.end()));
  EXPECT_EQ(done.back(), 1234);
  EXPECT_EQ(a.mean, b.mean);
  EXPECT_EQ(a.std, b.std);
  EXPECT_EQ(a.violations.constraints[0].clearance_mean, b.violations.constraints[0].clearance_mean);
  EXPECT_EQ(a.violations.constraints[0].clearance_quantile, b.violations.constraints[0].clearance_quantile);
  EXPECT_EQ(a.violations.constraints[0].path_margin, b.violations.constraints[0].path_margin);
  EXPECT_EQ(a.constraints[0].path_violations, b.constraints[0].path_violations);
  EXPECT_EQ(a.joint_violations, b.joint_violations);
  EXPECT_EQ(a.first_failures, b.first_failures);
}

TEST(MonteCarlo, FailedRunsAreCountedReportedAndExcluded) {
  constexpr long long kRuns = 1000;
  const auto r = run(2, kRuns, true);
  // Samples 5, 102, 199, … fail: ⌈(1000 − 5)/97⌉ = 11 of them.
  EXPECT_EQ(r.failed_runs, 11);
  EXPECT_EQ(r.successful_runs, kRuns - 11);
  EXPECT_EQ(r.violations.samples, kRuns - 11);
  ASSERT_EQ(r.first_failures.size(), 5u);
  EXPECT_EQ(r.first_failures[0].first, 5);
  EXPECT_EQ(r.first_failures[1].first, 102);
  EXPECT_NE(r.first_failures[0].second.find("underflow"), std::string::npos);
  EXPECT_NE(r.summary().find("11 failed"), std::string::npos) << r.summary();
  EXPECT_TRUE(std::isnan(r.kept_outputs(5, 0)));  // a failed kept run is a NaN row
  EXPECT_TRUE(std::isfinite(r.mean(0, 0)));
}

TEST(MonteCarlo, ValidationRmseMatchesAKnownSurrogateError) {
  // Surrogate = model + 0.01 ξ₁² on y only: RMSE_y = 0.01 √E[ξ⁴] = 0.01 √3 (Gaussian
  // fourth moment), other outputs exact.
  constexpr long long kRuns = 4000;
  const auto r = run(2, kRuns, false, [](const Eigen::MatrixXd& xi, Eigen::MatrixXd& values) {
    for (Eigen::Index i = 0; i < xi.rows(); ++i) {
      double out[15];
      const Eigen::VectorXd point = xi.row(i).transpose();
      model(point.data(), out);
      for (int c = 0; c < 15; ++c) values(i, c) = out[c];
      for (int t = 0; t < 5; ++t) values(i, t * 3) += 0.01 * xi(i, 0) * xi(i, 0);
    }
  });
  ASSERT_TRUE(r.validated);
  // Sampling error of the mean of ξ⁴ over 4000 runs: sd(ξ⁴)/√n = √96/√4000 ≈ 0.155, so
  // E ξ⁴ is within ±0.7 of 3 at 4.5 sd; RMSE within 0.01·(√3.7 − √3) ≈ 0.0019.
  EXPECT_NEAR(r.validation_rmse[0], 0.01 * std::sqrt(3.0), 0.002);
  EXPECT_NEAR(r.validation_relative_rmse[0], 0.01 * std::sqrt(3.0) / std::sqrt(5.0), 0.002);
  EXPECT_LT(r.validation_rmse[1], 1e-14);
  std::printf("validation RMSE y %.6f (closed form %.6f), relative %.6f\n", r.validation_rmse[0], 0.01 * std::sqrt(3.0),
              r.validation_relative_rmse[0]);
}

// The accumulation order the header documents, written out serially: runs in
// chunks of `chunk`, each chunk's mean and M2 by two passes over its successful
// runs in run order, chunks folded in by Chan et al.'s merge in chunk order.
// The driver must give exactly these bits, however many chunks a wave holds and
// whichever thread fills a chunk.
struct ReferenceMoments {
  Eigen::MatrixXd mean, std;  // [T, n_out] as MonteCarloResult
};
ReferenceMoments reference_moments(long long runs, long long chunk, bool fail_some) {
  const Eigen::Index columns = 15;
  long long n = 0;
  Eigen::VectorXd mean = Eigen::VectorXd::Zero(columns), m2 = Eigen::VectorXd::Zero(columns);
  for (long long begin = 0; begin < runs; begin += chunk) {
    const long long end = std::min(runs, begin + chunk);
    std::vector<Eigen::VectorXd> ys;
    for (long long i = begin; i < end; ++i) {
      if (fail_some && i % 97 == 5) continue;
      double xi[3];
      Eigen::VectorXd y(columns);
      germ_point(kFamilies, 99, i, xi);
      model(xi, y.data());
      ys.push_back(y);
    }
    if (ys.empty()) continue;
    Eigen::VectorXd chunk_mean = Eigen::VectorXd::Zero(columns), chunk_m2 = Eigen::VectorXd::Zero(columns);
    for (const auto& y : ys) chunk_mean += y;
    chunk_mean /= static_cast<double>(ys.size());
    for (const auto& y : ys) chunk_m2 += (y - chunk_mean).cwiseAbs2();
    const long long nb = static_cast<long long>(ys.size());
    merge_moments(n, mean, m2, nb, chunk_mean, chunk_m2);
    n += nb;
  }
  ReferenceMoments out{Eigen::MatrixXd(5, 3), Eigen::MatrixXd(5, 3)};
  for (int t = 0; t < 5; ++t)
    for (int o = 0; o < 3; ++o) {
      out.mean(t, o) = mean[t * 3 + o];
      out.std(t, o) = std::sqrt(m2[t * 3 + o] / (static_cast<double>(n) - 1.0));
    }
  return out;
}

// 7 450 runs in chunks of 50: 149 chunks, more than two waves of chunks, the
// last chunk short; every 97th run fails. Both paths of the driver (run by run,
// and a row runner filling whole waves), on 1 and 2 threads, with a surrogate
// to validate against.
TEST(MonteCarlo, MomentsFollowTheDocumentedOrderOverManyWavesBitForBit) {
  constexpr long long kRuns = 7450, kChunk = 50;
  const ReferenceMoments expected = reference_moments(kRuns, kChunk, true);
  const SurrogateEvaluator surrogate = [](const Eigen::MatrixXd& xi, Eigen::MatrixXd& values) {
    for (Eigen::Index i = 0; i < xi.rows(); ++i) {
      double out[15];
      const Eigen::VectorXd point = xi.row(i).transpose();
      model(point.data(), out);
      for (int c = 0; c < 15; ++c) values(i, c) = out[c] + 0.05 * xi(i, 1);
    }
  };
  const RunSample run_sample = [](const double* xi, long long sample, double* out, std::string* error) {
    if (sample % 97 == 5) {
      *error = "step size underflow in run " + std::to_string(sample);
      return false;
    }
    model(xi, out);
    return true;
  };
  std::vector<MonteCarloResult> results;
  for (const bool rows : {false, true}) {
    for (const int threads : {1, 2}) {
      casefile::MonteCarloOptions options;
      options.runs = kRuns;
      options.seed = 99;
      MonteCarloRunOptions run_options;
      run_options.threads = threads;
      run_options.chunk_size = kChunk;
      run_options.kept_runs = 10;
      run_options.saturation = {{2, -0.15, 0.15}};
      if (rows) {
        run_options.run_rows = [&](long long begin, long long end, const Eigen::MatrixXd& xi, double* outputs,
                                   std::uint8_t* ok) {
          ASSERT_EQ(xi.rows(), end - begin);
          for (long long i = begin; i < end; ++i) {
            const Eigen::VectorXd point = xi.row(i - begin).transpose();
            std::string error;
            ok[i - begin] = run_sample(point.data(), i, outputs + (i - begin) * 15, &error) ? 1 : 0;
          }
        };
      }
      const auto constraints = make_constraints();
      results.push_back(run_monte_carlo(options, kFamilies, kTimes, 3, constraints, run_sample, run_options, surrogate));
    }
  }
  for (const auto& r : results) {
    // Samples 5, 102, …, 7381 fail: ⌈(7450 − 5)/97⌉ = 77.
    EXPECT_EQ(r.failed_runs, 77);
    EXPECT_EQ(std::memcmp(r.mean.data(), expected.mean.data(), sizeof(double) * 15), 0);
    EXPECT_EQ(std::memcmp(r.std.data(), expected.std.data(), sizeof(double) * 15), 0);
    const auto& first = results.front();
    EXPECT_EQ(r.validation_rmse, first.validation_rmse);
    EXPECT_EQ(r.validation_rmse_by_time, first.validation_rmse_by_time);
    ASSERT_EQ(r.paired.size(), first.paired.size());
    for (std::size_t k = 0; k < r.paired.size(); ++k) {
      EXPECT_EQ(r.paired[k].both, first.paired[k].both);
      EXPECT_EQ(r.paired[k].model_only, first.paired[k].model_only);
      EXPECT_EQ(r.paired[k].surrogate_only, first.paired[k].surrogate_only);
    }
    EXPECT_EQ(r.saturated_runs, first.saturated_runs);
    EXPECT_EQ(r.violations.constraints[0].clearance_mean, first.violations.constraints[0].clearance_mean);
    EXPECT_EQ(r.violations.constraints[1].clearance_quantile, first.violations.constraints[1].clearance_quantile);
    EXPECT_EQ(r.first_failures, first.first_failures);
    EXPECT_TRUE(std::isnan(r.kept_outputs(5, 0)));
    EXPECT_EQ(std::memcmp(r.kept_outputs.data(), first.kept_outputs.data(), sizeof(double) * 5), 0);
  }
  // The surrogate's error is 0.05 ξ₂ on every output: RMSE 0.05·√(mean ξ₂²) over
  // the successful runs; mean ξ₂² = 1 within ±0.066 (4 sd: sd(ξ₂²)/√n = √2/√7373,
  // closed form for a standard normal), so RMSE within 0.05·(√1.066 − 1) ≈ 0.05·0.033.
  constexpr double kRmseTolerance = 0.05 * 0.033;
  EXPECT_NEAR(results.front().validation_rmse[0], 0.05, kRmseTolerance);
}

}  // namespace
}  // namespace sigmatube::montecarlo
