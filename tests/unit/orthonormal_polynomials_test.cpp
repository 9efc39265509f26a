// SPDX-License-Identifier: MIT
#include "sigmatube/design/orthonormal_polynomials.h"

#include <gtest/gtest.h>

#include <boost/math/special_functions/factorials.hpp>
#include <boost/math/special_functions/hermite.hpp>
#include <boost/math/special_functions/laguerre.hpp>
#include <boost/math/special_functions/legendre.hpp>
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>

#include "python_reference.h"
#include "sigmatube/design/gauss_rule.h"

using sigmatube::design::OrthonormalPolynomials;
using sigmatube::germ::Family;
using sigmatube::germ::FamilySpec;

namespace {
// E[ψ_i ψ_j] by a rule exact for degree 2·10: sums of ≤ 12 terms of size up to
// ~1e3 (the largest ψ_10 values at the outer nodes) carry errors near 1e-13.
constexpr double kOrthonormality = 1e-12;
// Boost evaluates the classical polynomials by their own recurrences; both
// agree to a few ulps of the value size.
constexpr double kBoostRelative = 1e-12;
constexpr int kMaxDegree = 10;

// Gram matrix G_ij = Σ_j w ψ_i ψ_j of the first kMaxDegree + 1 polynomials.
Eigen::MatrixXd gram(const FamilySpec& spec, const Eigen::VectorXd& nodes, const Eigen::VectorXd& weights) {
  const OrthonormalPolynomials polys(spec, kMaxDegree);
  Eigen::MatrixXd psi(nodes.size(), kMaxDegree + 1);
  polys.evaluate(nodes, psi);
  return psi.transpose() * weights.asDiagonal() * psi;
}

}  // namespace

TEST(OrthonormalPolynomials, AreOrthonormalUnderScipyGaussRules) {
  // Reference rules: SciPy's roots_* with 12 points (exact to degree 23 ≥ 2·10),
  // weights normalized to 1; independent of our Golub–Welsch code.
  struct Case {
    FamilySpec spec;
    std::string call;
  };
  const std::vector<Case> cases = {
      {{Family::hermite}, "s.roots_hermitenorm(12)"},
      {{Family::legendre}, "s.roots_legendre(12)"},
      {{Family::jacobi, 1.5, -0.5}, "s.roots_jacobi(12, 1.5, -0.5)"},
      {{Family::jacobi, 2.0, 3.0}, "s.roots_jacobi(12, 2.0, 3.0)"},
      {{Family::jacobi, -0.5, -0.5}, "s.roots_jacobi(12, -0.5, -0.5)"},
      {{Family::laguerre, 0.0}, "s.roots_genlaguerre(12, 0.0)"},
      {{Family::laguerre, 2.5}, "s.roots_genlaguerre(12, 2.5)"},
  };
  std::ostringstream program;
  program << "import numpy as np, scipy.special as s\n";
  for (const auto& c : cases)
    program << "x, w = " << c.call << "\nprint(' '.join('%.17g' % v for v in np.concatenate([x, w / w.sum()])))\n";
  const std::vector<double> all = sigmatube::test::python_numbers(program.str());
  ASSERT_EQ(all.size(), cases.size() * 24);
  for (std::size_t i = 0; i < cases.size(); ++i) {
    const Eigen::VectorXd nodes = Eigen::Map<const Eigen::VectorXd>(all.data() + 24 * i, 12);
    const Eigen::VectorXd weights = Eigen::Map<const Eigen::VectorXd>(all.data() + 24 * i + 12, 12);
    const Eigen::MatrixXd g = gram(cases[i].spec, nodes, weights);
    const double error = (g - Eigen::MatrixXd::Identity(kMaxDegree + 1, kMaxDegree + 1)).cwiseAbs().maxCoeff();
    EXPECT_LE(error, kOrthonormality) << cases[i].call;
    std::printf("[measured] orthonormality %s: max |G - I| = %.3g\n", cases[i].call.c_str(), error);
  }
}

