// SPDX-License-Identifier: MIT
// Coverage of adaptive importance sampling (importance_sampling.h) over many seeds
// against exact rare-event probabilities of curved limit states: violation inside a
// ball ‖z − c‖ ≤ r in standard-normal space, P = F_ncx2(r²; d, ‖c‖²), the noncentral
// chi-square CDF from SciPy (scipy.stats.ncx2.cdf) at test time. The design point is
// found by HL-RF from the origin, as the pipeline does.
#include "sigmatube/montecarlo/importance_sampling.h"

#include <gtest/gtest.h>

#include "python_reference.h"
#include "sigmatube/core/counter_rng.h"
#include "sigmatube/montecarlo/rare_events.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <string>

namespace sigmatube::montecarlo {
namespace {

struct Ball {
  int dimension;
  double distance;  // ‖c‖, c along (1, 1, …)/√d
  double radius;
};

// Exact probabilities from 1e-5 down to 1e-7 (printed below).
const std::vector<Ball> kBalls = {{3, 4.9, 1.0}, {3, 5.3, 1.0}, {4, 6.0, 1.5}, {3, 5.75, 1.0}};

// Issue 10 targets: 95 % intervals cover in ≥ 90 % of seeds, CoV ≤ 0.15, ≤ 5000 runs.
constexpr double kMinimumCoverage = 0.90;
constexpr double kMaximumCov = 0.15;
constexpr long long kMaximumRuns = 5000;

struct Sweep {
  int covered = 0;
  double worst_cov = 0.0;
  long long most_runs = 0;
};

// Adaptive estimates for seeds first_seed, first_seed + 1, …: counts the intervals that
// cover `exact`; with check_targets, each estimate must meet the targets above.
Sweep sweep_seeds(const MixtureProposal& proposal, const ViolationIndicator& indicator, double exact, int n_seeds,
                  unsigned long long first_seed, const std::string& label, bool check_targets) {
  Sweep sweep;
  for (int s = 0; s < n_seeds; ++s) {
    ImportanceSamplingOptions options;
    options.samples = kMaximumRuns;
    options.cov_target = 0.1;
    options.seed = first_seed + static_cast<unsigned long long>(s);
    options.threads = 2;
    const auto r = importance_sample(proposal, indicator, options);
    if (check_targets) {
      EXPECT_TRUE(r.converged) << label << " seed " << s << ": CoV " << r.coefficient_of_variation;
      EXPECT_LE(r.samples, kMaximumRuns);
      EXPECT_LE(r.coefficient_of_variation, kMaximumCov);
    }
    sweep.worst_cov = std::max(sweep.worst_cov, r.coefficient_of_variation);
    sweep.most_runs = std::max(sweep.most_runs, r.samples);
    if (r.lower <= exact && exact <= r.upper) ++sweep.covered;
  }
  return sweep;
}

TEST(RareEventCoverage, IntervalsCoverNoncentralChiSquareProbabilities) {
  std::string program = "from scipy.stats import ncx2\n";
  for (const auto& b : kBalls)
    program += "print(repr(ncx2.cdf(" + std::to_string(b.radius * b.radius) + ", " + std::to_string(b.dimension) + ", " +
               std::to_string(b.distance * b.distance) + ")))\n";
  const std::vector<double> exact = test::python_numbers(program);
  ASSERT_EQ(exact.size(), kBalls.size());
  const int n_seeds = std::getenv("SIGMATUBE_SANITIZED") ? 5 : 30;
  int cases = 0, covered = 0;
  for (std::size_t k = 0; k < kBalls.size(); ++k) {
    const Ball& b = kBalls[k];
    ASSERT_GE(exact[k], 1e-8);
    ASSERT_LE(exact[k], 2e-5);
    const Eigen::VectorXd c = Eigen::VectorXd::Constant(b.dimension, b.distance / std::sqrt(b.dimension));
    const LimitState g = [&](const Eigen::VectorXd& z) { return (z - c).norm() - b.radius; };
    const MostProbablePoint mpp = find_most_probable_point(g, b.dimension);
    ASSERT_TRUE(mpp.converged);
    EXPECT_NEAR(mpp.beta, b.distance - b.radius, 1e-6);  // the ball's nearest point to the origin
    const auto indicator = [&](const Eigen::VectorXd& z, long long, std::string*) { return g(z) <= 0.0 ? 1 : 0; };
    const Sweep sweep = sweep_seeds(MixtureProposal::around(mpp.z), indicator, exact[k], n_seeds, 300,
                                    "ball " + std::to_string(k), true);
    cases += n_seeds;
    covered += sweep.covered;
    std::printf("ball d=%d |c|=%.2f r=%.2f: exact %.4e, covered %d/%d, worst CoV %.3f, most runs %lld\n", b.dimension,
                b.distance, b.radius, exact[k], sweep.covered, n_seeds, sweep.worst_cov, sweep.most_runs);
  }
  const double coverage = static_cast<double>(covered) / cases;
  std::printf("coverage %.3f over %d seeded estimates\n", coverage, cases);
  EXPECT_GE(coverage, kMinimumCoverage);
}

// Two separate failure regions (importance_sampling.h, MixtureProposal): violation in
// either of two balls ‖z − c_k‖ ≤ r on opposite sides of the origin, disjoint, so
// P = F_ncx2(r²; d, ‖c_1‖²) + F_ncx2(r²; d, ‖c_2‖²) exactly (SciPy at test time). The
// design points are found as the pipeline does (find_design_points from a widened
// screen), the proposal is the defensive mixture over them.
struct TwoBalls {
  int dimension;
  double distance[2];  // ‖c_1‖ along (1, 1, …)/√d, ‖c_2‖ along (−1, 1, 0, …)/√2
  double radius;
};
const std::vector<TwoBalls> kTwoBalls = {{3, {4.9, 5.1}, 1.0}, {4, {5.5, 5.9}, 1.5}, {3, {5.0, 5.8}, 1.0}, {4, {5.8, 5.8}, 1.5}};
// Spread of the screening draws and their number, as montecarlo/rare_events.cpp uses them.
constexpr double kScreenSpread = 2.0;
constexpr long long kScreenSize = 20000;

TEST(RareEventCoverage, MixtureIntervalsCoverTwoSeparateRegions) {
  std::string program = "from scipy.stats import ncx2\n";
  for (const auto& b : kTwoBalls)
    program += "print(repr(ncx2.cdf(" + std::to_string(b.radius * b.radius) + ", " + std::to_string(b.dimension) + ", " +
               std::to_string(b.distance[0] * b.distance[0]) + ") + ncx2.cdf(" + std::to_string(b.radius * b.radius) +
               ", " + std::to_string(b.dimension) + ", " + std::to_string(b.distance[1] * b.distance[1]) + ")))\n";
  const std::vector<double> exact = test::python_numbers(program);
  ASSERT_EQ(exact.size(), kTwoBalls.size());
  // The sanitizer pass runs fewer seeds, and not the side-by-side sweep (it checks nothing).
  const bool sanitized = std::getenv("SIGMATUBE_SANITIZED") != nullptr;
  const int n_seeds = sanitized ? 10 : 30;
  int cases = 0, covered = 0, single_covered = 0;
  for (std::size_t k = 0; k < kTwoBalls.size(); ++k) {
    const TwoBalls& b = kTwoBalls[k];
    ASSERT_GE(exact[k], 1e-8);
    ASSERT_LE(exact[k], 2e-5);
    const Eigen::VectorXd c1 = Eigen::VectorXd::Constant(b.dimension, b.distance[0] / std::sqrt(b.dimension));
    Eigen::VectorXd c2 = Eigen::VectorXd::Zero(b.dimension);
    c2[0] = -b.distance[1] / std::sqrt(2.0);
    c2[1] = b.distance[1] / std::sqrt(2.0);
    ASSERT_GT((c1 - c2).norm(), 2.0 * b.radius);  // disjoint: the two probabilities add
    const LimitState g = [&](const Eigen::VectorXd& z) { return std::min((z - c1).norm(), (z - c2).norm()) - b.radius; };
    const CounterRng rng(77);
    Eigen::MatrixXd screen(kScreenSize, b.dimension);
    for (long long i = 0; i < kScreenSize; ++i)
      for (int j = 0; j < b.dimension; ++j) screen(i, j) = kScreenSpread * rng.normal(static_cast<std::uint64_t>(i), j);
    Eigen::VectorXd g_screen(kScreenSize);
    for (long long i = 0; i < kScreenSize; ++i) g_screen[i] = g(screen.row(i).transpose());
    const auto points = find_design_points(g, screen, g_screen);
    ASSERT_EQ(points.size(), 2u) << "ball pair " << k;  // one per ball, duplicates merged
    EXPECT_NEAR(points[0].beta, std::min(b.distance[0], b.distance[1]) - b.radius, 1e-6);
    EXPECT_NEAR(points[1].beta, std::max(b.distance[0], b.distance[1]) - b.radius, 1e-6);
    const MixtureProposal proposal = mixture_over(points, kDefensiveShare);  // as the pipeline
    const auto indicator = [&](const Eigen::VectorXd& z, long long, std::string*) { return g(z) <= 0.0 ? 1 : 0; };
    const std::string label = "ball pair " + std::to_string(k);
    const Sweep mixture = sweep_seeds(proposal, indicator, exact[k], n_seeds, 500, label, true);
    // Side by side: one design point, the proposal the pipeline used before.
    const Sweep one = sanitized ? Sweep{}
                                : sweep_seeds(MixtureProposal::around(points[0].z), indicator, exact[k], n_seeds, 500,
                                              label, false);
    cases += n_seeds;
    covered += mixture.covered;
    single_covered += one.covered;
    std::printf("two balls d=%d |c|=%.2f,%.2f: exact %.4e, mixture covered %d/%d (worst CoV %.3f, most runs %lld), "
                "one design point covered %d/%d\n",
                b.dimension, b.distance[0], b.distance[1], exact[k], mixture.covered, n_seeds, mixture.worst_cov,
                mixture.most_runs, one.covered, n_seeds);
  }
  const double coverage = static_cast<double>(covered) / cases;
  std::printf("mixture coverage %.3f over %d seeded estimates\n", coverage, cases);
  if (!sanitized) std::printf("one design point: coverage %.3f\n", static_cast<double>(single_covered) / cases);
  EXPECT_GE(coverage, kMinimumCoverage);
}

// Violation inside the unit ball at distance 5.3 along (1, 1, 1)/√3; its design point
// is the ball's nearest point to the origin, β = 4.3.
const Eigen::Vector3d kBallCentre = Eigen::Vector3d::Constant(5.3 / std::sqrt(3.0));
const Eigen::Vector3d kBallDesignPoint = kBallCentre * (4.3 / 5.3);
int in_ball(const Eigen::VectorXd& z, long long, std::string*) { return (z - kBallCentre).norm() <= 1.0 ? 1 : 0; }

TEST(RareEventCoverage, MixtureWithOneCentreIsTheSingleDesignPointProposal) {
  const Eigen::Vector3d z_star = kBallDesignPoint;
  const ViolationIndicator indicator = in_ball;
  ImportanceSamplingOptions options;
  options.samples = 2000;
  const auto single = importance_sample(z_star, indicator, options);
  const auto mixture = importance_sample(MixtureProposal::around(z_star), indicator, options);
  EXPECT_EQ(single.probability, mixture.probability);
  EXPECT_EQ(single.violations, mixture.violations);
  EXPECT_THROW(importance_sample(MixtureProposal{{z_star}, {0.5}, 0.1}, indicator, options), std::logic_error);
}

TEST(RareEventCoverage, AdaptiveRunsAreTheSameForAnyThreadCount) {
  const Eigen::Vector3d z_star = kBallDesignPoint;
  const ViolationIndicator indicator = in_ball;
  // One design point, and two centres with a defensive share.
  for (const MixtureProposal& q : {MixtureProposal::around(z_star), MixtureProposal{{z_star, -z_star}, {0.6, 0.3}, 0.1}}) {
    ImportanceSamplingOptions options;
    options.samples = 5000;
    options.cov_target = 0.1;
    options.threads = 1;
    const auto one = importance_sample(q, indicator, options);
    options.threads = 2;
    const auto two = importance_sample(q, indicator, options);
    EXPECT_EQ(one.samples, two.samples);
    EXPECT_EQ(one.probability, two.probability);
    EXPECT_EQ(one.coefficient_of_variation, two.coefficient_of_variation);
    EXPECT_EQ(one.samples % options.batch_size, 0);  // stops at a batch boundary
  }
}

TEST(RareEventCoverage, UnreachedTargetIsSaidPlainly) {
  // A proposal far from the failure ball (wrong design point): few hits, CoV target missed.
  ImportanceSamplingOptions options;
  options.samples = 1000;
  options.cov_target = 0.1;
  const auto r = importance_sample(Eigen::VectorXd(Eigen::Vector3d(-4.0, 0.0, 0.0)), in_ball, options);
  EXPECT_FALSE(r.converged);
  EXPECT_EQ(r.samples, 1000);
}

}  // namespace
}  // namespace sigmatube::montecarlo
