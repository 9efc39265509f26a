// SPDX-License-Identifier: MIT
#include "sigmatube/design/gauss_rule.h"

#include <gtest/gtest.h>

#include <boost/math/quadrature/gauss.hpp>
#include <cmath>
#include <cstdio>
#include <numbers>
#include <stdexcept>
#include <sstream>
#include <vector>

#include "python_reference.h"
#include "sigmatube/core/error.h"

using sigmatube::design::gauss_rule;
using sigmatube::design::QuadratureRule;
using sigmatube::germ::Family;
using sigmatube::germ::FamilySpec;

namespace {

// A&S print 15 decimals: half a unit of the last digit is 5e-16; our rule adds a
// few ulps of its own, so agreement to 1e-14 means "to the printed digits".
constexpr double kPrintedDigits = 1e-14;
// SciPy and Boost compute the same rules independently to near machine precision;
// 1e-13 leaves room for a few ulps of each at nodes up to |ξ| ≈ 6.
constexpr double kReferenceLibrary = 1e-13;
// Moments of Gauss rules with up to 10 points: sums of ≤ 10 positive terms, each
// with a relative error of a few ulps.
constexpr double kMomentRelative = 1e-12;

// Positive nodes and their weights of one row of an A&S table.
struct TableRow {
  int n;
  std::vector<double> x, w;
};

// Checks a symmetric rule against a table of its non-negative nodes.
void expect_matches_table(const QuadratureRule& rule, const TableRow& row, double node_scale, double weight_scale) {
  ASSERT_EQ(rule.size(), row.n);
  const int half = row.n / 2;
  double worst = 0.0;
  for (std::size_t j = 0; j < row.x.size(); ++j) {
    // Table rows run from the smallest non-negative node upward; ascending rule
    // nodes put them at positions (n − 1)/2 + … for odd n and n/2 + … for even n.
    const int position = half + static_cast<int>(j);
    EXPECT_NEAR(rule.nodes[position], row.x[j] * node_scale, kPrintedDigits) << "n = " << row.n << " node " << j;
    EXPECT_NEAR(rule.weights[position], row.w[j] * weight_scale, kPrintedDigits) << "n = " << row.n << " weight " << j;
    worst = std::max({worst, std::abs(rule.nodes[position] - row.x[j] * node_scale),
                      std::abs(rule.weights[position] - row.w[j] * weight_scale)});
    // Symmetry: the mirrored node has the same weight.
    EXPECT_NEAR(rule.nodes[row.n - 1 - position], -rule.nodes[position], kPrintedDigits);
    EXPECT_NEAR(rule.weights[row.n - 1 - position], rule.weights[position], kPrintedDigits);
  }
  std::printf("[measured] table row n=%d: max abs difference %.3g\n", row.n, worst);
}

}  // namespace

TEST(GaussHermite, MatchesAbramowitzStegunTable25_10) {
  // From memory (A&S Table 25.10): Gauss–Hermite for the weight e^{−x²}, printed
  // to 15 decimals. Probabilists' nodes ξ = √2·x, probability weights w/√π.
  const std::vector<TableRow> table = {
      {2, {0.707106781186548}, {0.886226925452758}},
      {3, {0.0, 1.224744871391589}, {1.181635900603677, 0.295408975150919}},
      {4, {0.524647623275290, 1.650680123885785}, {0.804914090005513, 0.081312835447245}},
      {5, {0.0, 0.958572464613819, 2.020182870456086}, {0.945308720482942, 0.393619323152241, 0.019953242059046}},
      {6, {0.436077411927617, 1.335849074013697, 2.350604973674492},
       {0.724629595224392, 0.157067320322856, 0.004530009905509}},
      {7, {0.0, 0.816287882858965, 1.673551628767471, 2.651961356835233},
       {0.810264617556807, 0.425607252610128, 0.054515582819127, 0.000971781245100}},
      {8, {0.381186990207322, 1.157193712446780, 1.981656756695843, 2.930637420257244},
       {0.661147012558241, 0.207802325814892, 0.017077983007413, 0.000199604072211}},
      {9, {0.0, 0.723551018752838, 1.468553289216668, 2.266580584531843, 3.190993201781528},
       {0.720235215606051, 0.432651559002556, 0.088474527394377, 0.004943624275537, 0.000039606977263}},
      {10, {0.342901327223705, 1.036610829789514, 1.756683649299882, 2.532731674232790, 3.436159118837738},
       {0.610862633735326, 0.240138611082315, 0.033874394455481, 0.001343645746781, 0.000007640432855}},
  };
  for (const auto& row : table) {
    const QuadratureRule rule = gauss_rule({Family::hermite}, row.n);
    // The table's node error (5e-16) grows by √2 in ξ; still inside kPrintedDigits.
    expect_matches_table(rule, row, std::sqrt(2.0), 1.0 / std::sqrt(std::numbers::pi));
  }
}

