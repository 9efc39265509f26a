// SPDX-License-Identifier: MIT
#pragma once
// A deterministic tube around the nominal run: a bound r(t) on ‖p(t) − p_nom(t)‖
// (p = the `[tube] position` states) that holds for every realisation of the
// uncertain inputs inside their bounds, for the closed loop linearized along the
// plan,
//   ė = A_cl(t) e + w(t),   A_cl = A − B K(t),   e(t0) = e0,
// where w collects the disturbance, input bias, the feedforward part of an
// nominal command, and the first-order effect of parameter errors. With a metric
// V = eᵀP(t)e and M(t) = −(Ṗ + A_clᵀP + P A_cl), the contraction rate is
//   λ(t) = ½ λmin(M, P) − γ(t)    (generalized eigenvalue; γ: the input-scale
//                                  error's state-dependent part, ‖U B diag(δs) K U⁻¹‖)
// and the comparison lemma gives for ρ = ‖e‖_P (Tsukamoto, Chung & Slotine,
// "Contraction theory for nonlinear stability analysis and learning-based
// control: a tutorial overview", Annu. Rev. Control 52, 2021, Thm. 3 and its
// comparison-lemma proof; Khalil, Nonlinear Systems, 3rd ed., 2002, Lemma 3.4):
//   ρ(t) ≤ e^{−λt} ρ0 + w̄_P (1 − e^{−λt}) / λ     (λ, w̄_P constant)
// solved exactly interval by interval with the smallest rate and the largest
// disturbance sampled on the interval, and
//   r(t) = ρ(t) · √λmax(C P(t)⁻¹ Cᵀ)  ≤  √(λmax(P)/λmin(P)) · (…)  (C selects p).
// Metric: the time-varying LQR loop uses its Riccati cost-to-go P(t) (then
// M = Q − PBR⁻¹BᵀP + KᵀBᵀP + PBK, = Q + KᵀRK where K = R⁻¹BᵀP); any other loop a
// constant P from a small search over Lyapunov solutions
//   (Ā + μI)ᵀP + P(Ā + μI) = −I,  μ = f·(−α(Ā)),  Ā = A_cl(t0), α = spectral abscissa,
// plus P = I, keeping the one whose radius has the smallest mean over the
// report times. Where λ ≤ 0 the loop does not contract: the radius is NaN ("no
// bound") from there on.
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/casefile/case_options.h"
#include "sigmatube/model/closed_loop.h"

namespace sigmatube::model {

/// One bound per perturbation target, |deviation from nominal| ≤ value.
struct TubeInputBounds {
  Eigen::VectorXd initial;      // [n_states]
  Eigen::VectorXd disturbance;  // [n_states]
  Eigen::VectorXd input_bias;   // [n_inputs]
  Eigen::VectorXd input_scale;  // [n_inputs], |scale − 1|
  Eigen::VectorXd parameters;   // [n_params], |p − p_nominal|
  std::vector<std::string> assumptions;  // one line per input: support or k-sigma bound
};

/// Bounds from each input's support (uniform, beta, triangular, truncated
/// normal) or, for unbounded ones, mean ± sigma·std (normal, gaussian-process,
/// lognormal and gamma through their own mean and std, clipped to the support).
/// Targets as in germ/germ.h; an unknown target throws InputError.
TubeInputBounds tube_input_bounds(const std::vector<casefile::UncertainOptions>& inputs, const Model& model,
                                  double sigma);

struct DeterministicTube {
  std::vector<double> time;         // report times
  Eigen::VectorXd radius;           // [T], NaN where there is no bound
  Eigen::VectorXd rate;             // [T], λ(t) at the report times, 1/s
  Eigen::MatrixXd metric;           // P(t0)
  std::string metric_kind;          // what P is (text for the report)
  bool time_invariant = false;      // A_cl constant along the plan
  bool bounded = true;              // radius finite at every report time
  std::string no_bound_reason;      // when !bounded
  std::vector<std::string> assumptions;
};

/// Solves AᵀP + PA = −Q (Kronecker form; n ≤ 30). Throws NumericalError if singular.
Eigen::MatrixXd lyapunov_solution(const Eigen::MatrixXd& A, const Eigen::MatrixXd& Q);

/// The tube of `closed_loop` for the position states `position` (state names;
/// InputError at `where` for a name that is not a state).
DeterministicTube deterministic_tube(const ClosedLoop& closed_loop, const casefile::CaseOptions& options,
                                     const std::vector<std::string>& position, double sigma,
                                     const SourceLocation& where);

}  // namespace sigmatube::model
