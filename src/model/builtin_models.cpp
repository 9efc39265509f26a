// SPDX-License-Identifier: MIT
#include "sigmatube/model/builtin_models.h"

#include <cmath>

namespace sigmatube::model {

BuiltinModel::BuiltinModel(std::string name, std::vector<std::string> states,
                           std::vector<std::string> inputs, std::vector<std::string> parameter_names,
                           Eigen::VectorXd defaults)
    : name_(std::move(name)),
      states_(std::move(states)),
      inputs_(std::move(inputs)),
      parameter_names_(std::move(parameter_names)),
      parameters_(std::move(defaults)) {}

namespace {
const std::vector<std::string> kPositionVelocity{"x", "y", "z", "vx", "vy", "vz"};

Eigen::VectorXd values(std::initializer_list<double> list) {
  Eigen::VectorXd v(static_cast<Eigen::Index>(list.size()));
  Eigen::Index i = 0;
  for (double value : list) v(i++) = value;
  return v;
}

void zero(double* a, int count) {
  for (int i = 0; i < count; ++i) a[i] = 0.0;
}
}  // namespace

std::string BuiltinModel::unit(const std::string& n) const {
  if (n == "x" || n == "y" || n == "z") return "m";
  if (n == "vx" || n == "vy" || n == "vz" || n == "speed") return "m/s";
  if (n == "ax" || n == "ay" || n == "az") return "m/s^2";
  if (n == "fx" || n == "fy" || n == "fz") return "N";
  if (n == "heading") return "rad";
  if (n == "turn_rate") return "rad/s";
  return "";
}

const std::vector<std::string>& builtin_model_names() {
  static const std::vector<std::string> names{"hill-clohessy-wiltshire", "double-integrator-3d", "unicycle",
                                              "multirotor-point-mass"};
  return names;
}

// ---------------------------------------------------------------- HCW
HillClohessyWiltshire::HillClohessyWiltshire()
    : BuiltinModel("hill-clohessy-wiltshire", kPositionVelocity, {"ax", "ay", "az"}, {"mean_motion"},
                   values({kDefaultMeanMotion})) {}

void HillClohessyWiltshire::rhs(double, const double* x, const double* u, const double* p,
                                double* dxdt) const {
  const double n = p[0];
  dxdt[0] = x[3];
  dxdt[1] = x[4];
  dxdt[2] = x[5];
  dxdt[3] = 3.0 * n * n * x[0] + 2.0 * n * x[4] + u[0];
  dxdt[4] = -2.0 * n * x[3] + u[1];
  dxdt[5] = -n * n * x[2] + u[2];
}

void HillClohessyWiltshire::jacobians(double, const double*, const double*, const double* p, double* A,
                                      double* B) const {
  const double n = p[0];
  zero(A, 36);
  zero(B, 18);
  auto a = [A](int i, int j) -> double& { return A[i + 6 * j]; };
  a(0, 3) = a(1, 4) = a(2, 5) = 1.0;
  a(3, 0) = 3.0 * n * n;
  a(3, 4) = 2.0 * n;
  a(4, 3) = -2.0 * n;
  a(5, 2) = -n * n;
  B[3 + 6 * 0] = B[4 + 6 * 1] = B[5 + 6 * 2] = 1.0;
}

// ---------------------------------------------------------------- double integrator
DoubleIntegrator3d::DoubleIntegrator3d()
    : BuiltinModel("double-integrator-3d", kPositionVelocity, {"ax", "ay", "az"}, {"drag"}, values({0.0})) {}

void DoubleIntegrator3d::rhs(double, const double* x, const double* u, const double* p, double* dxdt) const {
  for (int i = 0; i < 3; ++i) {
    dxdt[i] = x[3 + i];
    dxdt[3 + i] = u[i] - p[0] * x[3 + i];
  }
}

void DoubleIntegrator3d::jacobians(double, const double*, const double*, const double* p, double* A,
                                   double* B) const {
  zero(A, 36);
  zero(B, 18);
  for (int i = 0; i < 3; ++i) {
    A[i + 6 * (3 + i)] = 1.0;
    A[(3 + i) + 6 * (3 + i)] = -p[0];
    B[(3 + i) + 6 * i] = 1.0;
  }
}

// ---------------------------------------------------------------- unicycle
Unicycle::Unicycle()
    : BuiltinModel("unicycle", {"x", "y", "heading"}, {"speed", "turn_rate"}, {"slip"}, values({0.0})) {}

void Unicycle::rhs(double, const double* x, const double* u, const double* p, double* dxdt) const {
  const double speed = (1.0 - p[0]) * u[0];
  dxdt[0] = speed * std::cos(x[2]);
  dxdt[1] = speed * std::sin(x[2]);
  dxdt[2] = u[1];
}

void Unicycle::jacobians(double, const double* x, const double* u, const double* p, double* A,
                         double* B) const {
  const double k = 1.0 - p[0];
  const double c = std::cos(x[2]), s = std::sin(x[2]);
  zero(A, 9);
  zero(B, 6);
  A[0 + 3 * 2] = -k * u[0] * s;
  A[1 + 3 * 2] = k * u[0] * c;
  B[0 + 3 * 0] = k * c;
  B[1 + 3 * 0] = k * s;
  B[2 + 3 * 1] = 1.0;
}

// ---------------------------------------------------------------- multirotor
MultirotorPointMass::MultirotorPointMass()
    : BuiltinModel("multirotor-point-mass", kPositionVelocity, {"fx", "fy", "fz"},
                   {"mass", "drag_area", "wind_x", "wind_y", "wind_z", "gravity"},
                   values({1.5, 0.05, 0.0, 0.0, 0.0, 9.80665})) {}

void MultirotorPointMass::rhs(double, const double* x, const double* u, const double* p, double* dxdt) const {
  const double mass = p[0], drag_area = p[1], gravity = p[5];
  const double r0 = x[3] - p[2], r1 = x[4] - p[3], r2 = x[5] - p[4];
  const double speed = std::sqrt(r0 * r0 + r1 * r1 + r2 * r2);
  const double k = drag_area * speed / mass;
  dxdt[0] = x[3];
  dxdt[1] = x[4];
  dxdt[2] = x[5];
  dxdt[3] = u[0] / mass - k * r0;
  dxdt[4] = u[1] / mass - k * r1;
  dxdt[5] = u[2] / mass - k * r2 - gravity;
}

void MultirotorPointMass::jacobians(double, const double* x, const double*, const double* p, double* A,
                                    double* B) const {
  const double mass = p[0], drag_area = p[1];
  const double r[3] = {x[3] - p[2], x[4] - p[3], x[5] - p[4]};
  const double speed = std::sqrt(r[0] * r[0] + r[1] * r[1] + r[2] * r[2]);
  zero(A, 36);
  zero(B, 18);
  for (int i = 0; i < 3; ++i) {
    A[i + 6 * (3 + i)] = 1.0;
    B[(3 + i) + 6 * i] = 1.0 / mass;
  }
  // ∂(|r| r)/∂r = |r|·I + r rᵀ/|r|, which tends to 0 as r → 0 (the drag is C¹ there).
  if (speed > 0.0) {
    for (int i = 0; i < 3; ++i)
      for (int j = 0; j < 3; ++j)
        A[(3 + i) + 6 * (3 + j)] = -drag_area / mass * ((i == j ? speed : 0.0) + r[i] * r[j] / speed);
  }
}

}  // namespace sigmatube::model
