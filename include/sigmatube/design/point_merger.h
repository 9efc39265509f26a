// SPDX-License-Identifier: MIT
#pragma once
// Canonical keys for design points built from one-dimensional rule nodes, so that
// a point produced by several tensor rules (or several levels) is run once.
#include <map>
#include <vector>

#include <Eigen/Dense>

// Layer design/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::design {

/// Merges points given as per-dimension node values into canonical keys: two
/// values of one dimension are the same node when they differ by at most
/// 1e-12·max(1, |x|). Shared by every design that must run each point once.
class PointMerger {
 public:
  explicit PointMerger(int dimension);
  /// Row of the point in the merged list, appending it when new.
  int insert(const double* point);
  /// Row of the point, or −1 when absent.
  int find(const double* point) const;
  int size() const { return static_cast<int>(rows_.size()); }
  /// The merged points, [size(), d], each as first inserted.
  Eigen::MatrixXd points() const;

 private:
  // Node id of a coordinate value in dimension k, or −1 when no node is within tolerance.
  int node_id(int k, double x) const;
  int dimension_;
  std::vector<std::map<double, int>> nodes_;  // per dimension: canonical value → node id
  std::map<std::vector<int>, int> rows_;      // node ids → row
  std::vector<double> coordinates_;           // row-major, as first inserted
};

}  // namespace sigmatube::design
