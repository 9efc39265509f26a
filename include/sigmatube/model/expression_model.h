// SPDX-License-Identifier: MIT
#pragma once
// A model written in the case file as text: states, inputs, parameters, one
// right-hand side per state and optional derived outputs, each an expression in
// the states, inputs, parameters and the time `t` (muparser syntax: + - * / ^,
// sin, cos, tan, asin, acos, atan, sinh, ..., exp, ln, log10, sqrt, abs, sign,
// min, max, rint, _pi, _e, and the ternary `cond ? a : b`).
#include <cstdint>
#include <map>
#include <memory>
#include <mutex>
#include <string>
#include <thread>
#include <vector>

#include "sigmatube/casefile/case_options.h"
#include "sigmatube/model/model.h"

// Layer model/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::model {

class ExpressionModel final : public Model {
 public:
  /// Compiles every expression once to report errors up front.
  /// @throws InputError at the offending expression's location for a syntax error
  ///   (with the 0-based character position in the expression), an undefined
  ///   symbol (named, nearest known name suggested), a state without rhs, an rhs
  ///   for an unknown state, duplicate or reserved names (`t`), or no states.
  explicit ExpressionModel(const casefile::ModelOptions& options);
  ~ExpressionModel() override;

  std::string name() const override { return "expression"; }
  const std::vector<std::string>& state_names() const override { return states_; }
  const std::vector<std::string>& input_names() const override { return inputs_; }
  const std::vector<std::string>& parameter_names() const override { return parameter_names_; }
  const std::vector<std::string>& derived_output_names() const override { return output_names_; }
  Eigen::VectorXd parameters() const override { return parameters_; }

  /// Thread-safe: each thread evaluates with its own compiled parsers, created
  /// on its first call (the only allocation) and owned by this object.
  void rhs(double t, const double* x, const double* u, const double* p, double* dxdt) const override;
  void derived_outputs(double t, const double* x, const double* u, const double* p, double* y) const override;

 private:
  struct Evaluator;
  std::unique_ptr<Evaluator> compile() const;
  Evaluator& evaluator() const;

  std::vector<std::string> states_, inputs_, parameter_names_, output_names_;
  Eigen::VectorXd parameters_;
  std::vector<casefile::NamedExpression> rhs_;      // in state order
  std::vector<casefile::NamedExpression> outputs_;  // in output order
  std::uint64_t id_;                                // unique per instance, never reused
  mutable std::mutex mutex_;
  mutable std::map<std::thread::id, std::unique_ptr<Evaluator>> evaluators_;
};

}  // namespace sigmatube::model
