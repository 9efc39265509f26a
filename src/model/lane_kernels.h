// SPDX-License-Identifier: MIT
#pragma once
// Lane kernels of the batched closed loop (model/batch_propagator.h): loops over
// lanes l = 0 … L−1 of structure-of-arrays data (value i of lane l at [i·L + l]),
// written so that GCC vectorizes them, and compiled twice by function
// multi-versioning (SIGMATUBE_LANE_TARGETS): once for AVX2 and once for the
// x86-64 baseline (SSE2). The loader picks the version for the CPU it runs on
// (GNU ifunc), so one binary uses 4-wide AVX2 where present and stays correct
// elsewhere. The whole-step kernels have a third, AVX-512 version with eight
// lanes per vector (hcw_rk4_step and program_rk4_step pick it at run time; the
// lane programs' version runs their feedback law eight lanes wide).
//
// Bit-identical on every CPU: the AVX2 and AVX-512 versions do not enable FMA, so no
// multiply–add is contracted, and both versions perform the IEEE operations of
// the one-run path (ClosedLoop::run) in the same order per lane. Vector and scalar
// IEEE add, multiply, divide and square root round alike, so the results equal
// the scalar path bit for bit, for any CPU, thread count or rank count
// (tests/unit/batch_propagator_test.cpp compares them with memcmp). The files
// holding these kernels are compiled with -fno-trapping-math (the selects below
// may then be if-converted; no value changes) — see CMakeLists.txt.
#include <cstddef>
#include <cstdint>

#if defined(__GNUC__) && defined(__x86_64__) && !defined(SIGMATUBE_NO_MULTIVERSIONING)
#define SIGMATUBE_LANE_TARGETS __attribute__((target_clones("avx2", "default")))
#else
#define SIGMATUBE_LANE_TARGETS
#endif