TEST(GaussLegendre, MatchesAbramowitzStegunTable25_4) {
  // From memory (A&S Table 25.4): Gauss–Legendre on [−1, 1] with weight 1,
  // printed to 15 decimals. Probability weights for U(−1, 1) are w/2.
  const std::vector<TableRow> table = {
      {2, {0.577350269189626}, {1.0}},
      {3, {0.0, 0.774596669241483}, {0.888888888888889, 0.555555555555556}},
      {4, {0.339981043584856, 0.861136311594053}, {0.652145154862546, 0.347854845137454}},
      {5, {0.0, 0.538469310105683, 0.906179845938664}, {0.568888888888889, 0.478628670499366, 0.236926885056189}},
      {6, {0.238619186083197, 0.661209386466265, 0.932469514203152},
       {0.467913934572691, 0.360761573048139, 0.171324492379170}},
      {7, {0.0, 0.405845151377397, 0.741531185599394, 0.949107912342759},
       {0.417959183673469, 0.381830050505119, 0.279705391489277, 0.129484966168870}},
      {8, {0.183434642495650, 0.525532409916329, 0.796666477413627, 0.960289856497536},
       {0.362683783378362, 0.313706645877887, 0.222381034453374, 0.101228536290376}},
      {9, {0.0, 0.324253423403809, 0.613371432700590, 0.836031107326636, 0.968160239507626},
       {0.330239355001260, 0.312347077040003, 0.260610696402935, 0.180648160694857, 0.081274388361574}},
      {10, {0.148874338981631, 0.433395394129247, 0.679409568299024, 0.865063366688985, 0.973906528517172},
       {0.295524224714753, 0.269266719309996, 0.219086362515982, 0.149451349150581, 0.066671344308688}},
  };
  for (const auto& row : table) expect_matches_table(gauss_rule({Family::legendre}, row.n), row, 1.0, 0.5);
}

namespace {

// SciPy's rules as probability weights, one Python start for all of them:
// for each call, its nodes then its weights, printed with 17 digits.
std::vector<std::vector<double>> scipy_rules(const std::vector<std::string>& calls, const std::vector<int>& sizes,
                                             const std::string& total_weight) {
  std::ostringstream program;
  program << "import numpy as np, scipy.special as s\n";
  for (const auto& call : calls)
    program << "x, w = " << call << "\n"
            << "w = w / (" << total_weight << ")\n"
            << "print(' '.join('%.17g' % v for v in np.concatenate([x, w])))\n";
  const std::vector<double> all = sigmatube::test::python_numbers(program.str());
  std::vector<std::vector<double>> result;
  std::size_t offset = 0;
  for (int n : sizes) {
    if (offset + 2 * n > all.size()) throw std::runtime_error("short SciPy output");
    result.emplace_back(all.begin() + offset, all.begin() + offset + 2 * n);
    offset += 2 * n;
  }
  return result;
}

void expect_matches(const QuadratureRule& rule, const std::vector<double>& reference, const std::string& what) {
  const int n = rule.size();
  ASSERT_EQ(static_cast<int>(reference.size()), 2 * n) << what;
  double worst = 0.0;
  for (int j = 0; j < n; ++j) {
    worst = std::max({worst, std::abs(rule.nodes[j] - reference[j]), std::abs(rule.weights[j] - reference[n + j])});
  }
  EXPECT_LE(worst, kReferenceLibrary) << what;
  std::printf("[measured] %s: max abs difference %.3g\n", what.c_str(), worst);
}

}  // namespace

