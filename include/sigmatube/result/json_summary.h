// SPDX-License-Identifier: MIT
#pragma once
// Machine-readable summary written by `--json` (RFC 8259 JSON; NaN → null).
#include <string>

#include "sigmatube/result/analysis_result.h"

// Layer result/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::result {

/// One JSON object:
///   { "format": "sigmatube-summary", "version": 1, "title", "case_path",
///     "case_sha256", "inputs_sha256", "created_utc", "tool_version", "seed", "command",
///     "report_times", "time_start", "time_end", "outputs": [...],
///     "surrogate": null | { "method", "germ_dimension", "basis_size",
///        "model_runs", "tolerance_met", "error_estimate": {output: value},
///        "samples", "joint_path_probability", "karhunen_loeve": [...] },
///     "montecarlo": null | { "runs", "failed_runs", "confidence", "seed",
///        "joint_path_probability", "joint_path_interval": [lo, hi],
///        "validation_rmse": {output: value}, "validation_relative_rmse": {...},
///        "agreement", "agreement_cause" },
///     "constraints": [ { "name", "type", "scope", "bound", "window": [a, b],
///        "surrogate": { "path_probability", "path_standard_error",
///           "worst_pointwise_probability", "gate_probability",
///           "gate_standard_error" },
///        "montecarlo": null | { "path_probability", "path_violations",
///           "path_interval": [lo, hi], "gate_probability",
///           "pessimistic_probability", "surrogate_only", "model_only",
///           "paired_difference", "paired_interval": [lo, hi], "mcnemar_p", "holm_p" },
///        "importance_sampling": null | { "runs", "probability",
///           "standard_error", "interval", "effective_sample_size",
///           "design_point_distance", "coefficient_of_variation", "converged" },
///        "margin", "worst_time", "required_backoff", "tolerable_radius",
///        "within_bound", "verdict", "agreement", "agreement_cause" } ],
///     "exit_code": 0|1|3, "exit_verdict": "..." }
/// Numbers that do not exist (NaN) are null.
std::string json_summary(const AnalysisResult& result);

}  // namespace sigmatube::result
