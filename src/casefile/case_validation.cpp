// SPDX-License-Identifier: MIT
#include "sigmatube/casefile/case_validation.h"

#include <algorithm>

#include "sigmatube/casefile/nearest_name.h"

namespace sigmatube::casefile {
namespace {

bool contains(const std::vector<std::string>& names, const std::string& name) {
  return std::find(names.begin(), names.end(), name) != names.end();
}

void require_name(const std::string& name, const std::vector<std::string>& names, const std::string& what,
                  const SourceLocation& where) {
  if (contains(names, name)) return;
  const std::string list = names.empty() ? std::string("the model has none") : "the model has: " + join_names(names);
  throw InputError(where, "unknown " + what + " '" + name + "'" + did_you_mean(name, names) + "; " + list);
}

std::string count(std::size_t n, const char* what) { return std::to_string(n) + " " + what; }

}  // namespace

void validate_against_model(const CaseOptions& options, const std::vector<std::string>& states,
                            const std::vector<std::string>& inputs, const std::vector<std::string>& parameters,
                            const std::vector<std::string>& outputs) {
  const ModelOptions& model = options.model;
  if (!model.builtin.empty()) {
    for (const NamedValue& p : model.parameters)
      if (!contains(parameters, p.name))
        throw InputError(p.where, "'" + p.name + "' is not a parameter of built-in model '" + model.builtin + "'" +
                                      did_you_mean(p.name, parameters) + "; its parameters: " +
                                      (parameters.empty() ? std::string("none") : join_names(parameters)));
    for (const NamedExpression& o : model.outputs)
      if (contains(states, o.name) || contains(inputs, o.name) || contains(parameters, o.name))
        throw InputError(o.where, "output name '" + o.name + "' is already a name of built-in model '" +
                                      model.builtin + "'");
  }

  for (const UncertainOptions& u : options.uncertain) {
    const SourceLocation where = u.key_where.of("applies_to", u.where);
    for (const std::string& target : u.applies_to) {
      const auto dot = target.find('.');
      if (dot == std::string::npos)
        throw std::logic_error("validate_against_model: applies_to target without a kind: " + target);
      const std::string kind = target.substr(0, dot);
      const std::string name = target.substr(dot + 1);
      if (kind == "initial" || kind == "disturbance") require_name(name, states, "state", where);
      else if (kind == "parameter") require_name(name, parameters, "parameter", where);
      else if (kind == "input_scale" || kind == "input_bias") require_name(name, inputs, "input", where);
      else throw std::logic_error("validate_against_model: unexpected target kind " + kind);
    }
  }

  for (const ConstraintOptions& c : options.constraints) {
    for (const std::string& name : c.position)
      require_name(name, outputs, "output", c.key_where.of("position", c.where));
    if (c.type == ConstraintKind::input_limit) require_name(c.input, inputs, "input", c.key_where.of("input", c.where));
  }

  if (options.tube)
    for (const std::string& name : options.tube->position)
      require_name(name, states, "state", options.tube->key_where.of("position", options.tube->where));

  const ControlOptions& control = options.control;
  for (const InputLimit& limit : control.limits) require_name(limit.input, inputs, "input", limit.where);
  if (control.law == ControlLaw::lqr) {
    if (control.q.size() != states.size())
      throw InputError(control.key_where.of("q", control.where),
                       "must have one weight per state (" + count(states.size(), "states") + ": " + join_names(states) +
                           "), got " + std::to_string(control.q.size()));
    if (control.r.size() != inputs.size())
      throw InputError(control.key_where.of("r", control.where),
                       "must have one weight per input (" + count(inputs.size(), "inputs") + ": " + join_names(inputs) +
                           "), got " + std::to_string(control.r.size()));
  }
  if (control.law == ControlLaw::gain) {
    const SourceLocation where = control.key_where.of("gain", control.where);
    if (control.gain.size() != inputs.size())
      throw InputError(where, "must have one row per input (" + count(inputs.size(), "inputs") + "), got " +
                                  std::to_string(control.gain.size()) + " rows");
    for (const auto& row : control.gain)
      if (row.size() != states.size())
        throw InputError(where, "must have one column per state (" + count(states.size(), "states") + "), got " +
                                    std::to_string(row.size()) + " columns");
  }
}

}  // namespace sigmatube::casefile
