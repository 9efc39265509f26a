// SPDX-License-Identifier: MIT
#pragma once
// The compiled built-in models of the case-file contract (names, states, inputs
// and parameters are fixed by docs and must not change). Each has analytic
// Jacobians. Parameter defaults are documented beside each class; the numbers
// for the multirotor are an invented, plausible small vehicle.
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/model/model.h"

// Layer model/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::model {

/// Shared bookkeeping of the built-ins: fixed names, overridable parameters.
class BuiltinModel : public Model {
 public:
  std::string name() const override { return name_; }
  const std::vector<std::string>& state_names() const override { return states_; }
  const std::vector<std::string>& input_names() const override { return inputs_; }
  const std::vector<std::string>& parameter_names() const override { return parameter_names_; }
  const std::vector<std::string>& derived_output_names() const override { return no_outputs_; }
  Eigen::VectorXd parameters() const override { return parameters_; }
  /// SI units of the states and inputs (docs/case-file.md, "Built-in models").
  std::string unit(const std::string& name) const override;
  /// Replaces parameter `index` (parameter_names() order).
  void set_parameter(int index, double value) { parameters_(index) = value; }

 protected:
  BuiltinModel(std::string name, std::vector<std::string> states, std::vector<std::string> inputs,
               std::vector<std::string> parameter_names, Eigen::VectorXd defaults);

 private:
  std::string name_;
  std::vector<std::string> states_, inputs_, parameter_names_, no_outputs_;
  Eigen::VectorXd parameters_;
};

/// "hill-clohessy-wiltshire": relative motion near a circular orbit with mean
/// motion n, x radial, y along-track, z cross-track (Clohessy & Wiltshire,
/// "Terminal guidance system for satellite rendezvous", J. Aerospace Sci. 27(9), 1960):
///   ẍ = 3n²x + 2nẏ + a_x,   ÿ = −2nẋ + a_y,   z̈ = −n²z + a_z.
/// Parameter mean_motion [rad/s], default 0.00113 rad/s (a circular orbit of
/// roughly 400 km altitude, period ≈ 5560 s).
class HillClohessyWiltshire final : public BuiltinModel {
 public:
  static constexpr double kDefaultMeanMotion = 0.00113;
  HillClohessyWiltshire();
  void rhs(double t, const double* x, const double* u, const double* p, double* dxdt) const override;
  void jacobians(double t, const double* x, const double* u, const double* p, double* A,
                 double* B) const override;
};

/// "double-integrator-3d": ṙ = v, v̇ = a − drag·v. Parameter drag [1/s], default 0.
class DoubleIntegrator3d final : public BuiltinModel {
 public:
  DoubleIntegrator3d();
  void rhs(double t, const double* x, const double* u, const double* p, double* dxdt) const override;
  void jacobians(double t, const double* x, const double* u, const double* p, double* A,
                 double* B) const override;
};

/// "unicycle": ẋ = (1 − slip)·speed·cos(heading), ẏ = (1 − slip)·speed·sin(heading),
/// heading' = turn_rate; heading in radians. Parameter slip [-], default 0.
class Unicycle final : public BuiltinModel {
 public:
  Unicycle();
  void rhs(double t, const double* x, const double* u, const double* p, double* dxdt) const override;
  void jacobians(double t, const double* x, const double* u, const double* p, double* A,
                 double* B) const override;
};

/// "multirotor-point-mass": z up, thrust force f [N],
///   ṙ = v,  m·v̇ = f − m·g·e_z − drag_area·|v − w|·(v − w)
/// with wind w = (wind_x, wind_y, wind_z) [m/s]. drag_area [kg/m] lumps
/// ½·air density·drag coefficient·area. Defaults (invented vehicle): mass 1.5 kg,
/// drag_area 0.05 kg/m, no wind, gravity 9.80665 m/s² (standard gravity, CGPM 1901).
class MultirotorPointMass final : public BuiltinModel {
 public:
  MultirotorPointMass();
  void rhs(double t, const double* x, const double* u, const double* p, double* dxdt) const override;
  void jacobians(double t, const double* x, const double* u, const double* p, double* A,
                 double* B) const override;
};

/// The contract names of the built-ins, in documentation order.
const std::vector<std::string>& builtin_model_names();

}  // namespace sigmatube::model
