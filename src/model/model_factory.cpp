// SPDX-License-Identifier: MIT
#include "sigmatube/model/model_factory.h"

#include <algorithm>
#include <cmath>

#include "sigmatube/casefile/nearest_name.h"
#include "sigmatube/model/builtin_models.h"
#include "sigmatube/model/expression_model.h"
#include "sigmatube/model/plugin_model.h"

namespace sigmatube::model {
namespace {

std::unique_ptr<BuiltinModel> make_builtin(const casefile::ModelOptions& options) {
  const std::string& name = options.builtin;
  if (name == "hill-clohessy-wiltshire") return std::make_unique<HillClohessyWiltshire>();
  if (name == "double-integrator-3d") return std::make_unique<DoubleIntegrator3d>();
  if (name == "unicycle") return std::make_unique<Unicycle>();
  if (name == "multirotor-point-mass") return std::make_unique<MultirotorPointMass>();
  SourceLocation where = options.where;
  if (where.key.empty()) where.key = "model.builtin";
  throw InputError(where, "unknown built-in model '" + name + "'" + casefile::suggestion_or_list(name, builtin_model_names()));
}

void check_physical(const BuiltinModel& model, const std::string& parameter, double value, const SourceLocation& where) {
  if (!std::isfinite(value)) throw InputError(where, "parameter '" + parameter + "' must be finite");
  const std::string& name = model.name();
  const bool positive = (name == "multirotor-point-mass" && (parameter == "mass"));
  const bool non_negative = (name == "multirotor-point-mass" && (parameter == "drag_area" || parameter == "gravity")) ||
                            (name == "double-integrator-3d" && parameter == "drag") ||
                            (name == "hill-clohessy-wiltshire" && parameter == "mean_motion");
  if (positive && !(value > 0.0)) throw InputError(where, "parameter '" + parameter + "' must be > 0");
  if (non_negative && !(value >= 0.0)) throw InputError(where, "parameter '" + parameter + "' must be ≥ 0");
}

}  // namespace

std::unique_ptr<Model> make_model(const casefile::ModelOptions& options) {
  if (!options.plugin.empty()) return std::make_unique<PluginModel>(options);
  if (options.builtin.empty()) return std::make_unique<ExpressionModel>(options);
  auto model = make_builtin(options);
  const auto& names = model->parameter_names();
  for (const auto& parameter : options.parameters) {
    SourceLocation where = parameter.where;
    if (where.key.empty()) where.key = "model." + parameter.name;
    const auto it = std::find(names.begin(), names.end(), parameter.name);
    if (it == names.end())
      throw InputError(where, "unknown parameter '" + parameter.name + "' of built-in model '" + model->name() + "'" +
                                  casefile::suggestion_or_list(parameter.name, names));
    check_physical(*model, parameter.name, parameter.value, where);
    model->set_parameter(static_cast<int>(it - names.begin()), parameter.value);
  }
  return model;
}

}  // namespace sigmatube::model