TEST(GaussHermite, MatchesScipyRootsHermitenorm) {
  // Reference: scipy.special.roots_hermitenorm(n), weights / √(2π).
  const std::vector<int> sizes = {2, 3, 5, 8, 10, 15, 20, 30};
  std::vector<std::string> calls;
  for (int n : sizes) calls.push_back("s.roots_hermitenorm(" + std::to_string(n) + ")");
  const auto reference = scipy_rules(calls, sizes, "np.sqrt(2*np.pi)");
  for (std::size_t i = 0; i < sizes.size(); ++i)
    expect_matches(gauss_rule({Family::hermite}, sizes[i]), reference[i], "hermite n=" + std::to_string(sizes[i]));
}

TEST(GaussLegendre, MatchesScipyRootsLegendre) {
  // Reference: scipy.special.roots_legendre(n), weights / 2.
  const std::vector<int> sizes = {2, 3, 5, 8, 10, 15, 20, 30};
  std::vector<std::string> calls;
  for (int n : sizes) calls.push_back("s.roots_legendre(" + std::to_string(n) + ")");
  const auto reference = scipy_rules(calls, sizes, "2.0");
  for (std::size_t i = 0; i < sizes.size(); ++i)
    expect_matches(gauss_rule({Family::legendre}, sizes[i]), reference[i], "legendre n=" + std::to_string(sizes[i]));
}

TEST(GaussJacobi, MatchesScipyRootsJacobi) {
  // Reference: scipy.special.roots_jacobi(n, α, β) for the weight (1−x)^α (1+x)^β,
  // the same convention as our (a, b); weights normalized to sum 1.
  std::vector<std::string> calls;
  std::vector<int> sizes;
  std::vector<FamilySpec> specs;
  for (const auto& [a, b] : std::vector<std::pair<double, double>>{{1.5, -0.5}, {2.0, 3.0}, {0.0, 0.0}}) {
    for (int n : {3, 7, 12}) {
      std::ostringstream call;
      call << "s.roots_jacobi(" << n << ", " << a << ", " << b << ")";
      calls.push_back(call.str());
      sizes.push_back(n);
      specs.push_back({Family::jacobi, a, b});
    }
  }
  const auto reference = scipy_rules(calls, sizes, "w.sum()");
  for (std::size_t i = 0; i < calls.size(); ++i)
    expect_matches(gauss_rule(specs[i], sizes[i]), reference[i], calls[i]);
}

TEST(GaussLegendre, MatchesBoostMathGauss) {
  // Reference: boost::math::quadrature::gauss<double, N> (non-negative abscissae,
  // weights for ∫_{−1}^{1} dx, so /2 for probability weights).
  const auto check = [](auto tag, int n) {
    using G = decltype(tag);
    const QuadratureRule rule = gauss_rule({Family::legendre}, n);
    const auto& x = G::abscissa();
    const auto& w = G::weights();
    double worst = 0.0;
    for (std::size_t j = 0; j < x.size(); ++j) {
      // Boost lists the non-negative nodes in ascending order, starting with 0 for odd N.
      const int position = n / 2 + static_cast<int>(j);
      worst = std::max({worst, std::abs(rule.nodes[position] - x[j]), std::abs(rule.weights[position] - w[j] / 2)});
    }
    EXPECT_LE(worst, kReferenceLibrary) << "N = " << n;
    std::printf("[measured] boost gauss<double, %d>: max abs difference %.3g\n", n, worst);
  };
  check(boost::math::quadrature::gauss<double, 7>{}, 7);
  check(boost::math::quadrature::gauss<double, 10>{}, 10);
  check(boost::math::quadrature::gauss<double, 15>{}, 15);
  check(boost::math::quadrature::gauss<double, 20>{}, 20);
  check(boost::math::quadrature::gauss<double, 30>{}, 30);
}

