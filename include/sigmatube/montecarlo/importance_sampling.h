// SPDX-License-Identifier: MIT
#pragma once
// Rare-event probabilities (bounds ≤ 1e-4) by importance sampling around the most
// probable violation point, in standard-normal germ space z (ξ_j = F_j⁻¹(Φ(z_j))).
//
// Most probable point (design point): z* = argmin ‖z‖ subject to g(z) ≤ 0, g the
// limit-state function (for us the surrogate's path-minimum clearance), β = ‖z*‖.
// Found by HL-RF iterations (Hasofer & Lind, "Exact and invariant second-moment code
// format", J. Eng. Mech. Div. ASCE 100, 1974; Rackwitz & Fiessler, "Structural
// reliability under combined random load sequences", Computers & Structures 9, 1978):
//     z_{k+1} = [(∇g(z_k)·z_k − g(z_k)) / ‖∇g(z_k)‖²] ∇g(z_k),
// with central finite-difference gradients and a step-halving line search on the merit
// ½‖z‖² + c|g| (Zhang & Der Kiureghian, "Finite element reliability methods for
// inelastic structures", UCB/SEMM-97/05, 1997) so that curved limit states converge.
// For a linear g(z) = β − a·z/‖a‖, p = Φ(−β) exactly and one step reaches z* = βa/‖a‖.
//
// Importance sampling (proposal N(z*, I)): sample i uses
//     z_i = z* + u_i,  u_ij = CounterRng(seed + stream).normal(i, j),
//     w_i = φ(z_i)/φ(z_i − z*) = exp(−z*·z_i + ‖z*‖²/2),
//     p̂ = (1/N) Σ w_i 1[violation_i]   over all N runs (a failed run counts safe here),
//     p̂⁺ = (1/N) Σ w_i (1[violation_i] + 1[failed_i])   (failed runs counted as violations),
//     se = s/√N with s² the sample variance of w_i 1[violation_i],
//     CoV = se/p̂ (the estimator's coefficient of variation; +∞ when p̂ = 0),
//     interval p̂ ± Φ⁻¹((1 + confidence)/2)·se, clipped at 0 (normal approximation),
//     ESS = (Σ_viol w_i)² / Σ_viol w_i², Kish's effective sample size (L. Kish, Survey
//         Sampling, Wiley 1965) of the violating runs' weights: the number of equally
//         weighted violations the estimate rests on (≈ 1/CoV² for large N). One
//         dominant weight gives ESS ≈ 1 and an interval that cannot be trusted.
// Adaptive: runs go in batches of `batch_size` (sample indices 0, 1, … in order) until
// CoV ≤ cov_target with at least kMinimumViolations = 10 violations (common practice
// for the normal approximation), or `samples` runs are spent; `converged` says which.
// cov_target = 0 runs exactly `samples` runs.
// Chunks of fixed size are merged in chunk order: bit-identical for any thread count.
//
// Mixture proposal (several design points, defensive component): a failure domain made
// of several regions (e.g. a corridor left on either side, or at different times of a
// window) is under-sampled by N(z*, I) around one of them, and the rare samples that hit
// another region carry huge weights. MixtureProposal samples
//     q(z) = α₀ φ(z) + Σ_k α_k φ(z − c_k),   α₀ + Σ_k α_k = 1,
// the defensive mixture of T. Hesterberg ("Weighted average importance sampling and
// defensive mixture distributions", Technometrics 37, 1995) with one normal component
// per design point c_k. Sample i takes its component from u = CounterRng(seed +
// stream).uniform(i, d) (cumulative shares α₀, α₁, …; c_0 = 0), z_i = c_{k_i} + u_i and
//     w_i = φ(z_i)/q(z_i) = 1 / (α₀ + Σ_k α_k exp(c_k·z_i − ‖c_k‖²/2)),
// the full mixture density in every weight, so the estimate is unbiased for any shares,
// and every weight is ≤ 1/α₀ when α₀ > 0 (Owen & Zhou, "Safe and effective importance
// sampling", J. Amer. Statist. Assoc. 95, 2000). One centre with α₀ = 0 is the N(z*, I)
// proposal above, with the same draws.
#include <functional>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include <Eigen/Core>

#include "sigmatube/constraints/constraint.h"
#include "sigmatube/germ/family.h"

// Layer montecarlo/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::montecarlo {

/// Limit state in standard-normal space; g ≤ 0 is a violation.
using LimitState = std::function<double(const Eigen::VectorXd& z)>;

/// The starting point HL-RF should use: the row of z ([N, d], standard-normal germ
/// points of surrogate samples) with g < 0 and the smallest ‖z‖; empty when no row violates.
std::optional<Eigen::VectorXd> closest_violating_sample(const Eigen::MatrixXd& z, const Eigen::VectorXd& g);

struct MostProbablePointOptions {
  int max_iterations = 1000;  // HL-RF converges linearly on curved limit states (ratio ≈ β·curvature)
  double tolerance = 1e-10;              // stop when ‖z_{k+1} − z_k‖ ≤ tolerance·max(1, ‖z_k‖) and |g| small
  double limit_state_tolerance = 1e-9;   // |g(z*)| ≤ this·max(1, |g(0)|)
  double gradient_step = 1e-5;           // central differences: ∂g/∂z_j ≈ (g(z + h e_j) − g(z − h e_j))/2h
};

struct MostProbablePoint {
  Eigen::VectorXd z;
  double beta = 0.0;          // ‖z*‖
  double limit_state = 0.0;   // g(z*)
  int iterations = 0;
  bool converged = false;
};

