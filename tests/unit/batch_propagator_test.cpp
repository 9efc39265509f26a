// SPDX-License-Identifier: MIT
// Batched (structure-of-arrays) propagation against the one-run path
// ClosedLoop::run, which is the reference here: the batch promises the same
// arithmetic in the same order, so every output must match bit for bit. (The
// one-run path's accuracy itself is checked against the Clohessy–Wiltshire
// closed form in builtin_models_test and integrator_test.)
#include <gtest/gtest.h>
#include <muParser.h>

#include <algorithm>
#include <cmath>
#include <cstring>
#include <string>
#include <vector>

#include "sigmatube/app/case_loader.h"
#include "sigmatube/core/counter_rng.h"
#include "sigmatube/model/batch_propagator.h"
#include "sigmatube/model/lane_expression.h"

namespace {

using namespace sigmatube;

const std::string kSource = SIGMATUBE_SOURCE_DIR;

// Lane programs of expression models round differently from muparser in the last
// bits of some operations; over a few hundred stable closed-loop steps that stays
// many orders below this (relative to max(1, |value|)).
constexpr double kExpressionTolerance = 1e-9;

// Perturbations of `lanes` runs at germ points from the project's counter-based
// generator (any points will do; 2·N(0, 1) reaches the tails).
std::vector<model::Perturbation> perturbations_for(const app::LoadedCase& loaded, int lanes) {
  const auto& cl = *loaded.closed_loop;
  const int d = loaded.germ->dimension();
  const CounterRng rng(7);
  std::vector<model::Perturbation> perturbations(static_cast<std::size_t>(lanes), cl.nominal());
  std::vector<double> z(static_cast<std::size_t>(d)), xi(static_cast<std::size_t>(d));
  for (int l = 0; l < lanes; ++l) {
    for (int j = 0; j < d; ++j) z[static_cast<std::size_t>(j)] = 2.0 * rng.normal(static_cast<std::uint64_t>(l), static_cast<std::uint64_t>(j));
    loaded.germ->from_standard_normal(z.data(), xi.data());
    loaded.germ->apply(xi.data(), perturbations[static_cast<std::size_t>(l)]);
  }
  return perturbations;
}

void expect_batch_matches_single_runs(const std::string& case_path, int lanes, bool bitwise = true) {
  const app::LoadedCase loaded = app::load_case(case_path);
  const auto& cl = *loaded.closed_loop;
  const model::BatchPropagator batch(cl, loaded.options);
  ASSERT_TRUE(batch.supported());
  const auto T = static_cast<Eigen::Index>(cl.report_times().size());
  const std::size_t width = static_cast<std::size_t>(T) * static_cast<std::size_t>(cl.output_count());
  const std::vector<model::Perturbation> perturbations = perturbations_for(loaded, lanes);
  std::vector<double> rows(width * static_cast<std::size_t>(lanes));
  std::vector<std::uint8_t> ok(static_cast<std::size_t>(lanes), 0);
  batch.run(perturbations.data(), lanes, rows.data(), width, ok.data());

  for (int l = 0; l < lanes; ++l) {
    ASSERT_EQ(ok[static_cast<std::size_t>(l)], 1) << "lane " << l;
    Eigen::MatrixXd single(T, cl.output_count());
    cl.run(perturbations[static_cast<std::size_t>(l)], single, l);
    int mismatches = 0;
    for (Eigen::Index t = 0; t < T; ++t)
      for (int o = 0; o < cl.output_count(); ++o) {
        const double a = single(t, o), b = rows[static_cast<std::size_t>(l) * width + static_cast<std::size_t>(t * cl.output_count() + o)];
        if (bitwise ? std::memcmp(&a, &b, sizeof a) != 0
                    : !(std::abs(a - b) <= kExpressionTolerance * std::max(1.0, std::abs(a))))
          ++mismatches;
      }
    EXPECT_EQ(mismatches, 0) << "lane " << l;
  }
}

// Built-in HCW lane kernel, Gaussian-process disturbance, saturation limits.
TEST(BatchPropagator, MatchesOneRunPathBitwiseBuiltinHcwWithDisturbance) {
  expect_batch_matches_single_runs(kSource + "/tests/cases/hcw_minimal.toml", 13);
}

// Constant LQR gain, uniform input scale, 64 lanes.
TEST(BatchPropagator, MatchesOneRunPathBitwiseTrackingCase) {
  expect_batch_matches_single_runs(kSource + "/bench/cases/hcw-tracking/case.toml", 64);
}

// The fused RK4 lane kernel works on blocks of four lanes (eight with AVX-512): a last partial block
// (7 = 4 + 3 lanes, or one short block of eight) and a single lane must give the one-run results too.
TEST(BatchPropagator, MatchesOneRunPathBitwiseWithPartialLaneBlocks) {
  expect_batch_matches_single_runs(kSource + "/bench/cases/hcw-tracking/case.toml", 7);
  expect_batch_matches_single_runs(kSource + "/bench/cases/hcw-tracking/case.toml", 1);
}

// Expression model: the right-hand sides run as lane programs.
TEST(BatchPropagator, ExpressionModelLaneProgramsMatchMuparserRuns) {
  const std::string path = kSource + "/bench/cases/hcw-tracking-expression/case.toml";
  const app::LoadedCase loaded = app::load_case(path);
  EXPECT_TRUE(model::BatchPropagator(*loaded.closed_loop, loaded.options).compiled_expressions());
  expect_batch_matches_single_runs(path, 9, false);
}

// The whole-step lane kernels (built-in HCW; lane programs in blocks of
// lanes::kProgramBlock lanes with constant folding and accumulator chains)
// promise the arithmetic of the stage-by-stage loops: same bits, every output
// and every ok flag, at lane counts below, at and around the block width.
void expect_fused_matches_stagewise(const std::string& case_path, const std::vector<int>& lane_counts) {
  const app::LoadedCase loaded = app::load_case(case_path);
  const auto& cl = *loaded.closed_loop;
  model::BatchPropagator fused(cl, loaded.options), stagewise(cl, loaded.options);
  stagewise.use_fused_steps(false);
  const std::size_t width = cl.report_times().size() * static_cast<std::size_t>(cl.output_count());
  for (const int lanes : lane_counts) {
    const std::vector<model::Perturbation> perturbations = perturbations_for(loaded, lanes);
    std::vector<double> a(width * static_cast<std::size_t>(lanes)), b(a.size());
    std::vector<std::uint8_t> ok_a(static_cast<std::size_t>(lanes)), ok_b(ok_a.size());
    fused.run(perturbations.data(), lanes, a.data(), width, ok_a.data());
    stagewise.run(perturbations.data(), lanes, b.data(), width, ok_b.data());
    EXPECT_EQ(ok_a, ok_b) << lanes << " lanes";
    EXPECT_EQ(std::memcmp(a.data(), b.data(), a.size() * sizeof(double)), 0) << lanes << " lanes";
  }
}

TEST(BatchPropagator, FusedLaneProgramStepMatchesStagewiseBitwise) {
  const std::string path = kSource + "/bench/cases/hcw-tracking-expression/case.toml";
  const app::LoadedCase loaded = app::load_case(path);
  ASSERT_TRUE(model::BatchPropagator(*loaded.closed_loop, loaded.options).compiled_expressions());
  expect_fused_matches_stagewise(path, {1, 7, 32, 33, 64, 65});
}

// Time, functions, powers, min/max, a whole-constant term, two parameters (one
// uncertain), two saturated inputs and a derived output (tests/cases/expression_lanes.toml).
TEST(BatchPropagator, FusedLaneProgramStepWithFunctionsParametersAndLimits) {
  const std::string path = kSource + "/tests/cases/expression_lanes.toml";
  const app::LoadedCase loaded = app::load_case(path);
  ASSERT_TRUE(model::BatchPropagator(*loaded.closed_loop, loaded.options).compiled_expressions());
  expect_fused_matches_stagewise(path, {1, 5, 31, 40});
  // And the one-run path (muparser) to the lane programs' rounding.
  expect_batch_matches_single_runs(path, 11, false);
}

// A lane that leaves ±1e12 (OdeIntegrator::kDivergenceBound) is flagged by the
// fused kernels as by check_lanes after each step.
TEST(BatchPropagator, FusedLaneProgramStepFlagsDivergedLanes) {
  const std::string path = kSource + "/tests/cases/expression_lanes.toml";
  const app::LoadedCase loaded = app::load_case(path);
  const auto& cl = *loaded.closed_loop;
  model::BatchPropagator fused(cl, loaded.options), stagewise(cl, loaded.options);
  stagewise.use_fused_steps(false);
  std::vector<model::Perturbation> perturbations = perturbations_for(loaded, 9);
  perturbations[3].initial_offset[0] = 1e13;  // beyond the bound from the start
  perturbations[6].initial_offset[3] = 1e11;  // within the bound at first; the drag term then overflows
  const std::size_t width = cl.report_times().size() * static_cast<std::size_t>(cl.output_count());
  std::vector<double> a(width * 9), b(a.size());
  std::vector<std::uint8_t> ok_a(9), ok_b(9);
  fused.run(perturbations.data(), 9, a.data(), width, ok_a.data());
  stagewise.run(perturbations.data(), 9, b.data(), width, ok_b.data());
  EXPECT_EQ(ok_a, ok_b);
  EXPECT_EQ(ok_a[3], 0);
  EXPECT_EQ(ok_a[6], 0);
  EXPECT_EQ(ok_a[0], 1);
}

// Diverged lanes of the built-in HCW whole-step kernel get the same ok flags as
// with check_lanes after each stage-by-stage step.
TEST(BatchPropagator, FusedHcwStepFlagsDivergedLanes) {
  const std::string path = kSource + "/bench/cases/hcw-tracking/case.toml";
  const app::LoadedCase loaded = app::load_case(path);
  const auto& cl = *loaded.closed_loop;
  model::BatchPropagator fused(cl, loaded.options), stagewise(cl, loaded.options);
  stagewise.use_fused_steps(false);
  for (const int lanes : {11, 64}) {
    std::vector<model::Perturbation> perturbations = perturbations_for(loaded, lanes);
    perturbations[2].initial_offset[1] = 2e12;  // beyond ±1e12 from the start
    perturbations[9].initial_offset[4] = 1e11;  // within at first, y passes 1e12 after ~10 s
    const std::size_t width = cl.report_times().size() * static_cast<std::size_t>(cl.output_count());
    std::vector<double> a(width * static_cast<std::size_t>(lanes)), b(a.size());
    std::vector<std::uint8_t> ok_a(static_cast<std::size_t>(lanes)), ok_b(ok_a.size());
    fused.run(perturbations.data(), lanes, a.data(), width, ok_a.data());
    stagewise.run(perturbations.data(), lanes, b.data(), width, ok_b.data());
    EXPECT_EQ(ok_a, ok_b) << lanes << " lanes";
    EXPECT_EQ(ok_a[2], 0);
    EXPECT_EQ(ok_a[9], 0);
    EXPECT_EQ(ok_a[0], 1);
  }
}

// The built-in HCW whole-step kernel against its stage-by-stage loops.
TEST(BatchPropagator, FusedHcwStepMatchesStagewiseBitwise) {
  expect_fused_matches_stagewise(kSource + "/bench/cases/hcw-tracking/case.toml", {1, 6, 64});
}

// Runs the same lanes with the AVX-512 kernels allowed and kept at AVX2 and
// expects the same bits, every output and ok flag (on a CPU without AVX-512F
// both runs take the four-lane versions). With `diverge`, lane 3 (where there is
// one) starts beyond the divergence bound and must be flagged both times.
void expect_same_bits_with_and_without_avx512(const std::string& path, const std::vector<int>& lane_counts,
                                              bool diverge) {
  const app::LoadedCase loaded = app::load_case(path);
  const auto& cl = *loaded.closed_loop;
  const model::BatchPropagator batch(cl, loaded.options);
  const std::size_t width = cl.report_times().size() * static_cast<std::size_t>(cl.output_count());
  for (const int lanes : lane_counts) {
    std::vector<model::Perturbation> perturbations = perturbations_for(loaded, lanes);
    if (diverge && lanes > 3) perturbations[3].initial_offset[0] = 1e13;
    std::vector<double> a(width * static_cast<std::size_t>(lanes)), b(a.size());
    std::vector<std::uint8_t> ok_a(static_cast<std::size_t>(lanes)), ok_b(ok_a.size());
    batch.run(perturbations.data(), lanes, a.data(), width, ok_a.data());
    model::BatchPropagator::allow_avx512(false);
    batch.run(perturbations.data(), lanes, b.data(), width, ok_b.data());
    model::BatchPropagator::allow_avx512(true);
    EXPECT_EQ(ok_a, ok_b) << path << ", " << lanes << " lanes";
    if (diverge && lanes > 3) EXPECT_EQ(ok_a[3], 0) << path;
    EXPECT_EQ(std::memcmp(a.data(), b.data(), a.size() * sizeof(double)), 0) << path << ", " << lanes << " lanes";
  }
}

// The AVX-512 version of the HCW whole-step kernel (eight lanes per vector) and
// the four-lane AVX2/baseline version give the same bits.
TEST(BatchPropagator, HcwStepSameBitsWithAndWithoutAvx512) {
  expect_same_bits_with_and_without_avx512(kSource + "/bench/cases/hcw-tracking/case.toml", {3, 13, 64}, false);
}

// The lane programs' whole-step kernel with its feedback law in eight lanes per
// vector (AVX-512) and in four (AVX2/baseline): the same bits at lane counts
// below, at and around the block width, with functions, powers, limits and a
// diverging lane.
TEST(BatchPropagator, LaneProgramStepSameBitsWithAndWithoutAvx512) {
  for (const std::string name : {"/bench/cases/hcw-tracking-expression/case.toml", "/tests/cases/expression_lanes.toml"}) {
    const app::LoadedCase loaded = app::load_case(kSource + name);
    ASSERT_TRUE(model::BatchPropagator(*loaded.closed_loop, loaded.options).compiled_expressions()) << name;
    expect_same_bits_with_and_without_avx512(kSource + name, {1, 7, 32, 33, 65}, true);
  }
}

// An expression outside the lane compiler's subset falls back to muparser (no program).
TEST(LaneExpression, UnsupportedSyntaxFallsBack) {
  EXPECT_FALSE(model::LaneExpression::compile("x > 0 ? x : -x", {"x"}).has_value());
  EXPECT_TRUE(model::LaneExpression::compile("-x^2 + 3*sin(x)/max(1, x, 2)", {"x"}).has_value());
}

// Lane programs against muparser (the reference reader of expression models) on
// precedence and functions, at two lanes.
TEST(LaneExpression, AgreesWithMuparserOnPrecedenceAndFunctions) {
  const std::vector<std::string> names{"a", "b"};
  const std::string text = "-a^2 - b/2*a + 2^-1 + avg(a, b) - 3*b^2^0.5 + sqrt(abs(a))*exp(-b/10)";
  const auto program = model::LaneExpression::compile(text, names);
  ASSERT_TRUE(program.has_value());
  double a[2] = {1.5, -3.0}, b[2] = {0.25, 8.0};
  const double* vars[2] = {a, b};
  double out[2];
  std::vector<double> scratch(program->scratch_size(2));
  program->evaluate(vars, 2, out, scratch.data());
  for (int l = 0; l < 2; ++l) {
    double va = a[l], vb = b[l];
    mu::Parser parser;
    parser.DefineVar("a", &va);
    parser.DefineVar("b", &vb);
    parser.SetExpr(text);
    const double expected = parser.Eval();
    EXPECT_NEAR(out[l], expected, 1e-13 * std::max(1.0, std::abs(expected))) << "lane " << l;
  }
}

// The register form reads variables and constants in place and writes its
// result slot straight into the output: every operand combination (slot,
// variable, constant on either side), n-ary functions, x^2 and a lone variable
// or constant, against muparser at 37 lanes (not a multiple of the vector width).
TEST(LaneExpression, RegisterFormAgreesWithMuparserOnEveryOperandKind) {
  const std::vector<std::string> names{"a", "b"};
  const std::vector<std::string> texts{
      "a",       "2.5",          "a*b",          "2*a",           "a/3",     "3/a",      "(a+b)*(a-b)",
      "a - (2-b)", "a^2 + b^2",  "2^a",          "a^b^0.5",       "min(a, 2, b)", "max(1, a)", "sum(a, b, a*b, 1)",
      "avg(a, 3, b)", "-(a)",    "-(2*3)",       "sin(a)*cos(b) - exp(-(a*a))", "min(2, 3)*a"};
  const int lanes = 37;
  std::vector<double> a(lanes), b(lanes), out(lanes);
  for (int l = 0; l < lanes; ++l) {
    a[static_cast<std::size_t>(l)] = 0.3 + 0.1 * l;
    b[static_cast<std::size_t>(l)] = 2.0 - 0.05 * l;
  }
  const double* vars[2] = {a.data(), b.data()};
  for (const auto& text : texts) {
    const auto program = model::LaneExpression::compile(text, names);
    ASSERT_TRUE(program.has_value()) << text;
    std::vector<double> scratch(program->scratch_size(lanes));
    program->evaluate(vars, lanes, out.data(), scratch.data());
    for (int l = 0; l < lanes; ++l) {
      double va = a[static_cast<std::size_t>(l)], vb = b[static_cast<std::size_t>(l)];
      mu::Parser parser;
      parser.DefineVar("a", &va);
      parser.DefineVar("b", &vb);
      parser.SetExpr(text);
      const double expected = parser.Eval();
      EXPECT_NEAR(out[static_cast<std::size_t>(l)], expected, 1e-13 * std::max(1.0, std::abs(expected)))
          << text << " lane " << l;
    }
  }
}

}  // namespace
