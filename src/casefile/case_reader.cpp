// SPDX-License-Identifier: MIT
#include "sigmatube/casefile/case_reader.h"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <map>
#include <set>

#include <Eigen/Dense>

#include "sigmatube/casefile/nearest_name.h"
#include "sigmatube/core/output_policy.h"
#include "toml_table.h"

namespace sigmatube::casefile {
namespace {

using detail::format_number;
using detail::line_of;
using detail::TomlTable;
using detail::type_phrase;

bool contains(const std::vector<std::string>& names, const std::string& name) {
  return std::find(names.begin(), names.end(), name) != names.end();
}

std::vector<std::string> concat(std::vector<std::string> a, const std::vector<std::string>& b) {
  for (const auto& x : b)
    if (!contains(a, x)) a.push_back(x);
  return a;
}


// Uncertain and constraint names become HDF5 group names and suite override keys, so
// they use the characters of a TOML bare key only.
std::string entry_name(const TomlTable& t) {
  const std::string name = t.string("name");
  const bool ok = std::all_of(name.begin(), name.end(), [](char c) {
    return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') || c == '_' || c == '-';
  });
  if (!ok) t.fail("name", "'" + name + "' may use only letters, digits, '_' and '-'");
  return name;
}

void require_positive(const TomlTable& t, const std::string& key, double value) {
  if (!(value > 0.0)) t.fail(key, "must be > 0 (got " + format_number(value) + ")");
}

void require_open_unit(const TomlTable& t, const std::string& key, double value) {
  if (!(value > 0.0 && value < 1.0)) t.fail(key, "must be in (0, 1) (got " + format_number(value) + ")");
}

void require_length(const TomlTable& t, const std::string& key, const std::vector<double>& values, std::size_t n,
                    const std::string& why) {
  if (values.size() != n)
    t.fail(key, "must have " + std::to_string(n) + " values (" + why + "), got " + std::to_string(values.size()));
}

void require_unique(const TomlTable& t, const std::string& key, const std::vector<std::string>& names) {
  for (std::size_t i = 0; i < names.size(); ++i)
    for (std::size_t j = 0; j < i; ++j)
      if (names[i] == names[j]) t.fail(key, "name '" + names[i] + "' appears twice");
}

// `written` (the value of `key`) resolved against the case file's folder unless
// absolute; an error at `key` when it does not exist or cannot be read
// (core/output_policy.h: input_file_problem).
std::string existing_file_beside_case(const TomlTable& t, const std::string& key, const std::string& written,
                                      const std::string& case_path, const std::string& what) {
  namespace fs = std::filesystem;
  fs::path file(written);
  if (file.is_relative()) file = fs::path(case_path).parent_path() / file;
  const std::string resolved = file.lexically_normal().string();
  const std::string problem = input_file_problem(file.string());
  if (problem == "no such file") t.fail(key, what + " '" + written + "' not found (looked for '" + resolved + "')");
  if (!problem.empty()) t.fail(key, what + " '" + written + "' (" + resolved + ") " + problem);
  return resolved;
}

// ---------------------------------------------------------------- [model]

const std::vector<std::string> kModelKeys = {"builtin", "plugin", "states", "inputs", "parameters", "rhs", "outputs", "units"};

std::vector<NamedValue> read_named_values(const TomlTable& table, const std::string& key) {
  std::vector<NamedValue> out;
  auto sub = table.table(key);
  if (!sub) return out;
  for (const auto& [name, node] : sub->entries_in_file_order()) {
    if (!is_identifier(name)) sub->fail(name, "'" + name + "' is not a valid name (letters, digits and _, not starting with a digit)");
    out.push_back({name, sub->number(name), sub->where(name)});
  }
  return out;
}

// An expression within kMaxExpressionLength characters and kMaxExpressionDepth
// nested parentheses, checked before it reaches the compiler.
void require_expression_size(const TomlTable& t, const std::string& key, const std::string& text) {
  if (text.size() > kMaxExpressionLength)
    t.fail(key, "expression of " + std::to_string(text.size()) + " characters exceeds the limit of " +
                    std::to_string(kMaxExpressionLength));
  int depth = 0, deepest = 0;
  for (char c : text) {
    if (c == '(') deepest = std::max(deepest, ++depth);
    else if (c == ')') --depth;
  }
  if (deepest > kMaxExpressionDepth)
    t.fail(key, "expression nests " + std::to_string(deepest) + " parentheses deep, the limit is " +
                    std::to_string(kMaxExpressionDepth));
}

std::vector<NamedExpression> read_named_expressions(const TomlTable& table, const std::string& key) {
  std::vector<NamedExpression> out;
  auto sub = table.table(key);
  if (!sub) return out;
  for (const auto& [name, node] : sub->entries_in_file_order()) {
    if (!is_identifier(name)) sub->fail(name, "'" + name + "' is not a valid name (letters, digits and _, not starting with a digit)");
    const std::string text = sub->string(name);
    require_expression_size(*sub, name, text);
    out.push_back({name, text, sub->where(name)});
  }
  return out;
}

std::vector<std::string> read_identifiers(const TomlTable& table, const std::string& key) {
  std::vector<std::string> names = table.strings(key);
  for (const auto& name : names)
    if (!is_identifier(name))
      table.fail(key, "'" + name + "' is not a valid name (letters, digits and _, not starting with a digit)");
  require_unique(table, key, names);
  return names;
}

ModelOptions read_model(const TomlTable& t, const std::string& case_path) {
  ModelOptions model;
  model.where = t.where();
  model.key_where = t.key_locations();
  // Names are checked against the model's states, inputs and outputs when the case is loaded.
  model.units = read_named_expressions(t, "units");
  if (t.has("plugin")) {
    // A shared library with the C interface of sigmatube/model_plugin.h; its
    // names and counts are checked when it is loaded (model/plugin_model.h).
    t.check_keys_for_kind({"plugin", "parameters", "outputs", "units"}, kModelKeys, "a model plugin");
    model.plugin = t.string("plugin");
    if (model.plugin.empty()) t.fail("plugin", "must name a shared library");
    model.plugin_path = existing_file_beside_case(t, "plugin", model.plugin, case_path, "model plugin");
    model.parameters = read_named_values(t, "parameters");
  } else if (t.has("builtin")) {
    model.builtin = t.string("builtin");
    // A built-in takes its parameters by name directly in [model] (or in a
    // parameters table); the names are checked against the model later.
    for (const auto& [key, node] : t.entries_in_file_order()) {
      if (key == "builtin" || key == "parameters" || key == "outputs" || key == "units") continue;
      if (key == "states" || key == "inputs" || key == "rhs")
        t.fail(key, "key '" + key + "' does not belong to a built-in model (it takes: builtin, outputs, parameters and "
                    "its parameters by name)");
      if (!node->is_number()) {
        const std::string hint = did_you_mean(key, kModelKeys);
        if (!hint.empty()) t.fail(key, "unknown key '" + key + "'" + hint);
        t.fail(key, "expected a number (a parameter of built-in model '" + model.builtin + "'), got " +
                        type_phrase(*node));
      }
      model.parameters.push_back({key, t.number(key), t.where(key)});
    }
    for (auto& value : read_named_values(t, "parameters")) {
      for (const auto& seen : model.parameters)
        if (seen.name == value.name)
          throw InputError(value.where, "parameter '" + value.name + "' is given twice (also at line " +
                                            std::to_string(seen.where.line) + ")");
      model.parameters.push_back(std::move(value));
    }
  } else {
    t.check_keys(kModelKeys, "key");
    if (!t.has("states"))
      t.fail("builtin", "[model] needs 'builtin', 'plugin' or an expression model ('states' and 'rhs')");
    model.states = read_identifiers(t, "states");
    if (t.has("inputs")) model.inputs = read_identifiers(t, "inputs");
    model.parameters = read_named_values(t, "parameters");
    if (!t.has("rhs")) t.missing("rhs");
    model.rhs = read_named_expressions(t, "rhs");
    for (const auto& entry : model.rhs)
      if (!contains(model.states, entry.name))
        throw InputError(entry.where, "'" + entry.name + "' is not a state" + did_you_mean(entry.name, model.states) +
                                          "; states: " + join_names(model.states));
    for (const auto& state : model.states) {
      const bool found = std::any_of(model.rhs.begin(), model.rhs.end(), [&](const auto& e) { return e.name == state; });
      if (!found) t.fail("rhs", "no right-hand side for state '" + state + "'");
    }
  }
  model.outputs = read_named_expressions(t, "outputs");
  // One namespace for expressions: a name may mean only one thing.
  std::map<std::string, std::string> kinds;
  auto claim = [&](const std::string& name, const std::string& kind, const SourceLocation& where) {
    auto [it, inserted] = kinds.emplace(name, kind);
    if (!inserted) throw InputError(where, "name '" + name + "' is used both as " + it->second + " and as " + kind);
  };
  for (const auto& s : model.states) claim(s, "a state", t.where("states"));
  for (const auto& s : model.inputs) claim(s, "an input", t.where("inputs"));
  if (model.builtin.empty())
    for (const auto& p : model.parameters) claim(p.name, "a parameter", p.where);
  for (const auto& o : model.outputs) claim(o.name, "an output", o.where);
  return model;
}

// ---------------------------------------------------------------- [plan]

PlanOptions read_plan(const TomlTable& t, const std::string& case_path) {
  PlanOptions plan;
  plan.where = t.where();
  plan.key_where = t.key_locations();
  t.check_keys({"file", "interpolation"}, "key");
  plan.file = t.string("file");
  plan.interpolation = t.choice<Interpolation>(
      "interpolation", {{"linear", Interpolation::linear}, {"cubic", Interpolation::cubic}}, Interpolation::linear,
      "interpolation");
  namespace fs = std::filesystem;
  fs::path file(plan.file);
  if (file.is_relative()) file = fs::path(case_path).parent_path() / file;
  plan.path = file.lexically_normal().string();
  const std::string problem = input_file_problem(file.string());
  if (problem == "no such file")
    t.fail("file", "plan file '" + plan.file + "' not found (looked for '" + plan.path + "')");
  if (!problem.empty()) t.fail("file", "plan file '" + plan.file + "' (" + plan.path + ") " + problem);
  return plan;
}

// ---------------------------------------------------------------- [control]

ControlOptions read_control(const TomlTable& t) {
  ControlOptions control;
  control.where = t.where();
  control.key_where = t.key_locations();
  control.law = t.choice<ControlLaw>(
      "law", {{"lqr", ControlLaw::lqr}, {"gain", ControlLaw::gain}, {"open-loop", ControlLaw::open_loop}},
      ControlLaw::open_loop, "control law");
  const std::vector<std::string> known = {"law", "q", "r", "time_varying", "gain", "limits"};
  switch (control.law) {
    case ControlLaw::lqr: t.check_keys_for_kind({"law", "q", "r", "time_varying", "limits"}, known, "law 'lqr'"); break;
    case ControlLaw::gain: t.check_keys_for_kind({"law", "gain", "limits"}, known, "law 'gain'"); break;
    case ControlLaw::open_loop: t.check_keys_for_kind({"law", "limits"}, known, "law 'open-loop'"); break;
  }
  if (control.law == ControlLaw::lqr) {
    control.q = t.numbers("q");
    for (double w : control.q)
      if (w < 0.0) t.fail("q", "state weights must be ≥ 0 (got " + format_number(w) + ")");
    control.r = t.numbers("r");
    for (double w : control.r)
      if (!(w > 0.0)) t.fail("r", "input weights must be > 0 (got " + format_number(w) + ")");
    control.time_varying = t.boolean_or("time_varying", control.time_varying);
  }
  if (control.law == ControlLaw::gain) control.gain = t.matrix("gain");
  if (auto limits = t.table("limits")) {
    for (const auto& [input, node] : limits->entries_in_file_order()) {
      const std::vector<double> range = limits->numbers(input);
      if (range.size() != 2) limits->fail(input, "expected [low, high], got " + std::to_string(range.size()) + " values");
      if (!(range[0] < range[1]))
        limits->fail(input, "low must be < high (got [" + format_number(range[0]) + ", " + format_number(range[1]) + "])");
      control.limits.push_back({input, range[0], range[1], limits->where(input)});
    }
  }
  return control;
}

// ---------------------------------------------------------------- [simulation]

SimulationOptions read_simulation(const TomlTable& t) {
  SimulationOptions sim;
  sim.where = t.where();
  sim.key_where = t.key_locations();
  t.check_keys({"integrator", "step", "rtol", "atol", "report_every"}, "key");
  sim.integrator = t.choice<IntegratorKind>(
      "integrator", {{"dopri5", IntegratorKind::dopri5}, {"rk4", IntegratorKind::rk4}}, sim.integrator, "integrator");
  sim.step_in_seconds = t.number_or("step", sim.step_in_seconds);
  require_positive(t, "step", sim.step_in_seconds);
  sim.rtol = t.number_or("rtol", sim.rtol);
  require_positive(t, "rtol", sim.rtol);
  sim.atol = t.number_or("atol", sim.atol);
  require_positive(t, "atol", sim.atol);
  sim.report_every_in_seconds = t.number_or("report_every", sim.report_every_in_seconds);
  if (sim.report_every_in_seconds < 0.0)
    t.fail("report_every", "must be ≥ 0 (0 = the plan's times; got " + format_number(sim.report_every_in_seconds) + ")");
  return sim;
}

// ---------------------------------------------------------------- [[uncertain]]

const std::vector<std::string> kTargetKinds = {"initial", "parameter", "input_scale", "input_bias", "disturbance"};

const std::vector<std::pair<std::string, DistributionKind>> kDistributions = {
    {"normal", DistributionKind::normal},
    {"uniform", DistributionKind::uniform},
    {"beta", DistributionKind::beta},
    {"gamma", DistributionKind::gamma},
    {"lognormal", DistributionKind::lognormal},
    {"truncated-normal", DistributionKind::truncated_normal},
    {"triangular", DistributionKind::triangular},
    {"gaussian-process", DistributionKind::gaussian_process}};

std::vector<std::string> distribution_keys(DistributionKind kind) {
  switch (kind) {
    case DistributionKind::normal: return {"mean", "std", "covariance"};
    case DistributionKind::uniform: return {"low", "high"};
    case DistributionKind::beta: return {"alpha", "beta", "low", "high"};
    case DistributionKind::gamma: return {"shape", "scale"};
    case DistributionKind::lognormal: return {"mu", "sigma"};
    case DistributionKind::truncated_normal: return {"mean", "std", "low", "high"};
    case DistributionKind::triangular: return {"low", "mode", "high"};
    case DistributionKind::gaussian_process: return {"kernel", "std", "correlation_time", "modes", "energy"};
  }
  return {};
}

std::string distribution_name(DistributionKind kind) {
  for (const auto& [name, value] : kDistributions)
    if (value == kind) return name;
  return "?";
}

void check_targets(const TomlTable& t, const std::vector<std::string>& targets) {
  for (const auto& target : targets) {
    const auto dot = target.find('.');
    if (dot == std::string::npos || dot == 0 || dot + 1 == target.size()) {
      const std::string hint = did_you_mean(target.substr(0, dot), kTargetKinds);
      t.fail("applies_to", "target '" + target + "' must be <kind>.<name>" + hint + " with kind one of " +
                               join_names(kTargetKinds));
    }
    const std::string kind = target.substr(0, dot);
    if (!contains(kTargetKinds, kind))
      t.fail("applies_to", "unknown target kind '" + kind + "' in '" + target + "'" + did_you_mean(kind, kTargetKinds) +
                               "; allowed: " + join_names(kTargetKinds));
  }
  require_unique(t, "applies_to", targets);
}

void read_covariance(const TomlTable& t, UncertainOptions& u) {
  if (t.has("std")) t.fail("std", "give either 'std' or 'covariance', not both");
  u.covariance = t.matrix("covariance");
  const std::size_t n = u.applies_to.size();
  if (u.mean.size() != n)
    t.fail("mean", "must have one value per applies_to target (" + std::to_string(n) + "), got " +
                       std::to_string(u.mean.size()));
  if (u.covariance.size() != n || u.covariance.front().size() != n)
    t.fail("covariance", "must be " + std::to_string(n) + "×" + std::to_string(n) + " (one row and column per "
                         "applies_to target), got " + std::to_string(u.covariance.size()) + "×" +
                         std::to_string(u.covariance.front().size()));
  Eigen::MatrixXd c(n, n);
  double largest = 0.0;
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t j = 0; j < n; ++j) {
      c(i, j) = u.covariance[i][j];
      largest = std::max(largest, std::abs(c(i, j)));
    }
  // Symmetry up to rounding in the last printed digits of a hand-written matrix.
  constexpr double kSymmetryRelativeTolerance = 1e-12;
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t j = 0; j < i; ++j)
      if (std::abs(c(i, j) - c(j, i)) > kSymmetryRelativeTolerance * largest)
        t.fail("covariance", "is not symmetric: element (" + std::to_string(i + 1) + "," + std::to_string(j + 1) +
                                 ") = " + format_number(c(i, j)) + " but (" + std::to_string(j + 1) + "," +
                                 std::to_string(i + 1) + ") = " + format_number(c(j, i)));
  Eigen::LLT<Eigen::MatrixXd> llt(c);
  if (llt.info() != Eigen::Success)
    t.fail("covariance", "is not positive definite (Cholesky factorisation failed); every variance must be > 0 and "
                         "correlations must be consistent");
}

