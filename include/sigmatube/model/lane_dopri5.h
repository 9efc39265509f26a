// SPDX-License-Identifier: MIT
#pragma once
// The dopri5 integrator (model/integrator.h: Dormand–Prince 5(4) with the step
// controller, initial-step guess and dense output of Hairer, Nørsett & Wanner,
// Solving ODEs I, §II.4–II.6) for many closed-loop runs at once, each lane with
// its OWN step control: lane l takes exactly the steps, accepts and rejects
// OdeIntegrator takes for run l alone, so every output equals ClosedLoop::run's
// bit for bit (same IEEE operations in the same order per lane; the lane loops
// are compiled for AVX2 and the x86-64 baseline without FMA, like
// model/lane_kernels.h).
//
// Layout: structure of arrays, value i of lane l at [i·L + l]. Every pass runs
// one attempted step of every lane still integrating; a lane that has reached
// the last report time, diverged or failed is masked (its right-hand side is no
// longer evaluated). The stage arithmetic, the error norm and the step-size
// update run over the lanes; the closed loop at a stage (plan, feedback law,
// saturation, model, disturbance) is evaluated per lane with the one-run path's
// own functions, at the lane's own stage time.
//
// A lane is handed back (ok[l] = 0, the caller reruns it through
// ClosedLoop::run) when it diverges or its step falls below the floor — the
// one-run path then throws the same NumericalError — and when it trips the
// stiffness watchdog, so that the one-run path prints its warning; its outputs
// are the same either way.
#include <cstddef>
#include <cstdint>
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/casefile/case_options.h"
#include "sigmatube/model/closed_loop.h"

// Layer model/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::model {

/// Steps of each lane of one dopri5_lanes call (for tests and benchmarks).
struct LaneStepCounts {
  std::vector<long long> accepted, rejected;
};

/// Runs lanes l = 0 … lanes−1 with perturbations[l] through dopri5 and writes
/// lane l's outputs row-major by time at (rows + l·row_stride)[t·n_out + o], as
/// ClosedLoop::run's outputs(t, o); ok[l] = 1, or 0 when the lane must be rerun
/// alone (see above; its row is then meaningless). `input_low`/`input_high` are
/// the saturation bounds ClosedLoop derived from the case. Allocates once per call.
/// @throws std::logic_error when sizes do not match or the case is not dopri5.
void dopri5_lanes(const ClosedLoop& closed_loop, const casefile::SimulationOptions& simulation,
                  const Eigen::VectorXd& input_low, const Eigen::VectorXd& input_high,
                  const Perturbation* perturbations, int lanes, double* rows, std::size_t row_stride,
                  std::uint8_t* ok, LaneStepCounts* counts = nullptr);

}  // namespace sigmatube::model