namespace sigmatube::model::lanes {

/// Name of the instruction set the lane kernels run with on this CPU
/// ("avx512f (whole-step kernels), avx2", "avx2" or "x86-64 baseline").
const char* active_target();
/// The whole-step kernels also have AVX-512 versions (eight lanes per vector,
/// no FMA), used where the CPU has AVX-512F unless switched off here
/// (for checks: the results are the same bits either way).
void allow_avx512(bool on);

/// Values of the closed loop at one stage time, shared by all lanes.
struct StageTerms {
  const double* x_ref;  // n
  const double* u_ff;   // m
  const double* gain;   // m·n, Kt(i, j) at [i·n + j]
};

/// Per-lane constants of the HCW closed loop.
struct HcwLanes {
  const double* scale;        // [3][L]
  const double* bias;         // [3][L]
  const double* low;          // 3 (shared)
  const double* high;         // 3 (shared)
  const double* mean_motion;  // [L]
};

/// One RK stage of the HCW closed loop for all lanes (6 states, 3 inputs):
///   u = u_ff − K (x − x_ref)  (Controller::command: j outer, i inner, e = 0 skipped),
///   a = clamp(scale·u + bias, low, high),  dx = HillClohessyWiltshire::rhs(x, a, n).
/// Writes u (u_cmd) and a (u_app) too.
void hcw_stage(std::size_t L, const double* x, const StageTerms& s, const HcwLanes& c, double* u_cmd, double* u_app,
               double* dx);

/// One whole classical RK4 step of the HCW closed loop for all lanes, in
/// registers: the stages at t (a), t + h/2 (b) and t + h (c), combined as
/// OdeIntegrator::integrate_rk4 does. ok[l] is cleared when the new state is not
/// finite or leaves ±bound. Reads x, writes x_next (distinct arrays).
void hcw_rk4_step(std::size_t L, const double* x, double* x_next, double h, const StageTerms& a, const StageTerms& b, const StageTerms& c,
                  const HcwLanes& lanes, double bound, std::uint8_t* ok);

/// A lane program in accumulator form, run on blocks of kProgramBlock lanes by
/// program_rk4_step. The block workspace is a list of rows of kProgramBlock lanes:
/// rows 0 … V−1 are the variables of the right-hand sides (t, states, inputs,
/// parameters, in LaneExpression's order), then one result row per state, then
/// the programs' scratch slots and constant rows. An op computes
///   acc = (load_a ? row a : acc) (kind) row b,  stored to row out when `store`,
/// so that a chain of instructions on one slot stays in registers. The
/// arithmetic per lane is that of LaneExpression::evaluate (the same IEEE
/// operations on the same operands, in the same order).
struct BlockOp {
  enum class Kind : int { copy, add, sub, mul, div, pow, square, neg, function, min, max } kind = Kind::copy;
  int a = 0, b = 0, out = 0;
  bool load_a = true, store = true;
  double (*function)(double) = nullptr;
};
/// Lanes per block of program_rk4_step (and per workspace row).
constexpr std::size_t kProgramBlock = 32;

/// An expression model's closed loop for program_rk4_step.
struct ProgramStep {
  int n = 0, m = 0;               // states, inputs (m ≤ 4)
  int n_params = 0;
  const int* result_rows = nullptr;  // n: the row holding state i's derivative (its own
                                     // row, or a variable row its program only copies)
  int rows = 0;                   // rows of the programs (variables, results, slots, constants)
  const BlockOp* ops = nullptr;   // all states' programs, state 0 first
  std::size_t op_count = 0;
  const double* constants = nullptr;  // value of constant row rows − constant_count + c
  int constant_count = 0;
  bool feedback = true;           // false: u_cmd = u_ff (open loop)
  const double* scale = nullptr;  // [m][L]
  const double* bias = nullptr;   // [m][L]
  const double* low = nullptr;    // m (shared)
  const double* high = nullptr;   // m (shared)
  const double* params = nullptr; // [n_params][L]
};
/// The block programs keep their lanes in a workspace of their own between
/// steps, kProgramBlock lanes per block (state, parameters, input scale and
/// bias, a per-lane finiteness record): program_blocks_work_size doubles for L
/// lanes; program_blocks_load copies x [n][L] (and p's per-lane values) in;
/// program_blocks_store copies the state back to x and clears ok[l] for a lane
/// whose state was, after any step, not finite or beyond ±bound.
std::size_t program_blocks_work_size(std::size_t L, const ProgramStep& p);
void program_blocks_load(std::size_t L, const double* x, const ProgramStep& p, double* work);
void program_blocks_store(std::size_t L, const ProgramStep& p, const double* work, double* x, std::uint8_t* ok);

/// One whole classical RK4 step of an expression model's closed loop for all
/// lanes of the workspace, block by block with the block's state, stages,
/// inputs and program registers in L1: per stage the closed_loop_inputs
/// arithmetic, the programs, then the combination of OdeIntegrator::integrate_rk4;
/// then the check of check_lanes. The same values, bit for bit, as the
/// stage-by-stage path of BatchPropagator::run (closed_loop_inputs,
/// LaneExpression::evaluate, axpy, rk4_combine, check_lanes).
void program_rk4_step(std::size_t L, double t, double h, const StageTerms& a, const StageTerms& b, const StageTerms& c,
                      const ProgramStep& p, double bound, double* work);

/// u_cmd = u_ff − Kt (x − x_ref) (e = 0 skipped, as Controller::command) and
/// u_app = clamp(scale·u_cmd + bias, low, high), for every lane; any n and m.
/// `error` holds L doubles of scratch. `feedback` false: u_cmd = u_ff.
void closed_loop_inputs(std::size_t L, int n, int m, const double* x, const StageTerms& s, bool feedback,
                        const double* scale, const double* bias, const double* low, const double* high, double* error,
                        double* u_cmd, double* u_app);

/// y = x + a·k over `count` values.
void axpy(std::size_t count, const double* x, double a, const double* k, double* y);
/// x += sixth·(k1 + 2·k2 + 2·k3 + k4) over `count` values.
void rk4_combine(std::size_t count, double* x, double sixth, const double* k1, const double* k2, const double* k3,
                 const double* k4);
/// ok[l] = 0 where any of the n values of lane l is not finite or leaves ±bound.
void check_lanes(std::size_t L, int n, const double* x, double bound, std::uint8_t* ok);

}  // namespace sigmatube::model::lanes
