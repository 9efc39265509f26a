// SPDX-License-Identifier: MIT
#pragma once
// Reads a case file (TOML, docs/case-file.md) into CaseOptions.
#include <string>

#include "sigmatube/casefile/case_options.h"

// Layer casefile/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::casefile {

/// Parses and validates everything that can be checked without building the model:
/// TOML syntax, unknown keys and tables (with the nearest valid key suggested), value
/// types, ranges, enumerations, per-type keys of distributions and constraints,
/// required keys, duplicate names, covariance symmetry and positive definiteness, the
/// applies_to prefix, and that the plan file exists (resolved relative to the case
/// file's folder into PlanOptions::path).
///
/// Names checked against the model (states, inputs, parameters, outputs) are left to
/// validate_against_model (casefile/case_validation.h).
///
/// @throws InputError whose what() is one line "file:line: key: message", with `file`
///   the path as given, `line` 1-based (left out when the problem has no line, e.g. a
///   missing table), and `key` a dotted path: "model.rhs.v", "plan.file",
///   "uncertain[2].covariance", "constraint[1].radius" — entries of [[uncertain]] and
///   [[constraint]] are numbered from 1 in file order.
CaseOptions read_case(const std::string& path);

}  // namespace sigmatube::casefile
