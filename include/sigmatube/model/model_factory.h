// SPDX-License-Identifier: MIT
#pragma once
#include <memory>

#include "sigmatube/casefile/case_options.h"
#include "sigmatube/model/model.h"

// Layer model/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::model {

/// The model a case's [model] table describes: a plugin when `plugin` is set
/// (model/plugin_model.h), a built-in when `builtin` is set (its parameters
/// overridden by name), else an expression model.
/// @throws InputError for an unknown built-in (nearest name suggested), an unknown
///         parameter of a built-in (at that parameter's location), a non-physical
///         parameter value (e.g. mass ≤ 0), any plugin-loading error, or any
///         expression-model error.
std::unique_ptr<Model> make_model(const casefile::ModelOptions& options);

}  // namespace sigmatube::model
