// SPDX-License-Identifier: MIT
#pragma once
// A model brought by a shared library through the C interface of
// sigmatube/model_plugin.h ([model] plugin = "lib.so" in a case file). The
// library stays loaded as long as any PluginModel made from it exists.
#include <memory>
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/casefile/case_options.h"
#include "sigmatube/model/model.h"
#include "sigmatube/model_plugin.h"

// Layer model/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::model {

class PluginModel final : public Model {
 public:
  /// Loads options.plugin_path and checks what sigmatube_model_v1 returns.
  /// @throws InputError at model.plugin when the library cannot be loaded, lacks
  ///   the entry point, returns null, was built for another ABI version, has
  ///   counts out of range (states ≥ 1, inputs and parameters ≥ 0), null arrays
  ///   or rhs, or names that are not identifiers, are repeated or are `t`; at the
  ///   parameter's own location for an override of an unknown parameter (nearest
  ///   name suggested) or a non-finite value; at the output for an output
  ///   expression error (derived outputs are case-file expressions in the
  ///   plugin's states, inputs and parameters, as for an expression model).
  explicit PluginModel(const casefile::ModelOptions& options);
  ~PluginModel() override;

  std::string name() const override { return "plugin:" + file_; }
  const std::vector<std::string>& state_names() const override { return states_; }
  const std::vector<std::string>& input_names() const override { return inputs_; }
  const std::vector<std::string>& parameter_names() const override { return parameter_names_; }
  const std::vector<std::string>& derived_output_names() const override;
  Eigen::VectorXd parameters() const override { return parameters_; }

  /// One run: the plugin's rhs with lanes = 1.
  void rhs(double t, const double* x, const double* u, const double* p, double* dxdt) const override;
  void derived_outputs(double t, const double* x, const double* u, const double* p, double* y) const override;

  /// `lanes` runs at once, structure of arrays (x[i·lanes + l], u, p, dxdt alike).
  void rhs_lanes(double t, int lanes, const double* x, const double* u, const double* p, double* dxdt) const {
    description_->rhs(t, lanes, x, u, p, dxdt, description_->user);
  }

 private:
  std::string file_;
  std::shared_ptr<void> library_;
  const sigmatube_model* description_ = nullptr;
  std::vector<std::string> states_, inputs_, parameter_names_;
  Eigen::VectorXd parameters_;
  std::unique_ptr<Model> outputs_;  // an expression model evaluating the case's derived outputs, or null
};

}  // namespace sigmatube::model