TEST(OrthonormalPolynomials, AreOrthonormalUnderOwnHigherOrderGaussRule) {
  // Property check with our own 15-point rule (exact to degree 29).
  for (const FamilySpec& spec : {FamilySpec{Family::hermite}, FamilySpec{Family::legendre},
                                 FamilySpec{Family::jacobi, 0.3, 4.0}, FamilySpec{Family::laguerre, 1.0}}) {
    const auto rule = sigmatube::design::gauss_rule(spec, 15);
    const Eigen::MatrixXd g = gram(spec, rule.nodes, rule.weights);
    EXPECT_LE((g - Eigen::MatrixXd::Identity(kMaxDegree + 1, kMaxDegree + 1)).cwiseAbs().maxCoeff(), kOrthonormality)
        << sigmatube::germ::to_string(spec);
  }
}

TEST(OrthonormalPolynomials, MatchClassicalPolynomialsOfBoostMath) {
  // Closed forms: He_n(ξ) = 2^{−n/2} H_n(ξ/√2), ψ_n = He_n/√(n!);
  // Legendre ψ_n = √(2n+1) P_n; Laguerre ψ_n = (−1)^n L_n^{(m)} √(n! Γ(m+1)/Γ(n+m+1)).
  Eigen::VectorXd x(5);
  x << -1.7, -0.3, 0.0, 0.45, 2.2;
  Eigen::VectorXd xl(4);
  xl << 0.1, 0.9, 3.3, 7.5;
  Eigen::MatrixXd values(x.size(), kMaxDegree + 1), lvalues(xl.size(), kMaxDegree + 1);
  OrthonormalPolynomials({Family::hermite}, kMaxDegree).evaluate(x, values);
  for (int n = 0; n <= kMaxDegree; ++n)
    for (int i = 0; i < x.size(); ++i) {
      const double he = std::pow(2.0, -0.5 * n) * boost::math::hermite(n, x[i] / std::sqrt(2.0));
      const double expected = he / std::sqrt(boost::math::factorial<double>(n));
      EXPECT_NEAR(values(i, n), expected, kBoostRelative * std::max(1.0, std::abs(expected))) << "hermite " << n;
    }
  OrthonormalPolynomials({Family::legendre}, kMaxDegree).evaluate(x.cwiseMin(1.0).cwiseMax(-1.0), values);
  for (int n = 0; n <= kMaxDegree; ++n)
    for (int i = 0; i < x.size(); ++i) {
      const double expected = std::sqrt(2.0 * n + 1.0) * boost::math::legendre_p(n, std::clamp(x[i], -1.0, 1.0));
      EXPECT_NEAR(values(i, n), expected, kBoostRelative * std::max(1.0, std::abs(expected))) << "legendre " << n;
    }
  for (unsigned m : {0u, 2u}) {
    OrthonormalPolynomials({Family::laguerre, static_cast<double>(m)}, kMaxDegree).evaluate(xl, lvalues);
    for (int n = 0; n <= kMaxDegree; ++n)
      for (int i = 0; i < xl.size(); ++i) {
        const double norm = std::sqrt(std::tgamma(n + 1.0) * std::tgamma(m + 1.0) / std::tgamma(n + m + 1.0));
        const double expected = (n % 2 ? -1.0 : 1.0) * boost::math::laguerre(n, m, xl[i]) * norm;
        EXPECT_NEAR(lvalues(i, n), expected, kBoostRelative * std::max(1.0, std::abs(expected)))
            << "laguerre m=" << m << " n=" << n;
      }
  }
}

TEST(OrthonormalPolynomials, DerivativeAgreesWithCentralDifference) {
  const OrthonormalPolynomials polys({Family::jacobi, 1.0, 0.5}, 8);
  for (double x : {-0.8, 0.1, 0.7}) {
    double v, d, vp, dp, vm, dm;
    const double h = 1e-6;
    polys.value_and_derivative(8, x, v, d);
    polys.value_and_derivative(8, x + h, vp, dp);
    polys.value_and_derivative(8, x - h, vm, dm);
    // Central difference error O(h²·ψ''') plus roundoff O(eps·ψ/h): ~1e-8 here.
    EXPECT_NEAR(d, (vp - vm) / (2 * h), 1e-6 * std::max(1.0, std::abs(d)));
  }
}
