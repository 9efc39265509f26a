// SPDX-License-Identifier: MIT
#pragma once
// Checks the names a case file uses against the model it builds.
#include <string>
#include <vector>

#include "sigmatube/casefile/case_options.h"

// Layer casefile/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::casefile {

/// Checks, each with the location of the entry and the nearest valid name suggested:
///   - built-in parameter overrides ([model] keys / model.parameters) name a parameter;
///   - derived output names do not reuse a state, input or parameter name;
///   - applies_to targets: initial.<state>, disturbance.<state>, parameter.<parameter>,
///     input_scale.<input>, input_bias.<input>;
///   - constraint `position` names are outputs (states or derived outputs); an
///     input-limit's `input` is an input;
///   - [control] limits name inputs; q has one weight per state, r one per input;
///     gain has one row per input and one column per state.
/// `outputs` lists every output name (states first, then derived outputs).
/// @throws InputError on the first problem found.
void validate_against_model(const CaseOptions& options, const std::vector<std::string>& states,
                            const std::vector<std::string>& inputs, const std::vector<std::string>& parameters,
                            const std::vector<std::string>& outputs);

}  // namespace sigmatube::casefile
