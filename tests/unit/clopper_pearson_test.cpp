// SPDX-License-Identifier: MIT
// Clopper & Pearson (1934) limits against SciPy's beta quantiles, run at test time.
#include "sigmatube/montecarlo/clopper_pearson.h"

#include <gtest/gtest.h>

#include "python_reference.h"

#include <cmath>
#include <cstdio>
#include <memory>
#include <sstream>
#include <string>
#include <vector>

namespace sigmatube::montecarlo {
namespace {

// Two implementations of the inverse incomplete beta function (Boost.Math, SciPy's
// cephes-based incbi) agree to about 1e-14; 1e-10 leaves room for either's tolerance.
constexpr double kAgreement = 1e-10;

std::string run_python(const std::string& code) { return sigmatube::test::python_output(code); }

struct Case {
  long long k, n;
  double confidence;
};

TEST(ClopperPearson, MatchesScipyBetaPpfIncludingZeroAndAllSuccesses) {
  const std::vector<Case> cases = {{0, 10, 0.95},  {10, 10, 0.95},  {3, 10, 0.95},   {0, 20000, 0.95},
                                   {7, 20000, 0.99}, {1, 1, 0.9},   {500, 1000, 0.95}, {19999, 20000, 0.95},
                                   {2, 1000000, 0.95}};
  // scipy.stats.beta.ppf(α/2, k, n−k+1) and beta.ppf(1−α/2, k+1, n−k), the textbook form;
  // the upper one as beta.isf(α/2, k+1, n−k), the same quantile without forming 1 − α/2.
  std::string python = "from scipy.stats import beta\\nfor k,n,c in [";
  for (const auto& c : cases) python += "(" + std::to_string(c.k) + "," + std::to_string(c.n) + "," + std::to_string(c.confidence) + "),";
  python +=
      "]:\\n a=1-c\\n lo=0.0 if k==0 else beta.ppf(a/2,k,n-k+1)\\n hi=1.0 if k==n else beta.isf(a/2,k+1,n-k)\\n "
      "print(repr(lo), repr(hi))";
  const std::string command = "exec('" + python + "')";
  const std::string scipy = run_python(command);
  ASSERT_FALSE(scipy.empty()) << "SciPy not reachable through " << SIGMATUBE_PYTHON;
  std::istringstream in(scipy);
  for (const auto& c : cases) {
    double lower = 0, upper = 0;
    in >> lower >> upper;
    const auto interval = clopper_pearson(c.k, c.n, c.confidence);
    EXPECT_NEAR(interval.lower, lower, kAgreement) << c.k << "/" << c.n;
    EXPECT_NEAR(interval.upper, upper, kAgreement) << c.k << "/" << c.n;
    std::printf("k=%lld n=%lld conf=%.2f: [%.12g, %.12g] |d|=(%.1e, %.1e)\n", c.k, c.n, c.confidence, interval.lower,
                interval.upper, std::abs(interval.lower - lower), std::abs(interval.upper - upper));
  }
}

TEST(ClopperPearson, ZeroSuccessesGiveTheRuleOfThreeScale) {
  // k = 0: upper = 1 − (α/2)^{1/n} = −expm1(ln(α/2)/n) exactly (closed form of the beta quantile with a = 1).
  const auto interval = clopper_pearson(0, 20000, 0.95);
  EXPECT_EQ(interval.lower, 0.0);
  EXPECT_NEAR(interval.upper, -std::expm1(std::log(0.025) / 20000.0), 1e-15);
}

TEST(ClopperPearson, RejectsImpossibleCounts) {
  EXPECT_THROW(clopper_pearson(5, 4, 0.95), std::logic_error);
  EXPECT_THROW(clopper_pearson(1, 4, 1.0), std::logic_error);
}

}  // namespace
}  // namespace sigmatube::montecarlo
