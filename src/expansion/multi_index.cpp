// SPDX-License-Identifier: MIT
#include "sigmatube/expansion/multi_index.h"

#include <algorithm>
#include <cmath>
#include <functional>
#include <map>
#include <numeric>
#include <stdexcept>

namespace sigmatube::expansion {
namespace {

// Tolerance on ‖α‖_q ≤ p: the q-th power sums of integers are computed with
// pow, whose last-ulp error must not drop an index lying exactly on the boundary.
constexpr double kQNormSlack = 1e-10;

bool graded_less(const std::vector<int>& x, const std::vector<int>& y) {
  const int sx = std::accumulate(x.begin(), x.end(), 0), sy = std::accumulate(y.begin(), y.end(), 0);
  if (sx != sy) return sx < sy;
  return x > y;  // lexicographically larger first: (1,0) before (0,1)
}

}  // namespace

MultiIndexSet graded(const std::vector<std::vector<int>>& rows, int dimension) {
  std::vector<std::vector<int>> sorted = rows;
  std::sort(sorted.begin(), sorted.end(), graded_less);
  sorted.erase(std::unique(sorted.begin(), sorted.end()), sorted.end());
  MultiIndexSet set(static_cast<Eigen::Index>(sorted.size()), dimension);
  for (std::size_t r = 0; r < sorted.size(); ++r) {
    if (static_cast<int>(sorted[r].size()) != dimension) throw std::logic_error("graded: row of wrong length");
    for (int k = 0; k < dimension; ++k) set(static_cast<Eigen::Index>(r), k) = sorted[r][k];
  }
  return set;
}

MultiIndexSet hyperbolic_set(int dimension, int degree, double q) {
  if (dimension < 0 || degree < 0) throw std::logic_error("hyperbolic_set: negative size");
  if (!(q > 0.0 && q <= 1.0)) throw std::logic_error("hyperbolic_set: q must lie in (0, 1]");
  std::vector<std::vector<int>> rows;
  std::vector<int> alpha(dimension, 0);
  const double bound = std::pow(static_cast<double>(degree), q) * (1.0 + kQNormSlack);
  std::function<void(int, int, double)> recurse = [&](int k, int total, double qsum) {
    if (k == dimension) {
      rows.push_back(alpha);
      return;
    }
    for (int a = 0; total + a <= degree; ++a) {
      const double next = qsum + (a == 0 ? 0.0 : std::pow(static_cast<double>(a), q));
      if (q < 1.0 && next > bound) break;
      alpha[k] = a;
      recurse(k + 1, total + a, next);
    }
    alpha[k] = 0;
  };
  recurse(0, 0, 0.0);
  return graded(rows, dimension);
}

MultiIndexSet total_degree_set(int dimension, int degree) { return hyperbolic_set(dimension, degree, 1.0); }

bool is_downward_closed(const MultiIndexSet& set) {
  std::map<std::vector<int>, int> present;
  for (Eigen::Index r = 0; r < set.rows(); ++r) {
    std::vector<int> row(set.row(r).data(), set.row(r).data() + set.cols());
    present.emplace(row, 1);
  }
  for (const auto& [row, unused] : present) {
    for (std::size_t k = 0; k < row.size(); ++k) {
      if (row[k] == 0) continue;
      std::vector<int> lower = row;
      --lower[k];
      if (!present.count(lower)) return false;
    }
  }
  return true;
}

std::vector<int> rows_in(const MultiIndexSet& set, const MultiIndexSet& reference) {
  if (set.cols() != reference.cols()) throw std::logic_error("rows_in: dimensions differ");
  std::map<std::vector<int>, int> where;
  for (Eigen::Index r = 0; r < reference.rows(); ++r)
    where.emplace(std::vector<int>(reference.row(r).data(), reference.row(r).data() + reference.cols()),
                  static_cast<int>(r));
  std::vector<int> result(set.rows(), -1);
  for (Eigen::Index r = 0; r < set.rows(); ++r) {
    const auto it = where.find(std::vector<int>(set.row(r).data(), set.row(r).data() + set.cols()));
    if (it != where.end()) result[r] = it->second;
  }
  return result;
}

}  // namespace sigmatube::expansion