TEST(GaussJacobi, IntegratesMonomialsUpToDegree2nMinus1AgainstBetaMoments) {
  // Closed form: u = (ξ + 1)/2 ~ Beta(α, β) with α = b + 1, β = a + 1 for the
  // density ∝ (1−ξ)^a (1+ξ)^b, and E[u^m] = Π_{r<m} (α + r)/(α + β + r).
  for (const auto& [a, b] : std::vector<std::pair<double, double>>{{1.5, -0.5}, {2.0, 3.0}, {-0.7, 0.4}}) {
    for (int n = 1; n <= 10; ++n) {
      const QuadratureRule rule = gauss_rule({Family::jacobi, a, b}, n);
      EXPECT_EQ(rule.exactness_degree, 2 * n - 1);
      for (int m = 0; m <= 2 * n - 1; ++m) {
        double exact = 1.0;
        for (int r = 0; r < m; ++r) exact *= (b + 1 + r) / (a + b + 2 + r);
        const double approx = (rule.weights.array() * ((rule.nodes.array() + 1.0) / 2.0).pow(m)).sum();
        EXPECT_NEAR(approx / exact, 1.0, kMomentRelative) << "a=" << a << " b=" << b << " n=" << n << " m=" << m;
      }
    }
  }
}

TEST(GaussLaguerre, IntegratesMonomialsUpToDegree2nMinus1AgainstGammaMoments) {
  // Closed form: ξ ~ Gamma(a + 1, 1) has E[ξ^m] = Γ(a + 1 + m)/Γ(a + 1) = Π_{r<m} (a + 1 + r).
  for (double a : {0.0, 2.5, -0.5}) {
    for (int n = 1; n <= 10; ++n) {
      const QuadratureRule rule = gauss_rule({Family::laguerre, a}, n);
      for (int m = 0; m <= 2 * n - 1; ++m) {
        double exact = 1.0;
        for (int r = 0; r < m; ++r) exact *= a + 1 + r;
        const double approx = (rule.weights.array() * rule.nodes.array().pow(m)).sum();
        EXPECT_NEAR(approx / exact, 1.0, kMomentRelative) << "a=" << a << " n=" << n << " m=" << m;
      }
    }
  }
}

TEST(GaussLaguerre, MatchesScipyRootsGenlaguerre) {
  // Reference: scipy.special.roots_genlaguerre(n, a), weights / Γ(a + 1).
  std::vector<std::string> calls;
  std::vector<int> sizes;
  std::vector<double> exponents;
  for (double a : {0.0, 2.5}) {
    for (int n : {3, 8}) {
      std::ostringstream call;
      call << "s.roots_genlaguerre(" << n << ", " << a << ")";
      calls.push_back(call.str());
      sizes.push_back(n);
      exponents.push_back(a);
    }
  }
  const auto all = scipy_rules(calls, sizes, "w.sum()");
  for (std::size_t i = 0; i < calls.size(); ++i) {
    {
      const int n = sizes[i];
      const std::vector<double>& reference = all[i];
      const std::string call_text = calls[i];
      const QuadratureRule rule = gauss_rule({Family::laguerre, exponents[i]}, n);
      // Laguerre nodes reach ~20 for n = 8; compare relative to the node size.
      for (int j = 0; j < n; ++j) {
        EXPECT_NEAR(rule.nodes[j], reference[j], kReferenceLibrary * std::max(1.0, reference[j])) << call_text;
        EXPECT_NEAR(rule.weights[j], reference[n + j], kReferenceLibrary) << call_text;
      }
    }
  }
}

TEST(GaussRule, RejectsExponentsAtOrBelowMinusOne) {
  EXPECT_THROW(gauss_rule({Family::jacobi, -1.0, 0.0}, 3), sigmatube::InputError);
  EXPECT_THROW(gauss_rule({Family::laguerre, -1.5}, 3), sigmatube::InputError);
}