UncertainOptions read_uncertain(const TomlTable& t) {
  UncertainOptions u;
  u.where = t.where();
  u.key_where = t.key_locations();
  const std::vector<std::string> common = {"name", "applies_to", "distribution"};
  std::vector<std::string> known = common;
  for (const auto& [name, kind] : kDistributions) known = concat(known, distribution_keys(kind));
  // Misspelt common keys first, so that 'distrbution' is reported as such.
  if (!t.has("distribution")) {
    for (const auto& [key, node] : t.entries_in_file_order())
      if (!contains(known, key)) t.fail(key, "unknown key '" + key + "'" + did_you_mean(key, known));
    t.missing("distribution");
  }
  u.distribution = t.choice<DistributionKind>("distribution", kDistributions, std::nullopt, "distribution");
  const std::string kind_name = distribution_name(u.distribution);
  t.check_keys_for_kind(concat(common, distribution_keys(u.distribution)), known,
                        "distribution '" + kind_name + "'");
  u.name = entry_name(t);
  u.applies_to = t.strings("applies_to", true);
  check_targets(t, u.applies_to);
  if (u.distribution != DistributionKind::normal && u.applies_to.size() != 1)
    t.fail("applies_to", "distribution '" + kind_name + "' takes exactly one target (got " +
                             std::to_string(u.applies_to.size()) + "); only 'normal' takes several");
  switch (u.distribution) {
    case DistributionKind::normal: {
      u.mean = t.numbers("mean", true);
      if (t.has("covariance")) {
        read_covariance(t, u);
        break;
      }
      u.std = t.numbers("std", true);
      const std::size_t n = u.applies_to.size();
      require_length(t, "mean", u.mean, n, "one per applies_to target");
      require_length(t, "std", u.std, n, "one per applies_to target");
      for (double s : u.std) require_positive(t, "std", s);
      break;
    }
    case DistributionKind::uniform:
      u.low = t.number("low");
      u.high = t.number("high");
      if (!(u.low < u.high))
        t.fail("high", "must be > low (low = " + format_number(u.low) + ", high = " + format_number(u.high) + ")");
      break;
    case DistributionKind::beta:
      u.alpha = t.number("alpha");
      require_positive(t, "alpha", u.alpha);
      u.beta = t.number("beta");
      require_positive(t, "beta", u.beta);
      u.low = t.number("low");
      u.high = t.number("high");
      if (!(u.low < u.high))
        t.fail("high", "must be > low (low = " + format_number(u.low) + ", high = " + format_number(u.high) + ")");
      break;
    case DistributionKind::gamma:
      u.shape = t.number("shape");
      require_positive(t, "shape", u.shape);
      u.scale = t.number("scale");
      require_positive(t, "scale", u.scale);
      break;
    case DistributionKind::lognormal:
      u.mu = t.number("mu");
      u.sigma = t.number("sigma");
      require_positive(t, "sigma", u.sigma);
      break;
    case DistributionKind::truncated_normal:
      u.mean = {t.number("mean")};
      u.std = {t.number("std")};
      require_positive(t, "std", u.std[0]);
      u.low = t.number("low");
      u.high = t.number("high");
      if (!(u.low < u.high))
        t.fail("high", "must be > low (low = " + format_number(u.low) + ", high = " + format_number(u.high) + ")");
      break;
    case DistributionKind::triangular:
      u.low = t.number("low");
      u.mode = t.number("mode");
      u.high = t.number("high");
      if (!(u.low < u.high))
        t.fail("high", "must be > low (low = " + format_number(u.low) + ", high = " + format_number(u.high) + ")");
      if (u.mode < u.low || u.mode > u.high)
        t.fail("mode", "must lie in [low, high] = [" + format_number(u.low) + ", " + format_number(u.high) + "] (got " +
                           format_number(u.mode) + ")");
      break;
    case DistributionKind::gaussian_process: {
      const std::string kind = u.applies_to[0].substr(0, u.applies_to[0].find('.'));
      if (kind == "initial" || kind == "parameter")
        t.fail("applies_to", "a gaussian-process varies in time: it applies to disturbance.<state>, "
                             "input_bias.<input> or input_scale.<input>, not '" + u.applies_to[0] + "'");
      u.kernel = t.choice<KernelKind>(
          "kernel", {{"exponential", KernelKind::exponential}, {"squared-exponential", KernelKind::squared_exponential}},
          u.kernel, "kernel");
      u.std = {t.number("std")};
      require_positive(t, "std", u.std[0]);
      u.correlation_time_in_seconds = t.number("correlation_time");
      require_positive(t, "correlation_time", u.correlation_time_in_seconds);
      if (t.has("modes") == t.has("energy"))
        t.fail(t.has("modes") ? "energy" : "modes",
               "give exactly one of 'modes' (number of Karhunen–Loève modes) or 'energy' (captured variance fraction)");
      if (t.has("modes")) {
        const long long modes = t.integer("modes");
        if (modes < 1) t.fail("modes", "must be ≥ 1 (got " + std::to_string(modes) + ")");
        if (modes > 100000) t.fail("modes", "must be ≤ 100000 (got " + std::to_string(modes) + ")");
        u.modes = static_cast<int>(modes);
      } else {
        u.energy = t.number("energy");
        if (!(u.energy > 0.0 && u.energy <= 1.0))
          t.fail("energy", "must be in (0, 1] (got " + format_number(u.energy) + ")");
      }
      break;
    }
  }
  return u;
}

