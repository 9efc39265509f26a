// SPDX-License-Identifier: MIT
#include "sigmatube/design/leja.h"

#include <cmath>
#include <limits>
#include <stdexcept>

#include <Eigen/Dense>

#include "sigmatube/core/error.h"
#include "sigmatube/design/orthonormal_polynomials.h"

namespace sigmatube::design {
namespace {

// Grid points per search interval: the objective has one local maximum between
// consecutive Leja points, so a grid much finer than the point spacing brackets
// the global one; golden-section search then polishes it.
constexpr int kSearchGrid = 20000;
constexpr int kGoldenSteps = 60;
// Search ranges of the unbounded supports: the weighted objective √ρ·Π|x − x_j|
// for the first ~60 points has its maxima well inside these (the largest Gaussian
// Leja point of 60 points is near 11, Narayan & Jakeman 2014, Fig. 2.1).
constexpr double kHermiteRange = 25.0;

struct Support {
  double low, high;
};

Support support_of(const germ::FamilySpec& spec) {
  switch (spec.family) {
    case germ::Family::hermite: return {-kHermiteRange, kHermiteRange};
    case germ::Family::legendre:
    case germ::Family::jacobi: return {-1.0, 1.0};
    case germ::Family::laguerre: return {0.0, 4.0 * (spec.a + 1.0) + 120.0};
  }
  throw std::logic_error("support_of: unknown family");
}

// log √ρ(x) up to a constant.
double half_log_density(const germ::FamilySpec& spec, double x) {
  switch (spec.family) {
    case germ::Family::hermite: return -0.25 * x * x;
    case germ::Family::legendre: return (x < -1.0 || x > 1.0) ? -std::numeric_limits<double>::infinity() : 0.0;
    case germ::Family::jacobi:
      if (x <= -1.0 || x >= 1.0) return -std::numeric_limits<double>::infinity();
      return 0.5 * (spec.a * std::log1p(-x) + spec.b * std::log1p(x));
    case germ::Family::laguerre:
      if (x <= 0.0) return -std::numeric_limits<double>::infinity();
      return 0.5 * (spec.a * std::log(x) - x);
  }
  throw std::logic_error("half_log_density: unknown family");
}

double mean_of(const germ::FamilySpec& spec) {
  switch (spec.family) {
    case germ::Family::hermite:
    case germ::Family::legendre: return 0.0;
    case germ::Family::jacobi: return (spec.b - spec.a) / (spec.a + spec.b + 2.0);
    case germ::Family::laguerre: return spec.a + 1.0;
  }
  throw std::logic_error("mean_of: unknown family");
}

double objective(const germ::FamilySpec& spec, const std::vector<double>& points, double x) {
  double value = half_log_density(spec, x);
  for (double p : points) {
    const double gap = std::abs(x - p);
    if (gap == 0.0) return -std::numeric_limits<double>::infinity();
    value += std::log(gap);
  }
  return value;
}


// Appends greedy Leja points until there are n.
void extend_leja(const germ::FamilySpec& spec, std::vector<double>& points, int n) {
  if (points.empty()) points.push_back(mean_of(spec));
  const Support s = support_of(spec);
  const double h = (s.high - s.low) / kSearchGrid;
  while (static_cast<int>(points.size()) < n) {
    // The end points of a closed support (legendre) are candidates; open ends are not.
    const bool closed = spec.family == germ::Family::legendre;
    int best = -1;
    double best_value = -std::numeric_limits<double>::infinity();
    for (int i = closed ? 0 : 1; i <= (closed ? kSearchGrid : kSearchGrid - 1); ++i) {
      const double v = objective(spec, points, s.low + h * i);
      if (v > best_value) best_value = v, best = i;
    }
    if (best < 0) throw NumericalError("weighted Leja sequence: no admissible next point");
    double x = s.low + h * best;
    if (!(closed && (best == 0 || best == kSearchGrid))) {
      // Golden-section search on [x − h, x + h] (one local maximum there).
      double a = std::max(s.low, x - h), b = std::min(s.high, x + h);
      const double g = 0.5 * (std::sqrt(5.0) - 1.0);
      double c = b - g * (b - a), d = a + g * (b - a);
      double fc = objective(spec, points, c), fd = objective(spec, points, d);
      for (int it = 0; it < kGoldenSteps; ++it) {
        if (fc > fd) {
          b = d, d = c, fd = fc, c = b - g * (b - a), fc = objective(spec, points, c);
        } else {
          a = c, c = d, fc = fd, d = a + g * (b - a), fd = objective(spec, points, d);
        }
      }
      const double polished = 0.5 * (a + b);
      if (objective(spec, points, polished) >= best_value) x = polished;
    }
    points.push_back(x);
  }
}

}  // namespace

std::vector<double> weighted_leja_points(const germ::FamilySpec& spec, int n) {
  if (n < 1) throw std::logic_error("weighted_leja_points: needs at least one point");
  std::vector<double> points;
  extend_leja(spec, points, n);
  return points;
}

QuadratureRule interpolatory_rule(const germ::FamilySpec& spec, const std::vector<double>& points) {
  const int n = static_cast<int>(points.size());
  if (n < 1) throw std::logic_error("interpolatory_rule: needs at least one point");
  const OrthonormalPolynomials polys(spec, n - 1);
  const Eigen::Map<const Eigen::VectorXd> x(points.data(), n);
  Eigen::MatrixXd v(n, n);  // v[j, k] = ψ_k(x_j)
  polys.evaluate(x, v);
  Eigen::VectorXd e0 = Eigen::VectorXd::Zero(n);
  e0[0] = 1.0;
  const Eigen::FullPivLU<Eigen::MatrixXd> lu(v.transpose());
  if (!lu.isInvertible()) throw NumericalError("interpolatory rule: the Vandermonde matrix is singular");
  QuadratureRule rule;
  rule.nodes = x;
  rule.weights = lu.solve(e0);
  rule.exactness_degree = n - 1;
  return rule;
}

int leja_level_points(int level) {
  if (level < 1) throw std::logic_error("leja_level_points: level must be at least 1");
  return level == 1 ? 1 : 2 * level + 1;
}

int leja_level_degree(int level) { return (leja_level_points(level) - 1) / 2; }

const QuadratureRule& LejaRules::rule(int level) {
  if (level < 1) throw std::logic_error("LejaRules::rule: level must be at least 1");
  while (static_cast<int>(rules_.size()) < level) {
    const int l = static_cast<int>(rules_.size()) + 1;
    const int n = leja_level_points(l);
    extend_leja(spec_, points_, n);
    rules_.push_back(interpolatory_rule(spec_, std::vector<double>(points_.begin(), points_.begin() + n)));
  }
  return rules_[static_cast<std::size_t>(level - 1)];
}

}  // namespace sigmatube::design
