// SPDX-License-Identifier: MIT
#pragma once
// Quantile tubes: for every (report time, output) column of a surrogate, the
// empirical quantiles of N surrogate samples at chosen levels,
//   q_p = x_(⌊pN⌋),  the 0-based order statistic of the N sorted values
// (the rule of violation_statistics.h, so a constraint's ε level here and its
// clearance quantile there use the same order statistic), clamped to N − 1.
// Levels always include the median and, per constraint, ε and 1 − ε, plus the
// 2.5 % and 97.5 % band (quantile_levels).
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/expansion/surrogate.h"

namespace sigmatube::constraints {

/// Sorted, distinct levels: 0.025, 0.5, 0.975 and ε, 1 − ε for each ε given.
std::vector<double> quantile_levels(const std::vector<double>& epsilons);

/// Quantiles of every column of `samples` ([N, n_columns]), [n_columns, levels].
Eigen::MatrixXd column_quantiles(const Eigen::MatrixXd& samples, const std::vector<double>& levels);

/// Quantiles of every column of the surrogate at the germ points `points`
/// ([N, d]), [n_times·n_outputs, levels]; columns are evaluated in blocks so that
/// memory stays at N·(P + block) doubles. Deterministic, single pass per block;
/// `threads` splits the column blocks.
Eigen::MatrixXd surrogate_quantiles(const expansion::Surrogate& surrogate, const Eigen::MatrixXd& points,
                                    const std::vector<double>& levels, int threads);

}  // namespace sigmatube::constraints
