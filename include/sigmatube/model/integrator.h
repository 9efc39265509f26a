// SPDX-License-Identifier: MIT
#pragma once
// Integrators for dx/dt = f(t, x) that report the state at given times exactly.
//
// rk4     classical fourth-order Runge–Kutta with a fixed step: each interval
//         between report times is cut into the fewest equal steps no longer
//         than step_in_seconds.
// dopri5  the embedded Runge–Kutta pair 5(4) of Dormand & Prince ("A family of
//         embedded Runge–Kutta formulae", J. Comput. Appl. Math. 6, 1980) with
//         the error norm, the initial-step guess and the Lund-stabilized step
//         controller of Hairer, Nørsett & Wanner (Solving Ordinary Differential
//         Equations I, 2nd ed., 1993, §II.4 and the code DOPRI5):
//           err = sqrt( (1/n) Σ ((x̂_i − x_i) / (atol + rtol·max(|x_i|, |x_new,i|)))² ),
//           h_new = h · clamp(0.9 · err^(−0.2 + 0.75β) · err_old^β, 0.1, 5), β = 0.04,
//         and the fourth-order continuous extension of that code (dense output)
//         to hit report times without shortening steps. The step never exceeds
//         step_in_seconds.
#include <functional>
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/casefile/case_options.h"

// Layer model/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::model {

class OdeIntegrator {
 public:
  using Rhs = std::function<void(double t, const double* x, double* dxdt)>;
  /// Called at each report time with the state there.
  using Observer = std::function<void(std::size_t index, double t, const double* x)>;

  /// Allocates all work arrays for a system of `dimension` states.
  /// @throws InputError if step, rtol or atol is not positive.
  OdeIntegrator(const casefile::SimulationOptions& options, int dimension);

  /// Integrates from report_times.front() (x = the initial state, overwritten by
  /// the final state) through every report time (increasing), calling observe
  /// at each, report_times.front() included. No heap allocation per step.
  /// @throws NumericalError naming `sample`, the time and the state (by
  ///   state_names, when given) when a state is not finite or exceeds
  ///   kDivergenceBound in magnitude, or when the dopri5 step falls below
  ///   1e-12 · (time span).
  void integrate(const Rhs& f, const std::vector<double>& report_times, double* x, const Observer& observe,
                 long long sample = -1, const std::vector<std::string>* state_names = nullptr);

  static constexpr double kDivergenceBound = 1e12;
  /// rk4: more steps than this between two report times is refused (InputError
  /// "simulation.step"; [limits].max_steps normally refuses it earlier).
  static constexpr double kMaxStepsPerSpan = 1e15;
  /// dopri5 stiffness watchdog: once a run has taken more than
  /// max(kWatchdogMinimumSteps, kWatchdogFactor · plan length / step) steps, one
  /// warning per process goes to stderr naming the run, the time, the step and the state.
  static constexpr double kWatchdogFactor = 100.0;
  static constexpr double kWatchdogMinimumSteps = 10000.0;

  /// Counters of the last integrate() call.
  long long steps_accepted() const { return accepted_; }
  long long steps_rejected() const { return rejected_; }
  long long rhs_evaluations() const { return evaluations_; }

 private:
  void integrate_rk4(const Rhs& f, const std::vector<double>& times, double* x, const Observer& observe);
  void integrate_dopri5(const Rhs& f, const std::vector<double>& times, double* x, const Observer& observe);
  void check_state(double t, const double* x) const;
  void warn_stiff(double t, double plan_length, double h, double expected_steps, const double* x) const;

  casefile::SimulationOptions options_;
  int n_;
  long long sample_ = -1;
  const std::vector<std::string>* names_ = nullptr;
  long long accepted_ = 0, rejected_ = 0, evaluations_ = 0;
  // work arrays
  Eigen::VectorXd k1_, k2_, k3_, k4_, k5_, k6_, k7_, y_, ynew_, err_, dense_;
  Eigen::VectorXd r1_, r2_, r3_, r4_, r5_;
};

}  // namespace sigmatube::model