// ---------------------------------------------------------------- [[constraint]]

const std::vector<std::pair<std::string, ConstraintKind>> kConstraintKinds = {
    {"outside-sphere", ConstraintKind::outside_sphere},
    {"outside-ellipsoid", ConstraintKind::outside_ellipsoid},
    {"inside-box", ConstraintKind::inside_box},
    {"inside-cone", ConstraintKind::inside_cone},
    {"half-space", ConstraintKind::half_space},
    {"input-limit", ConstraintKind::input_limit},
    {"expression", ConstraintKind::expression}};

std::vector<std::string> constraint_keys(ConstraintKind kind) {
  switch (kind) {
    case ConstraintKind::outside_sphere: return {"position", "center", "radius"};
    case ConstraintKind::outside_ellipsoid: return {"position", "center", "semi_axes"};
    case ConstraintKind::inside_box: return {"position", "low", "high"};
    case ConstraintKind::inside_cone: return {"position", "apex", "axis", "half_angle_deg"};
    case ConstraintKind::half_space: return {"position", "normal", "offset"};
    case ConstraintKind::input_limit: return {"input", "low", "high"};
    case ConstraintKind::expression: return {"clearance"};
  }
  return {};
}

std::string constraint_kind_name(ConstraintKind kind) {
  for (const auto& [name, value] : kConstraintKinds)
    if (value == kind) return name;
  return "?";
}

