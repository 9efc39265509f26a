// SPDX-License-Identifier: MIT
#include "sigmatube/design/point_merger.h"

#include <algorithm>
#include <cmath>

namespace sigmatube::design {
namespace {

// Nodes of different rules that agree to 1e-12 relative are the same point: Gauss
// nodes from different n never come that close unless they are equal by symmetry
// (ξ = 0), and nested Clenshaw–Curtis nodes agree to the last bit.
constexpr double kNodeMergeTolerance = 1e-12;

}  // namespace

PointMerger::PointMerger(int dimension) : dimension_(dimension), nodes_(dimension) {}

int PointMerger::node_id(int k, double x) const {
  const double tol = kNodeMergeTolerance * std::max(1.0, std::abs(x));
  const auto& nodes = nodes_[k];
  auto it = nodes.lower_bound(x - tol);
  if (it != nodes.end() && it->first <= x + tol) return it->second;
  return -1;
}

int PointMerger::insert(const double* point) {
  std::vector<int> key(dimension_);
  for (int k = 0; k < dimension_; ++k) {
    int id = node_id(k, point[k]);
    if (id < 0) {
      id = static_cast<int>(nodes_[k].size());
      nodes_[k].emplace(point[k], id);
    }
    key[k] = id;
  }
  const auto [it, inserted] = rows_.emplace(std::move(key), static_cast<int>(rows_.size()));
  if (inserted) coordinates_.insert(coordinates_.end(), point, point + dimension_);
  return it->second;
}

int PointMerger::find(const double* point) const {
  std::vector<int> key(dimension_);
  for (int k = 0; k < dimension_; ++k) {
    key[k] = node_id(k, point[k]);
    if (key[k] < 0) return -1;
  }
  const auto it = rows_.find(key);
  return it == rows_.end() ? -1 : it->second;
}

Eigen::MatrixXd PointMerger::points() const {
  Eigen::MatrixXd result(size(), dimension_);
  for (int i = 0; i < size(); ++i)
    for (int k = 0; k < dimension_; ++k) result(i, k) = coordinates_[static_cast<std::size_t>(i) * dimension_ + k];
  return result;
}

}  // namespace sigmatube::design
