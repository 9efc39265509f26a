// SPDX-License-Identifier: MIT
#pragma once
// Every coefficient estimator of this library is linear in the model values: a
// design of N runs and a matrix W with
//   C = W · Y,   C [P, n_columns],  Y [N, n_columns] (one row per run),
// so one set of runs gives the coefficients of every (report time, output)
// column in one matrix product.
#include <Eigen/Dense>

#include "sigmatube/expansion/surrogate.h"

// Layer expansion/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::expansion {

struct LinearProjection {
  Eigen::MatrixXd points;   // [N, d] germ points to run
  MultiIndexSet indices;    // [P, d] basis, graded, row 0 = zero index
  Eigen::MatrixXd matrix;   // W, [P, N]
};

}  // namespace sigmatube::expansion
