// SPDX-License-Identifier: MIT
// Randomized quasi-Monte Carlo sampling to a target precision: the scrambled
// Sobol points against the net property that Owen's scrambling preserves (Owen,
// Ann. Statist. 25, 1997, Proposition 1), and the stopping rule's standard
// errors against an exact probability (noncentral chi-square, Boost.Math) over
// many independent scrambles.
#include <gtest/gtest.h>

#include <boost/math/distributions/non_central_chi_squared.hpp>
#include <boost/math/distributions/students_t.hpp>

#include <cmath>
#include <cstdio>
#include <vector>

#include "sigmatube/constraints/violation_statistics.h"
#include "sigmatube/core/scrambled_sobol.h"
#include "sphere_constraint.h"

namespace sigmatube {
namespace {

// The first 2^m Sobol points form a (t, m, s)-net; the first two coordinates a
// (0, m, 2)-net: every box [a/2^k, (a+1)/2^k) × [b/2^(m−k), (b+1)/2^(m−k)) holds
// exactly one point, in every coordinate alone every interval of length 2^−m
// holds one. Nested uniform scrambling keeps both (Owen 1997).
TEST(ScrambledSobol, FirstPointsFormANetAfterScrambling) {
  constexpr int m = 10, d = 5;
  constexpr std::size_t N = std::size_t{1} << m;
  for (std::uint64_t replicate : {0u, 1u, 7u}) {
    const ScrambledSobol sobol(d, 20261203, replicate);
    std::vector<double> u(N * d);
    sobol.uniforms(0, N, u.data());
    for (int j = 0; j < d; ++j) {
      std::vector<int> hits(N, 0);
      for (std::size_t i = 0; i < N; ++i) ++hits[static_cast<std::size_t>(u[i * d + j] * N)];
      for (std::size_t c = 0; c < N; ++c) ASSERT_EQ(hits[c], 1) << "dimension " << j << " cell " << c;
    }
    for (int k : {3, 5, 7}) {
      const std::size_t a_cells = std::size_t{1} << k, b_cells = N / a_cells;
      std::vector<int> hits(N, 0);
      for (std::size_t i = 0; i < N; ++i)
        ++hits[static_cast<std::size_t>(u[i * d] * a_cells) * b_cells + static_cast<std::size_t>(u[i * d + 1] * b_cells)];
      for (std::size_t c = 0; c < N; ++c) ASSERT_EQ(hits[c], 1) << "k " << k << " box " << c;
    }
  }
}

TEST(ScrambledSobol, PointsDependOnIndexOnlyAndReplicatesDiffer) {
  const ScrambledSobol a(3, 5, 0), b(3, 5, 1);
  std::vector<double> whole(150 * 3), part(50 * 3), other(150 * 3);
  a.uniforms(0, 150, whole.data());
  a.uniforms(100, 50, part.data());
  for (std::size_t k = 0; k < part.size(); ++k) ASSERT_EQ(part[k], whole[300 + k]);
  b.uniforms(0, 150, other.data());
  int same = 0;
  for (std::size_t k = 0; k < whole.size(); ++k) same += whole[k] == other[k];
  EXPECT_EQ(same, 0);
  for (double v : whole) ASSERT_TRUE(v > 0.0 && v < 1.0);
}

casefile::ConstraintOptions sphere(double radius, double epsilon) { return test::keep_out_sphere(radius, epsilon); }

// A Gaussian point N(m, I₃) inside a sphere of radius r about the origin:
// P = F_ncx2(r²; 3, |m|²) (closed form, Boost.Math). Over independent seeds the
// interval p̂ ± t_{0.975, R−1}·s must cover P about 95 % of the time; with 40
// seeds, 33 or more covered has probability above 0.999 at a true 95 % (binomial,
// common practice for a coverage check), while a standard error too small by a
// factor 2 covers about 68 % and fails.
TEST(PrecisionSampling, ReplicateStandardErrorsCoverTheExactProbability) {
  const Eigen::VectorXd times = Eigen::VectorXd::Constant(1, 0.0);
  const Eigen::Vector3d mean(1.2, 0.4, -0.3);
  const double radius = 0.9;
  const boost::math::non_central_chi_squared_distribution<double> ncx2(3.0, mean.squaredNorm());
  const double exact = boost::math::cdf(ncx2, radius * radius);
  const std::vector<constraints::Constraint> list = {constraints::Constraint(sphere(radius, 0.02), {"x", "y", "z"})};
  constraints::PrecisionTarget target;
  target.cap = 1 << 20;
  target.replicates = 16;
  target.first_points = 256;
  target.relative = 0.02;
  target.absolute = 0.05;
  const double t_quantile = boost::math::quantile(boost::math::students_t(target.replicates - 1), 0.975);
  constexpr int kSeeds = 40;
  int covered = 0;
  long long samples = 0;
  double ratio = 0.0;
  for (int seed = 0; seed < kSeeds; ++seed) {
    const auto out = constraints::stream_to_precision(
        list, times, 3, target, 4096, 2, [&](int replicate, long long first, long long count, Eigen::MatrixXd& Y) {
          const ScrambledSobol sobol(3, 1000 + static_cast<std::uint64_t>(seed), static_cast<std::uint64_t>(replicate));
          std::vector<double> z(static_cast<std::size_t>(count) * 3);
          sobol.normals(static_cast<std::uint64_t>(first), static_cast<std::size_t>(count), z.data());
          for (long long i = 0; i < count; ++i)
            for (int k = 0; k < 3; ++k) Y(i, k) = mean[k] + z[static_cast<std::size_t>(i * 3 + k)];
        });
    ASSERT_TRUE(out.target_met) << "seed " << seed;
    const auto& s = out.results.constraints[0];
    // The rule held when it stopped.
    EXPECT_LE(s.path_standard_error, std::max(target.relative * s.path_probability, target.absolute * 0.02) + 1e-15);
    EXPECT_EQ(out.results.samples, out.samples);
    covered += std::abs(s.path_probability - exact) <= t_quantile * s.path_standard_error;
    samples += out.samples;
    ratio += s.path_standard_error / std::sqrt(exact * (1 - exact) / static_cast<double>(out.samples));
  }
  std::printf("exact %.6g: %d of %d covered; mean samples %lld; RQMC s.e. / binomial s.e. at the same N: %.3f\n",
              exact, covered, kSeeds, samples / kSeeds, ratio / kSeeds);
  EXPECT_GE(covered, 33);
}

// Nothing violated: no early stop before the rule of three allows it; a
// samples cap below that ends at the cap, target not met.
TEST(PrecisionSampling, NoViolationStopsOnlyWhenRuleOfThreeAllows) {
  const Eigen::VectorXd times = Eigen::VectorXd::Constant(1, 0.0);
  const std::vector<constraints::Constraint> list = {constraints::Constraint(sphere(0.5, 0.01), {"x", "y", "z"})};
  constraints::PrecisionTarget target;
  target.replicates = 8;
  target.first_points = 64;
  target.absolute = 0.05;  // 3/N ≤ 5e-4 needs N ≥ 6000
  auto far_away = [](int, long long, long long count, Eigen::MatrixXd& Y) {
    for (long long i = 0; i < count; ++i) Y.row(i) << 100.0, 0.0, 0.0;
  };
  target.cap = 100000;
  const auto out = constraints::stream_to_precision(list, times, 3, target, 1000, 1, far_away);
  EXPECT_TRUE(out.target_met);
  EXPECT_EQ(out.samples, 8 * 1024);  // first power-of-two multiple of 8·64 with 3/N ≤ 5e-4
  EXPECT_EQ(out.results.constraints[0].path_violations, 0);
  target.cap = 4000;
  const auto capped = constraints::stream_to_precision(list, times, 3, target, 1000, 2, far_away);
  EXPECT_FALSE(capped.target_met);
  EXPECT_EQ(capped.samples, 8 * 256);
}

}  // namespace
}  // namespace sigmatube
