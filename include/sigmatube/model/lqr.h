// SPDX-License-Identifier: MIT
#pragma once
// Linear-quadratic regulator gains for tracking a plan: the model is linearized
// along the plan, A(t) = ∂f/∂x, B(t) = ∂f/∂u at (x_ref(t), u_ff(t), p), and the
// cost ∫ (δxᵀQδx + δuᵀRδu) dt is minimized by δu = −K(t)δx with K = R⁻¹BᵀP
// (Kalman, "Contributions to the theory of optimal control", Bol. Soc. Mat.
// Mexicana 5, 1960; Anderson & Moore, Optimal Control: Linear Quadratic Methods, 1990).
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/model/model.h"
#include "sigmatube/model/plan.h"

// Layer model/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::model {

/// K = R⁻¹BᵀP with P the stabilizing solution of the algebraic Riccati equation.
/// @throws NumericalError when no stabilizing solution exists.
Eigen::MatrixXd lqr_gain(const Eigen::MatrixXd& A, const Eigen::MatrixXd& B, const Eigen::MatrixXd& Q,
                         const Eigen::MatrixXd& R);

/// The plan's linearization at time t: A (n×n), B (n×m).
void linearize_plan(const Model& model, const Plan& plan, const Eigen::VectorXd& parameters, double t,
                    Eigen::MatrixXd& A, Eigen::MatrixXd& B);

/// P(t) and K(t) on a time grid, increasing in time.
struct RiccatiSchedule {
  std::vector<double> times;
  std::vector<Eigen::MatrixXd> cost;  // P(t_k)
  std::vector<Eigen::MatrixXd> gain;  // K(t_k) = R⁻¹B(t_k)ᵀP(t_k)
};

/// Integrates the Riccati differential equation backward along the plan,
///   −dP/dt = AᵀP + PA − PBR⁻¹BᵀP + Q,   P(t_f) = the algebraic solution at t_f,
/// with classical RK4 on a grid that contains every plan knot and is no coarser
/// than `max_step_in_seconds`; each grid interval is further split so that
/// h·‖A − BK‖₁ ≤ 1, inside RK4's stability region for the linearized equation.
/// `terminal_cost`, when given, replaces the algebraic P(t_f) (finite-horizon problems, tests).
/// @throws NumericalError if the terminal algebraic solution fails or P stops being finite.
RiccatiSchedule solve_riccati_differential_equation(const Model& model, const Plan& plan,
                                                    const Eigen::VectorXd& parameters, const Eigen::MatrixXd& Q,
                                                    const Eigen::MatrixXd& R, double max_step_in_seconds,
                                                    const Eigen::MatrixXd* terminal_cost = nullptr);

}  // namespace sigmatube::model
