// SPDX-License-Identifier: MIT
#pragma once
// Each analysis stage's own result, entered into the result struct
// (analysis_result.h): the one place where the stages' types map to what a
// result file stores. app::analyze_case calls one of these after each stage.
#include <cstdint>
#include <optional>
#include <vector>

#include "sigmatube/constraints/assessment.h"
#include "sigmatube/constraints/constraint.h"
#include "sigmatube/constraints/violation_statistics.h"
#include "sigmatube/expansion/surrogate.h"
#include "sigmatube/germ/germ.h"
#include "sigmatube/montecarlo/cross_check.h"
#include "sigmatube/montecarlo/rare_events.h"
#include "sigmatube/result/analysis_result.h"

// Layer result/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::result {

/// r.surrogate from the surrogate stage: method, basis, coefficients, moments,
/// Sobol indices, build summary, Karhunen–Loève lines; `samples` is the number
/// of surrogate samples the constraint stage draws. Needs r.time.
void add_surrogate(AnalysisResult& r, const expansion::SurrogateStage& stage, const germ::Germ& germ,
                   long long samples);

/// r.constraints (one per constraint, in order) from the surrogate-sampling
/// statistics and the constraint assessments; with at least one constraint also
/// r.surrogate.joint_path_probability. Needs r.time.
void add_constraints(AnalysisResult& r, const std::vector<constraints::Constraint>& list,
                     const constraints::ViolationResults& sampled,
                     const std::vector<constraints::ConstraintAssessment>& assessments);

/// r.montecarlo and each constraint's Monte Carlo numbers and agreement from the
/// cross-check stage run with `seed`. Needs r.constraints.
void add_cross_check(AnalysisResult& r, const montecarlo::CrossCheck& check, unsigned long long seed);

/// Each constraint's importance-sampling estimate (entries in constraint order,
/// nullopt = none); a full-model estimate governs the verdict of its bound.
void add_rare_events(AnalysisResult& r, const std::vector<std::optional<montecarlo::RareEventEstimate>>& estimates,
                     double cov_target);

/// Per constraint: 1 when the surrogate or the Monte Carlo runs (failed runs counted
/// as violations) already show a probability above the bound.
std::vector<std::uint8_t> violation_shown(const AnalysisResult& r);

/// The bound verdict of every constraint from all evidence (montecarlo/verdict.h):
/// surrogate, Monte Carlo, and a converged rare-event estimate. Call after
/// add_cross_check and add_rare_events; without a cross-check it changes nothing.
void add_verdicts(AnalysisResult& r, double rare_event_threshold);

}  // namespace sigmatube::result