void require_nonzero(const TomlTable& t, const std::string& key, const std::vector<double>& v) {
  if (std::all_of(v.begin(), v.end(), [](double x) { return x == 0.0; })) t.fail(key, "must not be the zero vector");
}

ConstraintOptions read_constraint(const TomlTable& t) {
  ConstraintOptions c;
  c.where = t.where();
  c.key_where = t.key_locations();
  const std::vector<std::string> common = {"name", "type", "window", "max_probability", "scope"};
  std::vector<std::string> known = common;
  for (const auto& [name, kind] : kConstraintKinds) known = concat(known, constraint_keys(kind));
  if (!t.has("type")) {
    for (const auto& [key, node] : t.entries_in_file_order())
      if (!contains(known, key)) t.fail(key, "unknown key '" + key + "'" + did_you_mean(key, known));
    t.missing("type");
  }
  c.type = t.choice<ConstraintKind>("type", kConstraintKinds, std::nullopt, "constraint type");
  const std::string kind_name = constraint_kind_name(c.type);
  t.check_keys_for_kind(concat(common, constraint_keys(c.type)), known, "constraint type '" + kind_name + "'");
  c.name = entry_name(t);
  c.max_probability = t.number("max_probability");
  require_open_unit(t, "max_probability", c.max_probability);
  c.scope = t.choice<ConstraintScope>("scope", {{"path", ConstraintScope::path}, {"pointwise", ConstraintScope::pointwise}},
                                      c.scope, "scope");
  if (t.has("window")) {
    const std::vector<double> w = t.numbers("window");
    if (w.size() != 2) t.fail("window", "expected [start, end] in seconds, got " + std::to_string(w.size()) + " values");
    if (w[1] < w[0])
      t.fail("window", "end must be ≥ start (got [" + format_number(w[0]) + ", " + format_number(w[1]) + "])");
    c.window_in_seconds = std::make_pair(w[0], w[1]);
  }
  std::size_t n = 0;
  if (c.type != ConstraintKind::input_limit && c.type != ConstraintKind::expression) {
    c.position = t.strings("position");
    require_unique(t, "position", c.position);
    n = c.position.size();
  }
  const std::string per = "one per position name";
  switch (c.type) {
    case ConstraintKind::outside_sphere:
      c.center = t.numbers("center");
      require_length(t, "center", c.center, n, per);
      c.radius = t.number("radius");
      require_positive(t, "radius", c.radius);
      break;
    case ConstraintKind::outside_ellipsoid:
      c.center = t.numbers("center");
      require_length(t, "center", c.center, n, per);
      c.semi_axes = t.numbers("semi_axes");
      require_length(t, "semi_axes", c.semi_axes, n, per);
      for (double a : c.semi_axes) require_positive(t, "semi_axes", a);
      break;
    case ConstraintKind::inside_box:
      c.low = t.numbers("low");
      require_length(t, "low", c.low, n, per);
      c.high = t.numbers("high");
      require_length(t, "high", c.high, n, per);
      for (std::size_t i = 0; i < n; ++i)
        if (!(c.low[i] < c.high[i]))
          t.fail("high", "element " + std::to_string(i + 1) + " must be > low (low = " + format_number(c.low[i]) +
                             ", high = " + format_number(c.high[i]) + ")");
      break;
    case ConstraintKind::inside_cone:
      if (n < 2) t.fail("position", "a cone needs at least 2 position names");
      c.apex = t.numbers("apex");
      require_length(t, "apex", c.apex, n, per);
      c.axis = t.numbers("axis");
      require_length(t, "axis", c.axis, n, per);
      require_nonzero(t, "axis", c.axis);
      c.half_angle_deg = t.number("half_angle_deg");
      if (!(c.half_angle_deg > 0.0 && c.half_angle_deg < 90.0))
        t.fail("half_angle_deg", "must be in (0, 90) degrees (got " + format_number(c.half_angle_deg) + ")");
      break;
    case ConstraintKind::half_space:
      c.normal = t.numbers("normal");
      require_length(t, "normal", c.normal, n, per);
      require_nonzero(t, "normal", c.normal);
      c.offset = t.number("offset");
      break;
    case ConstraintKind::input_limit:
      c.input = t.string("input");
      c.low = {t.number("low")};
      c.high = {t.number("high")};
      if (!(c.low[0] < c.high[0]))
        t.fail("high", "must be > low (low = " + format_number(c.low[0]) + ", high = " + format_number(c.high[0]) + ")");
      break;
    case ConstraintKind::expression:
      c.clearance = t.string("clearance");
      require_expression_size(t, "clearance", c.clearance);
      break;
  }
  return c;
}

