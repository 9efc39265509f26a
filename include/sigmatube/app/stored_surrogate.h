// SPDX-License-Identifier: MIT
#pragma once
// The surrogate of a result (as written to and read from a result file), made
// evaluable again: Y(ξ) at any germ points, for scripts that read results.
#include <string>

#include <Eigen/Dense>

#include "sigmatube/expansion/surrogate.h"
#include "sigmatube/result/analysis_result.h"

// Layer app/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::app {

/// The expansion of `result.surrogate` over all (time, output) columns.
/// @throws InputError (key "surrogate", file `result.case_path`) when the result
///   has no surrogate, an unknown germ family, or coefficient shapes that do not
///   match its times, outputs and multi-indices.
expansion::Surrogate stored_surrogate(const result::AnalysisResult& result);

/// Surrogate values at germ points `xi` ([N, d], one row per point, in germ
/// space: the families' standardized variables): [N, T·n_out], column t·n_out + o.
/// @throws InputError when xi has the wrong number of columns.
Eigen::MatrixXd evaluate_stored_surrogate(const expansion::Surrogate& surrogate, const Eigen::MatrixXd& xi);

}  // namespace sigmatube::app
