// SPDX-License-Identifier: MIT
#pragma once
// Moment-based chance-constraint reformulations, per report time, of
// P(c_t < 0) ≤ ε from the clearance mean μ_t and standard deviation σ_t:
//
//   Gaussian   μ − Φ⁻¹(1 − ε)·σ ≥ 0     exact when c_t is normal, may be optimistic
//                                      (unsafe) for skewed or heavy-tailed clearances
//   Cantelli   μ − √((1 − ε)/ε)·σ ≥ 0   valid for every distribution with these two
//                                      moments, from the one-sided Chebyshev inequality
//                                      P(X − μ ≤ −kσ) ≤ 1/(1 + k²) (F. P. Cantelli,
//                                      "Sui confini della probabilità", Atti del Congresso
//                                      Internazionale dei Matematici, Bologna, 1928; citation
//                                      from memory). Tight: a two-point distribution attains it.
//
// Flags are 1 (the reformulation certifies the bound) or 0, at every report time.
#include <cstdint>
#include <string>
#include <vector>

#include <Eigen/Core>

// Layer constraints/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::constraints {

/// Φ⁻¹(1 − ε), computed from the upper tail so small ε keep their digits.
double gaussian_backoff_factor(double epsilon);
/// √((1 − ε)/ε).
double cantelli_backoff_factor(double epsilon);

/// flag_t = [μ_t − Φ⁻¹(1 − ε)σ_t ≥ 0]; NaN moments give 0.
std::vector<std::uint8_t> gaussian_check(const Eigen::VectorXd& mean, const Eigen::VectorXd& std, double epsilon);
/// flag_t = [μ_t − √((1 − ε)/ε)σ_t ≥ 0]; NaN moments give 0.
std::vector<std::uint8_t> cantelli_check(const Eigen::VectorXd& mean, const Eigen::VectorXd& std, double epsilon);

/// A report time where a reformulation and the sampled probability tell different stories.
struct ReformulationDisagreement {
  enum class Kind {
    gaussian_optimistic,   // Gaussian says OK, sampled p > ε  (the dangerous case)
    gaussian_pessimistic,  // Gaussian says not OK, sampled p ≤ ε
    cantelli_optimistic,   // Cantelli says OK, sampled p > ε (only by sampling noise or moment error)
  };
  Kind kind;
  int time_index = 0;
  double time_in_seconds = 0.0;
  double sampled_probability = 0.0;
  std::string describe() const;
};

/// Compares flags with the sampled pointwise probability at each time where the
/// latter is not NaN (NaN marks times outside the window).
std::vector<ReformulationDisagreement> find_reformulation_disagreements(
    const Eigen::VectorXd& times_in_seconds, const std::vector<std::uint8_t>& gaussian_ok,
    const std::vector<std::uint8_t>& cantelli_ok, const Eigen::VectorXd& sampled_probability, double epsilon);

/// One line for a constraint's disagreements: the first one described, then
/// (when there are several) how many of each kind. Empty when there is none.
std::string reformulation_note(const std::vector<ReformulationDisagreement>& found);

}  // namespace sigmatube::constraints