// ---------------------------------------------------------------- [surrogate], [montecarlo]

SurrogateOptions read_surrogate(const TomlTable& t) {
  SurrogateOptions s;
  s.where = t.where();
  s.key_where = t.key_locations();
  t.check_keys({"method", "degree", "level", "q_norm", "adaptive", "tolerance", "max_model_runs", "samples",
                "oversampling", "design", "nested", "sampling", "sampling_relative_error", "sampling_absolute_error"},
               "key");
  s.method = t.choice<SurrogateMethod>("method",
                                       {{"sparse-grid", SurrogateMethod::sparse_grid},
                                        {"tensor-grid", SurrogateMethod::tensor_grid},
                                        {"regression", SurrogateMethod::regression},
                                        {"adaptive-sparse-grid", SurrogateMethod::adaptive_sparse_grid},
                                        {"sparse-regression", SurrogateMethod::sparse_regression}},
                                       s.method, "method");
  const long long degree = t.integer_or("degree", s.degree);
  if (degree < 0 || degree > 1000) t.fail("degree", "must be in [0, 1000] (got " + std::to_string(degree) + ")");
  s.degree = static_cast<int>(degree);
  const long long level = t.integer_or("level", s.level);
  if (level < 1 || level > 1000) t.fail("level", "must be in [1, 1000] (got " + std::to_string(level) + ")");
  s.level = static_cast<int>(level);
  s.q_norm = t.number_or("q_norm", s.q_norm);
  if (!(s.q_norm > 0.0 && s.q_norm <= 1.0)) t.fail("q_norm", "must be in (0, 1] (got " + format_number(s.q_norm) + ")");
  s.adaptive = t.boolean_or("adaptive", s.adaptive);
  s.tolerance = t.number_or("tolerance", s.tolerance);
  require_positive(t, "tolerance", s.tolerance);
  const long long runs = t.integer_or("max_model_runs", s.max_model_runs);
  if (runs < 1 || runs > 2147483647LL) t.fail("max_model_runs", "must be in [1, 2147483647] (got " + std::to_string(runs) + ")");
  s.max_model_runs = static_cast<int>(runs);
  s.samples = t.integer_or("samples", s.samples);
  if (s.samples < 1) t.fail("samples", "must be ≥ 1 (got " + std::to_string(s.samples) + ")");
  s.sampling = t.choice<SurrogateSampling>(
      "sampling", {{"precision", SurrogateSampling::precision}, {"fixed", SurrogateSampling::fixed}}, s.sampling,
      "sampling");
  s.sampling_relative_error = t.number_or("sampling_relative_error", s.sampling_relative_error);
  if (!(s.sampling_relative_error >= 0.0 && s.sampling_relative_error < 1.0))
    t.fail("sampling_relative_error", "must be in [0, 1) (got " + format_number(s.sampling_relative_error) + ")");
  s.sampling_absolute_error = t.number_or("sampling_absolute_error", s.sampling_absolute_error);
  if (!(s.sampling_absolute_error >= 0.0 && s.sampling_absolute_error < 1.0))
    t.fail("sampling_absolute_error", "must be in [0, 1) (got " + format_number(s.sampling_absolute_error) + ")");
  s.oversampling = t.number_or("oversampling", s.oversampling);
  if (!(s.oversampling >= 2.0))
    t.fail("oversampling", "must be ≥ 2 (got " + format_number(s.oversampling) + ")");
  s.design = t.choice<RegressionDesign>(
      "design", {{"sobol", RegressionDesign::sobol}, {"latin-hypercube", RegressionDesign::latin_hypercube}}, s.design,
      "design");
  s.nested = t.boolean_or("nested", s.nested);
  return s;
}

