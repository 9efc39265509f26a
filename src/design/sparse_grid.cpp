// SPDX-License-Identifier: MIT
#include "sigmatube/design/sparse_grid.h"

#include <algorithm>
#include <cmath>
#include <functional>
#include <stdexcept>

#include "sigmatube/core/error.h"
#include "sigmatube/design/clenshaw_curtis.h"
#include "sigmatube/design/gauss_rule.h"

namespace sigmatube::design {
namespace {

double binomial(int n, int k) {
  double value = 1.0;
  for (int j = 1; j <= k; ++j) value = value * (n - k + j) / j;
  return value;
}

// Calls visit(i) for every i ∈ ℕ^d, i_k ≥ 1, lo ≤ |i| ≤ hi.
void for_each_level_index(int d, int lo, int hi, const std::function<void(const std::vector<int>&)>& visit) {
  std::vector<int> index(d, 1);
  std::function<void(int, int)> recurse = [&](int k, int sum_before) {
    if (k == d) {
      if (sum_before >= lo && sum_before <= hi) visit(index);
      return;
    }
    const int remaining = d - k - 1;  // each later dimension needs at least 1
    for (int l = 1; sum_before + l + remaining <= hi; ++l) {
      index[k] = l;
      recurse(k + 1, sum_before + l);
    }
    index[k] = 1;
  };
  recurse(0, 0);
}

}  // namespace

QuadratureRule sparse_grid_rule(const germ::FamilySpec& spec, int level, bool nested) {
  if (level < 1) throw std::logic_error("sparse_grid_rule: level must be ≥ 1");
  if (nested) {
    if (spec.family != germ::Family::legendre)
      throw InputError(SourceLocation{"", 0, "surrogate.nested"},
                       "nested Clenshaw-Curtis rules exist only for uniform (legendre) germ variables, not " +
                           germ::to_string(spec));
    return clenshaw_curtis_rule(level);
  }
  return gauss_rule(spec, level);
}

SparseGrid build_sparse_grid(const std::vector<germ::FamilySpec>& families, int level, bool nested) {
  const int d = static_cast<int>(families.size());
  if (d == 0) throw std::logic_error("build_sparse_grid: dimension 0");
  if (level < 1) throw std::logic_error("build_sparse_grid: level must be ≥ 1");
  // Validate every family before any work so the error names the first bad one.
  for (const auto& spec : families) (void)sparse_grid_rule(spec, 1, nested);

  std::vector<std::vector<QuadratureRule>> rules(d);  // rules[k][l − 1]
  auto rule = [&](int k, int l) -> const QuadratureRule& {
    auto& list = rules[k];
    while (static_cast<int>(list.size()) < l)
      list.push_back(sparse_grid_rule(families[k], static_cast<int>(list.size()) + 1, nested));
    return list[l - 1];
  };

  SparseGrid grid;
  grid.level = level;
  PointMerger merger(d);
  const int q = level + d - 1;
  std::vector<double> point(d);
  for_each_level_index(d, std::max(d, level), q, [&](const std::vector<int>& index) {
    int sum = 0;
    for (int l : index) sum += l;
    TensorTerm term;
    term.levels = index;
    term.coefficient = ((q - sum) % 2 == 0 ? 1.0 : -1.0) * binomial(d - 1, q - sum);
    long long count = 1;
    for (int k = 0; k < d; ++k) {
      const QuadratureRule& r = rule(k, index[k]);
      term.points_per_dimension.push_back(r.size());
      term.exactness_degree.push_back(r.exactness_degree);
      count *= r.size();
    }
    term.point_index.resize(count);
    term.weights.resize(count);
    std::vector<int> digit(d, 0);
    for (long long j = 0; j < count; ++j) {
      double w = 1.0;
      for (int k = 0; k < d; ++k) {
        const QuadratureRule& r = rule(k, index[k]);
        point[k] = r.nodes[digit[k]];
        w *= r.weights[digit[k]];
      }
      term.point_index[j] = merger.insert(point.data());
      term.weights[j] = w;
      for (int k = 0; k < d; ++k) {  // dimension 0 fastest
        if (++digit[k] < term.points_per_dimension[k]) break;
        digit[k] = 0;
      }
    }
    grid.terms.push_back(std::move(term));
  });

  grid.points = merger.points();
  grid.weights = Eigen::VectorXd::Zero(merger.size());
  for (const TensorTerm& term : grid.terms)
    for (Eigen::Index j = 0; j < term.weights.size(); ++j)
      grid.weights[term.point_index[j]] += term.coefficient * term.weights[j];
  return grid;
}

int sparse_grid_size(const std::vector<germ::FamilySpec>& families, int level, bool nested) {
  return static_cast<int>(build_sparse_grid(families, level, nested).points.rows());
}

}  // namespace sigmatube::design
