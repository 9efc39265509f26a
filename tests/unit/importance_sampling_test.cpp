// SPDX-License-Identifier: MIT
// Rare-event estimation against the Hasofer–Lind closed form for a linear limit state
// and against SciPy quadrature for a curved one.
#include "sigmatube/montecarlo/importance_sampling.h"

#include <gtest/gtest.h>

#include "python_reference.h"

#include <boost/math/distributions/normal.hpp>
#include <cmath>
#include <cstdio>
#include <memory>

namespace sigmatube::montecarlo {
namespace {

// Central differences of a linear function are exact up to rounding: ~1e-16·|g|/h ≈ 1e-10.
constexpr double kDesignPointTolerance = 1e-6;

const boost::math::normal_distribution<double> kNormal(0.0, 1.0);

std::string run_python(const std::string& code) { return sigmatube::test::python_output(code); }

// The "full model": two report times, one output "g" = limit state (+1 at the second
// time, so the path minimum is the first time's value).
const std::vector<std::string> kOutputs = {"g"};
const Eigen::VectorXd kTimes = (Eigen::VectorXd(2) << 0.0, 1.0).finished();

constraints::Constraint clearance_is_g() {
  casefile::ConstraintOptions o;  // c = (0 − (−1)·g)/1 = g
  o.name = "limit-state";
  o.type = casefile::ConstraintKind::half_space;
  o.position = {"g"};
  o.normal = {-1.0};
  o.offset = 0.0;
  o.max_probability = 1e-5;
  return constraints::Constraint(o, kOutputs);
}

struct Linear {
  Eigen::Vector4d a = (Eigen::Vector4d() << 1.0, 2.0, -1.0, 0.5).finished();
  double beta = boost::math::quantile(boost::math::complement(kNormal, 1e-6));  // Φ⁻¹(1 − 1e-6)
  double operator()(const Eigen::VectorXd& z) const { return beta - a.dot(z) / a.norm(); }
};

ImportanceSamplingResult run_linear(const Eigen::VectorXd& z_star, int threads, bool fail_some) {
  const Linear g;
  ImportanceSamplingOptions options;
  options.samples = 5000;
  options.seed = 11;
  options.threads = threads;
  const auto constraint = clearance_is_g();
  return importance_sample_constraint(MixtureProposal::around(z_star), constraint, kTimes, 1,
                                      [&](const double* z, long long sample, double* out, std::string* error) {
                                        if (fail_some && sample % 500 == 3) {
                                          *error = "diverged";
                                          return false;
                                        }
                                        const Eigen::VectorXd point = Eigen::Map<const Eigen::VectorXd>(z, 4);
                                        out[0] = g(point);
                                        out[1] = g(point) + 1.0;
                                        return true;
                                      },
                                      options);
}

TEST(ImportanceSampling, LinearLimitStateMatchesHasoferLindClosedForm) {
  const Linear g;
  EXPECT_NEAR(g.beta, 4.753424308822899, 1e-9);  // Φ⁻¹(1 − 1e-6), standard normal tables
  const auto mpp = find_most_probable_point(g, 4);
  ASSERT_TRUE(mpp.converged);
  const Eigen::VectorXd exact = g.beta * g.a / g.a.norm();  // z* = β a/‖a‖ (Hasofer & Lind 1974)
  EXPECT_LT((mpp.z - exact).norm(), kDesignPointTolerance);
  EXPECT_NEAR(mpp.beta, g.beta, kDesignPointTolerance);
  // Starting from the closest violating sample of a batch converges to the design point too.
  Eigen::MatrixXd batch(3, 4);
  batch << 6.0, 3.0, 0.0, 0.0,    // a·z/‖a‖ = 4.8 > β: g < 0, ‖z‖² = 45
           9.0, 9.0, 0.0, 0.0,    // g < 0, ‖z‖² = 162
           0.1, 0.0, 0.0, 0.0;    // safe
  Eigen::VectorXd g_batch(3);
  for (int i = 0; i < 3; ++i) g_batch[i] = g(Eigen::VectorXd(batch.row(i).transpose()));
  const auto start = closest_violating_sample(batch, g_batch);
  ASSERT_TRUE(start.has_value());
  EXPECT_EQ(*start, Eigen::VectorXd(batch.row(0).transpose()));
  const auto from_sample = find_most_probable_point(g, 4, start);
  EXPECT_LT((from_sample.z - exact).norm(), kDesignPointTolerance);
  const auto r = run_linear(mpp.z, 2, false);
  EXPECT_EQ(r.successful_samples, 5000);
  EXPECT_LE(r.lower, 1e-6);
  EXPECT_GE(r.upper, 1e-6);
  // The proposal is centred on the design point: about half the samples violate.
  EXPECT_GT(r.violations, 2000);
  EXPECT_GT(r.effective_sample_size, 0.0);
  std::printf("MPP error %.2e (from sample %.2e), p̂ = %.6e ± %.2e, interval [%.4e, %.4e], ESS %.1f, %d iterations\n",
              (mpp.z - exact).norm(), (from_sample.z - exact).norm(), r.probability, r.standard_error, r.lower, r.upper,
              r.effective_sample_size, mpp.iterations);
}

TEST(ImportanceSampling, ThreadCountDoesNotChangeAnyBitAndFailuresAreCounted) {
  const Linear g;
  const Eigen::VectorXd z_star = g.beta * g.a / g.a.norm();
  const auto a = run_linear(z_star, 1, true);
  const auto b = run_linear(z_star, 2, true);
  EXPECT_EQ(a.probability, b.probability);
  EXPECT_EQ(a.standard_error, b.standard_error);
  EXPECT_EQ(a.effective_sample_size, b.effective_sample_size);
  EXPECT_EQ(a.failed_samples, 10);  // samples 3, 503, …, 4503
  EXPECT_EQ(a.successful_samples, 4990);
  ASSERT_FALSE(a.first_failures.empty());
  EXPECT_EQ(a.first_failures[0].first, 3);
}

TEST(ImportanceSampling, CurvedLimitStateMatchesScipyQuadrature) {
  // g(z) = β − z₁ − 0.1 z₂², β = 4.5: design point (β, 0) (Lagrange conditions);
  // p = E[Φ̄(β − 0.1 z₂²)] by scipy.integrate.quad at test time.
  const double beta = 4.5;
  const LimitState g = [beta](const Eigen::VectorXd& z) { return beta - z[0] - 0.1 * z[1] * z[1]; };
  const auto mpp = find_most_probable_point(g, 2, Eigen::Vector2d(5.0, 2.0));
  ASSERT_TRUE(mpp.converged) << mpp.iterations << " iterations, z = " << mpp.z.transpose();
  EXPECT_LT((mpp.z - Eigen::Vector2d(beta, 0.0)).norm(), kDesignPointTolerance);
  const std::string scipy = run_python(
      "from scipy.integrate import quad; from scipy.stats import norm; "
      "print(repr(quad(lambda y: norm.pdf(y)*norm.sf(4.5-0.1*y*y), -15, 15, epsabs=0, epsrel=1e-12)[0]))");
  ASSERT_FALSE(scipy.empty()) << "SciPy not reachable through " << SIGMATUBE_PYTHON;
  const double exact = std::stod(scipy);
  ImportanceSamplingOptions options;
  options.samples = 5000;
  options.seed = 5;
  const auto r = importance_sample(mpp.z, [&](const Eigen::VectorXd& z, long long, std::string*) { return g(z) < 0.0 ? 1 : 0; },
                                   options);
  EXPECT_LE(r.lower, exact);
  EXPECT_GE(r.upper, exact);
  std::printf("curved: MPP error %.2e after %d iterations, exact %.6e, p̂ = %.6e ± %.2e, ESS %.1f\n",
              (mpp.z - Eigen::Vector2d(beta, 0.0)).norm(), mpp.iterations, exact, r.probability, r.standard_error,
              r.effective_sample_size);
}

}  // namespace
}  // namespace sigmatube::montecarlo
