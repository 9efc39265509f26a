// SPDX-License-Identifier: MIT
#pragma once
// A continuous-time dynamic model  dx/dt = f(t, x, u, p)  with optional derived
// outputs y = g(t, x, u, p). Built-ins are compiled C++ (model/builtin_models.h);
// expression models are read from a case file (model/expression_model.h).
#include <memory>
#include <string>
#include <vector>

#include <Eigen/Dense>

// Layer model/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::model {

class Model {
 public:
  virtual ~Model() = default;

  virtual std::string name() const = 0;
  virtual const std::vector<std::string>& state_names() const = 0;
  virtual const std::vector<std::string>& input_names() const = 0;
  virtual const std::vector<std::string>& parameter_names() const = 0;
  /// Derived outputs only (states are always outputs too, listed first by callers).
  virtual const std::vector<std::string>& derived_output_names() const = 0;
  /// Parameter values after the case file's overrides, in parameter_names() order.
  virtual Eigen::VectorXd parameters() const = 0;

  int state_count() const { return static_cast<int>(state_names().size()); }
  int input_count() const { return static_cast<int>(input_names().size()); }
  int parameter_count() const { return static_cast<int>(parameter_names().size()); }
  int derived_output_count() const { return static_cast<int>(derived_output_names().size()); }

  /// dxdt = f(t, x, u, p). Must not allocate and must be safe to call from many
  /// threads at once on the same object.
  virtual void rhs(double t, const double* x, const double* u, const double* p, double* dxdt) const = 0;

  /// A = ∂f/∂x (n×n) and B = ∂f/∂u (n×m), column-major. The default uses central
  /// differences with step h_i = cbrt(eps)·max(1, |z_i|); built-ins override it
  /// with analytic Jacobians.
  virtual void jacobians(double t, const double* x, const double* u, const double* p, double* A,
                         double* B) const;

  /// The unit of a state, input or derived output ("" when the model does not say).
  /// Built-ins carry their own; a case file's [model] units override them.
  virtual std::string unit(const std::string& name) const;

  /// y = g(t, x, u, p), derived_output_count() values. Default: none.
  virtual void derived_outputs(double t, const double* x, const double* u, const double* p, double* y) const;
};

}  // namespace sigmatube::model