MonteCarloOptions read_montecarlo(const TomlTable& t) {
  MonteCarloOptions m;
  m.where = t.where();
  m.key_where = t.key_locations();
  t.check_keys({"runs", "seed", "confidence", "false_alarm_level", "relative_tolerance", "cov_target", "rare_event_runs"},
               "key");
  m.runs = t.integer_or("runs", m.runs);
  if (m.runs < 0) t.fail("runs", "must be ≥ 0 (0 disables the cross-check; got " + std::to_string(m.runs) + ")");
  if (t.has("seed")) {
    const long long seed = t.integer("seed");
    if (seed < 0) t.fail("seed", "must be ≥ 0 (got " + std::to_string(seed) + ")");
    m.seed = static_cast<unsigned long long>(seed);
  }
  m.confidence = t.number_or("confidence", m.confidence);
  require_open_unit(t, "confidence", m.confidence);
  m.false_alarm_level = t.number_or("false_alarm_level", m.false_alarm_level);
  require_open_unit(t, "false_alarm_level", m.false_alarm_level);
  m.relative_tolerance = t.number_or("relative_tolerance", m.relative_tolerance);
  require_positive(t, "relative_tolerance", m.relative_tolerance);
  m.cov_target = t.number_or("cov_target", m.cov_target);
  require_open_unit(t, "cov_target", m.cov_target);
  m.rare_event_runs = t.integer_or("rare_event_runs", m.rare_event_runs);
  if (m.rare_event_runs < 100)
    t.fail("rare_event_runs", "must be ≥ 100 (got " + std::to_string(m.rare_event_runs) + ")");
  return m;
}