/// @param start  e.g. the violating surrogate sample with the smallest ‖z‖; else the origin.
/// @throws NumericalError when the gradient of g vanishes.
MostProbablePoint find_most_probable_point(const LimitState& g, int dimension,
                                           const std::optional<Eigen::VectorXd>& start = std::nullopt,
                                           const MostProbablePointOptions& options = {});

/// q(z) = defensive·φ(z) + Σ_k shares_k φ(z − centres_k); shares and defensive ≥ 0, summing to 1.
struct MixtureProposal {
  std::vector<Eigen::VectorXd> centres;  // design points, most probable first
  std::vector<double> shares;            // α_k, one per centre
  double defensive = 0.0;                // α₀, the share of plain N(0, I) draws

  /// The single-design-point proposal N(z*, I).
  static MixtureProposal around(const Eigen::VectorXd& design_point) { return {{design_point}, {1.0}, 0.0}; }
};

/// Several design points, for a failure domain of several regions (multiple design points:
/// A. Der Kiureghian & T. Dakessian, "Multiple design points in first and second-order
/// reliability", Structural Safety 20, 1998; here found by multi-start HL-RF). Starts are the
/// violating rows of `screen` (standard-normal points, g_screen their limit-state values)
/// in order of ‖z‖, each skipped when its direction is within `separation_cosine` of an
/// earlier start, at most max_points of them (the origin when no row violates). Each
/// start is run to its design point; points within `duplicate_distance`·max(1, β) of a
/// more probable one are dropped, and so are points whose first-order probability
/// Φ(−β_k) is below relevance·Φ(−β_min). Most probable first.
struct DesignPointSearchOptions {
  int max_points = 4;
  double separation_cosine = 0.8;   // cos 37°: starts closer in direction find the same region (common practice)
  double duplicate_distance = 0.05;
  double relevance = 1e-2;          // regions adding < 1 % of the first-order estimate are left to the defensive share
  MostProbablePointOptions hlrf;
};

std::vector<MostProbablePoint> find_design_points(const LimitState& g, const Eigen::MatrixXd& screen,
                                                  const Eigen::VectorXd& g_screen,
                                                  const DesignPointSearchOptions& options = {});

/// The proposal over design points: shares ∝ Φ(−β_k) (their first-order probabilities),
/// scaled to 1 − defensive.
MixtureProposal mixture_over(const std::vector<MostProbablePoint>& design_points, double defensive);

struct ImportanceSamplingOptions {
  long long samples = 5000;
  unsigned long long seed = 20261201ULL;
  unsigned long long stream = 1;  // added to the seed so these draws differ from the Monte Carlo ones
  double confidence = 0.95;
  long long chunk_size = 64;
  int threads = 0;
  int reported_failures = 5;
  double cov_target = 0.0;       // 0: no early stop
  long long batch_size = 500;    // runs between convergence checks
};

inline constexpr long long kMinimumViolations = 10;

struct ImportanceSamplingResult {
  long long samples = 0;             // run (≤ the requested maximum)
  long long successful_samples = 0;
  long long failed_samples = 0;
  std::vector<std::pair<long long, std::string>> first_failures;
  long long violations = 0;          // unweighted count of violating samples
  double probability = 0.0;
  double standard_error = 0.0;
  double lower = 0.0, upper = 0.0;   // normal approximation, lower clipped at 0
  double effective_sample_size = 0.0;  // Kish, over the violating runs' weights
  double coefficient_of_variation = 0.0;
  double pessimistic_probability = 0.0;  // failed runs counted as violations
  bool converged = false;              // CoV target met (always false without a target)
  Eigen::VectorXd design_point;        // the proposal's first (most probable) centre
};

/// Generic estimator: violated(z, sample, &error) returns 1 (violation), 0 (safe) or
/// −1 (the run failed; *error says why).
using ViolationIndicator = std::function<int(const Eigen::VectorXd& z, long long sample, std::string* error)>;
ImportanceSamplingResult importance_sample(const Eigen::VectorXd& design_point, const ViolationIndicator& violated,
                                           const ImportanceSamplingOptions& options = {});

/// @throws std::logic_error for an empty proposal, negative shares, shares not summing to
/// 1 or centres of different sizes.
ImportanceSamplingResult importance_sample(const MixtureProposal& proposal, const ViolationIndicator& violated,
                                           const ImportanceSamplingOptions& options = {});

/// The full model at a standard-normal point z: fill outputs[t·n_out + o]; false on failure.
using RunStandardNormalSample = std::function<bool(const double* z, long long sample, double* outputs, std::string* error)>;

/// Importance sampling of one constraint's path violation (any report time in its
/// window with clearance < 0) with the full model.
ImportanceSamplingResult importance_sample_constraint(const MixtureProposal& proposal,
                                                      const constraints::Constraint& constraint,
                                                      const Eigen::VectorXd& times_in_seconds, int n_outputs,
                                                      const RunStandardNormalSample& run,
                                                      const ImportanceSamplingOptions& options = {});

/// Adapts a germ-space model run (monte_carlo.h RunSample signature) to z:
/// ξ_j = from_standard_normal(families_j, z_j).
RunStandardNormalSample in_standard_normal_space(
    const std::vector<germ::FamilySpec>& families,
    std::function<bool(const double* xi, long long sample, double* outputs, std::string* error)> run_in_germ_space);

}  // namespace sigmatube::montecarlo
