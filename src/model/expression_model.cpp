// SPDX-License-Identifier: MIT
#include "sigmatube/model/expression_model.h"

#include <muParser.h>

#include <array>
#include <atomic>
#include <set>
#include <sstream>

#include "sigmatube/casefile/nearest_name.h"

namespace sigmatube::model {

struct ExpressionModel::Evaluator {
  // Addresses of these doubles are bound into the parsers: never resize after compile().
  double t = 0.0;
  std::vector<double> x, u, p;
  std::vector<std::unique_ptr<mu::Parser>> rhs, outputs;
};

namespace {
std::atomic<std::uint64_t> next_instance_id{1};

// Per-thread lookup of "my evaluator of model `id`" that avoids the mutex on the
// hot path. Entries of destroyed models are never matched again because ids are
// never reused.
struct CacheEntry {
  std::uint64_t id = 0;
  void* evaluator = nullptr;
};
constexpr std::size_t kCacheSize = 8;
thread_local std::array<CacheEntry, kCacheSize> thread_cache{};
thread_local std::size_t thread_cache_next = 0;

SourceLocation located(const casefile::NamedExpression& e, const std::string& table) {
  SourceLocation where = e.where;
  if (where.key.empty()) where.key = "model." + table + "." + e.name;
  return where;
}

SourceLocation with_key(SourceLocation where, const std::string& key) {
  if (where.key.empty()) where.key = key;
  return where;
}
}  // namespace

ExpressionModel::ExpressionModel(const casefile::ModelOptions& options)
    : states_(options.states), inputs_(options.inputs), id_(next_instance_id.fetch_add(1)) {
  if (states_.empty()) throw InputError(with_key(options.where, "model.states"), "an expression model needs at least one state");
  // One namespace for states, inputs, parameters and outputs: a repeated name would be ambiguous.
  std::set<std::string> seen{"t"};
  auto claim = [&](const std::string& name, const SourceLocation& where, const char* what) {
    if (name == "t") throw InputError(where, std::string(what) + " 't' is reserved for time");
    if (!seen.insert(name).second) throw InputError(where, std::string(what) + " '" + name + "' is already defined");
  };
  for (const auto& s : states_) claim(s, with_key(options.where, "model.states"), "state");
  for (const auto& s : inputs_) claim(s, with_key(options.where, "model.inputs"), "input");
  parameters_.resize(static_cast<Eigen::Index>(options.parameters.size()));
  for (std::size_t i = 0; i < options.parameters.size(); ++i) {
    const auto& parameter = options.parameters[i];
    claim(parameter.name, with_key(parameter.where, "model.parameters." + parameter.name), "parameter");
    parameter_names_.push_back(parameter.name);
    parameters_(static_cast<Eigen::Index>(i)) = parameter.value;
  }

  rhs_.resize(states_.size());
  std::vector<bool> given(states_.size(), false);
  for (const auto& e : options.rhs) {
    const auto it = std::find(states_.begin(), states_.end(), e.name);
    if (it == states_.end())
      throw InputError(located(e, "rhs"), "rhs for unknown state '" + e.name + "'" + casefile::suggestion_or_list(e.name, states_));
    const auto k = static_cast<std::size_t>(it - states_.begin());
    if (given[k]) throw InputError(located(e, "rhs"), "second rhs for state '" + e.name + "'");
    given[k] = true;
    rhs_[k] = e;
  }
  for (std::size_t k = 0; k < states_.size(); ++k)
    if (!given[k]) throw InputError(with_key(options.where, "model.rhs"), "state '" + states_[k] + "' has no rhs expression");

  for (const auto& e : options.outputs) {
    claim(e.name, located(e, "outputs"), "output");
    output_names_.push_back(e.name);
    outputs_.push_back(e);
  }

  // Compile now so that every error surfaces while the case is checked; keep
  // the result as this thread's evaluator.
  auto first = compile();
  evaluators_[std::this_thread::get_id()] = std::move(first);
}

ExpressionModel::~ExpressionModel() = default;

std::unique_ptr<ExpressionModel::Evaluator> ExpressionModel::compile() const {
  auto ev = std::make_unique<Evaluator>();
  ev->x.assign(states_.size(), 0.0);
  ev->u.assign(inputs_.size(), 0.0);
  ev->p.assign(parameters_.data(), parameters_.data() + parameters_.size());

  std::vector<std::string> known{"t"};
  known.insert(known.end(), states_.begin(), states_.end());
  known.insert(known.end(), inputs_.begin(), inputs_.end());
  known.insert(known.end(), parameter_names_.begin(), parameter_names_.end());

  auto build = [&](const casefile::NamedExpression& e, const std::string& table) {
    auto parser = std::make_unique<mu::Parser>();
    const SourceLocation where = located(e, table);
    try {
      parser->DefineVar("t", &ev->t);
      for (std::size_t i = 0; i < states_.size(); ++i) parser->DefineVar(states_[i], &ev->x[i]);
      for (std::size_t i = 0; i < inputs_.size(); ++i) parser->DefineVar(inputs_[i], &ev->u[i]);
      for (std::size_t i = 0; i < parameter_names_.size(); ++i) parser->DefineVar(parameter_names_[i], &ev->p[i]);
    } catch (const mu::ParserError& error) {
      throw InputError(where, "invalid name '" + error.GetToken() + "': " + error.GetMsg());
    }
    try {
      parser->SetExpr(e.text);
      // muparser parses lazily on the first evaluation: force it here.
      (void)parser->Eval();
    } catch (const mu::ParserError& error) {
      std::ostringstream message;
      if (error.GetCode() == mu::ecUNASSIGNABLE_TOKEN) {
        message << "undefined symbol '" << error.GetToken() << "' at position " << error.GetPos() << " in \""
                << e.text << "\"" << casefile::suggestion_or_list(error.GetToken(), known);
      } else {
        message << "syntax error at position " << error.GetPos() << " in \"" << e.text << "\": " << error.GetMsg();
      }
      throw InputError(where, message.str());
    }
    return parser;
  };
  for (const auto& e : rhs_) ev->rhs.push_back(build(e, "rhs"));
  for (const auto& e : outputs_) ev->outputs.push_back(build(e, "outputs"));
  return ev;
}

ExpressionModel::Evaluator& ExpressionModel::evaluator() const {
  for (const auto& entry : thread_cache)
    if (entry.id == id_) return *static_cast<Evaluator*>(entry.evaluator);
  Evaluator* ev = nullptr;
  {
    std::lock_guard<std::mutex> lock(mutex_);
    // A thread id is reused only after its thread ended, so the evaluator found
    // under a reused id is no longer in use by anybody else.
    auto& slot = evaluators_[std::this_thread::get_id()];
    if (!slot) slot = compile();
    ev = slot.get();
  }
  thread_cache[thread_cache_next++ % kCacheSize] = {id_, ev};
  return *ev;
}

void ExpressionModel::rhs(double t, const double* x, const double* u, const double* p, double* dxdt) const {
  Evaluator& ev = evaluator();
  ev.t = t;
  std::copy(x, x + ev.x.size(), ev.x.begin());
  std::copy(u, u + ev.u.size(), ev.u.begin());
  std::copy(p, p + ev.p.size(), ev.p.begin());
  for (std::size_t i = 0; i < ev.rhs.size(); ++i) dxdt[i] = ev.rhs[i]->Eval();
}

void ExpressionModel::derived_outputs(double t, const double* x, const double* u, const double* p, double* y) const {
  Evaluator& ev = evaluator();
  ev.t = t;
  std::copy(x, x + ev.x.size(), ev.x.begin());
  std::copy(u, u + ev.u.size(), ev.u.begin());
  std::copy(p, p + ev.p.size(), ev.p.begin());
  for (std::size_t i = 0; i < ev.outputs.size(); ++i) y[i] = ev.outputs[i]->Eval();
}

}  // namespace sigmatube::model
