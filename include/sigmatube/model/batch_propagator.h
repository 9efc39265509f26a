// SPDX-License-Identifier: MIT
#pragma once
// Many closed-loop runs at once, structure of arrays: the state of lane l sits at
// X[i·L + l], so the plan interpolation and the gain at each stage time are
// computed once per batch and the per-lane arithmetic runs in contiguous loops
// the compiler vectorizes. Built-in Hill–Clohessy–Wiltshire dynamics get a
// lane-loop kernel; expression models whose right-hand sides compile to lane
// programs (model/lane_expression.h) run those; any other model is called lane
// by lane.
//
// Same arithmetic, same order, as ClosedLoop::run with the fixed-step rk4
// integrator (model/integrator.h), so every output is bit-identical to the
// one-run path (expression programs: equal to muparser up to rounding); a lane whose state stops being finite or leaves ±1e12 is marked
// failed and the caller reruns it through ClosedLoop::run for the message.
// Supported: rk4, and dopri5 with per-lane step control (model/lane_dopri5.h:
// each lane takes the steps of its run alone, bit-identical too; a lane that
// trips the stiffness watchdog is handed back with ok = 0 like a diverged one).
// The lane loops (src/model/lane_kernels.h) are compiled for AVX2 and for the
// x86-64 baseline and picked at load time; both give the same bits (no FMA
// contraction), so results never depend on the CPU, threads or ranks.
#include <cstddef>
#include <cstdint>
#include <vector>

#include <Eigen/Dense>

#include "sigmatube/casefile/case_options.h"
#include "sigmatube/model/closed_loop.h"
#include "sigmatube/model/lane_expression.h"

// Layer model/ (DEVELOPERS.md: the pipeline, folder by folder).
namespace sigmatube::model {

class PluginModel;

class BatchPropagator {
 public:
  /// `options` must be the case the closed loop was built from.
  BatchPropagator(const ClosedLoop& closed_loop, const casefile::CaseOptions& options);

  /// True when the batched path applies (rk4, or dopri5 through model/lane_dopri5.h).
  bool supported() const { return supported_; }
  /// Instruction set the lane kernels run with on this CPU ("avx512f (whole-step
  /// kernels), avx2", "avx2" or "x86-64 baseline").
  static const char* instruction_set();
  /// Lets the whole-step kernels (built-in HCW; the lane programs' feedback law)
  /// use their AVX-512 versions where the CPU has AVX-512F (the default) or keeps
  /// them at AVX2; the same bits either way (process-wide; for checks and
  /// measurements; not while another thread runs a batch).
  static void allow_avx512(bool on);
  /// True when an expression model's right-hand sides run as lane programs.
  bool compiled_expressions() const { return !programs_.empty(); }
  /// Whole-step lane kernels (on by default: built-in HCW with feedback, and
  /// lane programs with at most four inputs, both without disturbance) or the
  /// stage-by-stage loops; both give the same bits. Off only to check that.
  void use_fused_steps(bool on) { fused_steps_ = on; }

  /// Runs lanes l = 0 … lanes−1 with perturbations[l] and writes lane l's outputs
  /// row-major by time (rows + l·row_stride)[t·n_out + o], as ClosedLoop::run's
  /// outputs(t, o); ok[l] = 1, or 0 when the lane diverged (its row is then
  /// meaningless). Allocates its work arrays once per call, never per step.
  /// @throws std::logic_error when not supported() or sizes do not match.
  void run(const Perturbation* perturbations, int lanes, double* rows, std::size_t row_stride,
           std::uint8_t* ok) const;

 private:
  const ClosedLoop& closed_loop_;
  casefile::SimulationOptions simulation_;
  bool supported_ = false;
  bool hcw_ = false;
  bool fused_steps_ = true;
  const PluginModel* plugin_ = nullptr;  // a model plugin: its rhs takes all lanes at once
  std::vector<LaneExpression> programs_;  // per state, variables t, states, inputs, parameters
  Eigen::VectorXd input_low_, input_high_;
};

}  // namespace sigmatube::model