TubeOptions read_tube(const TomlTable& t) {
  TubeOptions o;
  o.where = t.where();
  o.key_where = t.key_locations();
  t.check_keys({"position", "sigma"}, "key");
  if (!t.has("position")) t.missing("position");
  o.position = t.strings("position");
  require_unique(t, "position", o.position);
  o.sigma = t.number_or("sigma", o.sigma);
  require_positive(t, "sigma", o.sigma);
  return o;
}

LimitOptions read_limits(const TomlTable& t) {
  LimitOptions l;
  l.where = t.where();
  l.key_where = t.key_locations();
  t.check_keys({"max_samples", "max_sample_values", "max_runs", "max_report_times", "max_steps", "max_memory_gib"},
               "key");
  const auto positive_integer = [&](const std::string& key, long long& value) {
    value = t.integer_or(key, value);
    if (value < 1) t.fail(key, "must be ≥ 1 (got " + std::to_string(value) + ")");
  };
  const auto positive_number = [&](const std::string& key, double& value) {
    value = t.number_or(key, value);
    require_positive(t, key, value);
  };
  positive_integer("max_samples", l.max_samples);
  positive_number("max_sample_values", l.max_sample_values);
  positive_integer("max_runs", l.max_runs);
  positive_integer("max_report_times", l.max_report_times);
  positive_number("max_steps", l.max_steps);
  positive_number("max_memory_gib", l.max_memory_gib);
  return l;
}

