// SPDX-License-Identifier: MIT
#include "sigmatube/model/plugin_model.h"

#include <dlfcn.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <set>

#include "sigmatube/casefile/nearest_name.h"
#include "sigmatube/core/error.h"
#include "sigmatube/model/expression_model.h"

namespace sigmatube::model {

PluginModel::PluginModel(const casefile::ModelOptions& options) : file_(options.plugin) {
  SourceLocation where = options.key_where.of("plugin", options.where);
  if (where.key.empty() || where.key == "model") where.key = "model.plugin";
  auto fail = [&](const std::string& message) -> void { throw InputError(where, message); };

  // dlopen searches the library path for a name without '/': always pass a path.
  const std::string path = std::filesystem::absolute(options.plugin_path.empty() ? options.plugin : options.plugin_path).string();
  dlerror();
  void* handle = dlopen(path.c_str(), RTLD_NOW | RTLD_LOCAL);
  if (handle == nullptr) {
    const char* why = dlerror();
    fail("cannot load model plugin '" + options.plugin + "': " + (why ? why : "unknown reason"));
  }
  library_ = std::shared_ptr<void>(handle, [](void* h) { dlclose(h); });
  dlerror();
  void* symbol = dlsym(handle, SIGMATUBE_MODEL_ENTRY_NAME);
  if (symbol == nullptr)
    fail("model plugin '" + options.plugin + "' does not export " SIGMATUBE_MODEL_ENTRY_NAME "() (see sigmatube/model_plugin.h)");
  const auto entry = reinterpret_cast<sigmatube_model_entry>(symbol);
  description_ = entry();
  const sigmatube_model* d = description_;
  if (d == nullptr) fail("model plugin '" + options.plugin + "': " SIGMATUBE_MODEL_ENTRY_NAME "() returned null");
  if (d->abi_version != SIGMATUBE_MODEL_ABI_VERSION)
    fail("model plugin '" + options.plugin + "' was built for model ABI version " + std::to_string(d->abi_version) +
         ", this sigmatube reads version " + std::to_string(SIGMATUBE_MODEL_ABI_VERSION) + " (rebuild it against this model_plugin.h)");
  if (d->n_states < 1) fail("model plugin '" + options.plugin + "': n_states must be ≥ 1, got " + std::to_string(d->n_states));
  if (d->n_inputs < 0) fail("model plugin '" + options.plugin + "': n_inputs must be ≥ 0, got " + std::to_string(d->n_inputs));
  if (d->n_parameters < 0)
    fail("model plugin '" + options.plugin + "': n_parameters must be ≥ 0, got " + std::to_string(d->n_parameters));
  if (d->rhs == nullptr) fail("model plugin '" + options.plugin + "': rhs is null");

  std::set<std::string> seen{"t"};
  auto read_names = [&](const char* const* names, int count, const char* what, std::vector<std::string>& out) {
    if (count > 0 && names == nullptr)
      fail("model plugin '" + options.plugin + "': " + what + "_names is null but n_" + what + "s = " + std::to_string(count));
    for (int i = 0; i < count; ++i) {
      const char* name = names[i];
      if (name == nullptr || !casefile::is_identifier(name))
        fail("model plugin '" + options.plugin + "': " + what + " name " + std::to_string(i) + " " +
             (name ? "'" + std::string(name) + "'" : std::string("(null)")) +
             " is not a valid name (letters, digits and _, not starting with a digit)");
      if (std::string(name) == "t") fail("model plugin '" + options.plugin + "': " + what + " name 't' is reserved for time");
      if (!seen.insert(name).second)
        fail("model plugin '" + options.plugin + "': " + what + " name '" + name + "' is used twice");
      out.emplace_back(name);
    }
  };
  read_names(d->state_names, d->n_states, "state", states_);
  read_names(d->input_names, d->n_inputs, "input", inputs_);
  read_names(d->parameter_names, d->n_parameters, "parameter", parameter_names_);
  if (d->n_parameters > 0 && d->parameter_defaults == nullptr)
    fail("model plugin '" + options.plugin + "': parameter_defaults is null but n_parameters = " + std::to_string(d->n_parameters));
  parameters_.resize(d->n_parameters);
  for (int i = 0; i < d->n_parameters; ++i) {
    parameters_(i) = d->parameter_defaults[i];
    if (!std::isfinite(parameters_(i)))
      fail("model plugin '" + options.plugin + "': default of parameter '" + parameter_names_[static_cast<std::size_t>(i)] +
           "' is not finite");
  }

  for (const auto& parameter : options.parameters) {
    SourceLocation at = parameter.where;
    if (at.key.empty()) at.key = "model.parameters." + parameter.name;
    const auto it = std::find(parameter_names_.begin(), parameter_names_.end(), parameter.name);
    if (it == parameter_names_.end())
      throw InputError(at, "unknown parameter '" + parameter.name + "' of model plugin '" + options.plugin + "'" +
                               casefile::suggestion_or_list(parameter.name, parameter_names_));
    if (!std::isfinite(parameter.value)) throw InputError(at, "parameter '" + parameter.name + "' must be finite");
    parameters_(it - parameter_names_.begin()) = parameter.value;
  }

  if (!options.outputs.empty()) {
    // The case's derived outputs are expressions in the plugin's names: an
    // expression model over the same names compiles and evaluates them.
    casefile::ModelOptions expressions;
    expressions.where = options.where;
    expressions.states = states_;
    expressions.inputs = inputs_;
    for (Eigen::Index i = 0; i < parameters_.size(); ++i)
      expressions.parameters.push_back({parameter_names_[static_cast<std::size_t>(i)], parameters_(i), options.where});
    for (const auto& s : states_) expressions.rhs.push_back({s, "0", options.where});
    expressions.outputs = options.outputs;
    outputs_ = std::make_unique<ExpressionModel>(expressions);
  }
}

PluginModel::~PluginModel() = default;

const std::vector<std::string>& PluginModel::derived_output_names() const {
  static const std::vector<std::string> none;
  return outputs_ ? outputs_->derived_output_names() : none;
}

void PluginModel::rhs(double t, const double* x, const double* u, const double* p, double* dxdt) const {
  description_->rhs(t, 1, x, u, p, dxdt, description_->user);
}

void PluginModel::derived_outputs(double t, const double* x, const double* u, const double* p, double* y) const {
  if (outputs_) outputs_->derived_outputs(t, x, u, p, y);
}

}  // namespace sigmatube::model
