// SPDX-License-Identifier: MIT
#pragma once
// Reads a case file and builds everything an analysis needs: the model, the
// closed loop (plan + controller), the germ and the constraints. Every user
// mistake surfaces here as an InputError naming file, line and key, before any
// computation starts and before any output file is touched.
#include <memory>
#include <string>
#include <vector>

#include "sigmatube/casefile/case_options.h"
#include "sigmatube/constraints/constraint.h"
#include "sigmatube/germ/germ.h"
#include "sigmatube/model/closed_loop.h"
#include "sigmatube/model/model.h"

// Layer app/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::app {

struct LoadedCase {
  casefile::CaseOptions options;
  std::string case_sha256;  // of the case file's bytes
  // Of everything the results depend on besides seeds and command-line sizes: the
  // case file, every file it references (the plan) and the values a suite entry may
  // override (runs, samples, bounds). See inputs_manifest().
  std::string inputs_sha256;
  std::shared_ptr<const model::Model> model;
  std::unique_ptr<model::ClosedLoop> closed_loop;
  std::unique_ptr<germ::Germ> germ;
  std::vector<constraints::Constraint> constraints;
};

/// Throws InputError for anything wrong with the case, its plan or its expressions.
LoadedCase load_case(const std::string& path);

/// The same from options already read (e.g. a suite entry with its overrides
/// applied, casefile::read_suite_case). `options.path` must name the case file:
/// its bytes give case_sha256, and the plan was resolved against its folder.
LoadedCase load_case(casefile::CaseOptions options);

/// The text whose SHA-256 is inputs_sha256, one line each, in this order:
///   "sigmatube inputs 1", "case <sha256 of the case file>", "plan <sha256 of the plan file>"
///   (when the case names one), "montecarlo.runs <n>", "surrogate.samples <n>",
///   "constraint.<name>.max_probability <%.17g>" per constraint in file order.
std::string inputs_manifest(const casefile::CaseOptions& options);

/// What `check` prints: model, dimensions, plan span, controller, uncertain
/// inputs, constraints, and the number of model runs the design needs.
std::string describe_case(const LoadedCase& loaded);

}  // namespace sigmatube::app