template <class Entry>
void require_unique_names(const std::vector<Entry>& entries, const std::string& what) {
  for (std::size_t i = 0; i < entries.size(); ++i)
    for (std::size_t j = 0; j < i; ++j)
      if (entries[i].name == entries[j].name)
        throw InputError(entries[i].key_where.of("name", entries[i].where),
                         "duplicate " + what + " name '" + entries[i].name + "' (first used at line " +
                             std::to_string(entries[j].key_where.of("name", entries[j].where).line) + ")");
}

}  // namespace

CaseOptions read_case(const std::string& path) {
  const toml::table root_table = detail::parse_toml_file(path, "case file");
  const TomlTable root(path, root_table, "", 0);
  root.check_keys({"title", "model", "plan", "control", "simulation", "uncertain", "constraint", "surrogate",
                   "montecarlo", "tube", "limits"},
                  "top-level key or table");
  CaseOptions options;
  options.path = path;
  if (const toml::node* title = root.node("title")) {
    if (!title->is_string()) root.fail("title", "expected a string, got " + type_phrase(*title));
    options.title = title->as_string()->get();
  }

  auto model = root.table("model");
  if (!model) throw InputError(SourceLocation{path, 0, "model"}, "missing required table [model]");
  options.model = read_model(*model, path);

  auto plan = root.table("plan");
  if (!plan) throw InputError(SourceLocation{path, 0, "plan"}, "missing required table [plan]");
  options.plan = read_plan(*plan, path);

  if (auto control = root.table("control")) options.control = read_control(*control);
  else options.control.where = {path, 0, "control"};
  if (auto simulation = root.table("simulation")) options.simulation = read_simulation(*simulation);
  else options.simulation.where = {path, 0, "simulation"};

  for (const TomlTable& entry : root.array_of_tables("uncertain")) options.uncertain.push_back(read_uncertain(entry));
  require_unique_names(options.uncertain, "uncertain");
  // A parameter can be replaced by one distribution only.
  std::map<std::string, const UncertainOptions*> parameter_targets;
  for (const auto& u : options.uncertain)
    for (const auto& target : u.applies_to)
      if (target.rfind("parameter.", 0) == 0) {
        auto [it, inserted] = parameter_targets.emplace(target, &u);
        if (!inserted)
          throw InputError(u.key_where.of("applies_to", u.where),
                           "'" + target + "' is already replaced by uncertain '" + it->second->name + "' (line " +
                               std::to_string(it->second->where.line) + ")");
      }

  for (const TomlTable& entry : root.array_of_tables("constraint"))
    options.constraints.push_back(read_constraint(entry));
  require_unique_names(options.constraints, "constraint");

  if (auto surrogate = root.table("surrogate")) options.surrogate = read_surrogate(*surrogate);
  else options.surrogate.where = {path, 0, "surrogate"};
  if (auto montecarlo = root.table("montecarlo")) options.montecarlo = read_montecarlo(*montecarlo);
  else options.montecarlo.where = {path, 0, "montecarlo"};
  if (auto tube = root.table("tube")) options.tube = read_tube(*tube);
  if (auto limits = root.table("limits")) options.limits = read_limits(*limits);
  else options.limits.where = {path, 0, "limits"};
  return options;
}

}  // namespace sigmatube::casefile
