// SPDX-License-Identifier: MIT
// dopri5 over lanes with per-lane step control (model/lane_dopri5.h) against
// the one-run path ClosedLoop::run, the reference here: each lane promises the
// one-run path's steps, accepts and rejects, so every output must match bit for
// bit (memcmp). Accuracy against something outside the project: the
// Clohessy–Wiltshire (1960) closed-form free drift.
#include "sigmatube/model/lane_dopri5.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstring>
#include <fstream>
#include <limits>
#include <numbers>
#include <string>
#include <vector>

#include "sigmatube/app/case_loader.h"
#include "sigmatube/app/model_runs.h"
#include "sigmatube/core/counter_rng.h"
#include "sigmatube/core/error.h"
#include "sigmatube/core/parallel.h"
#include "sigmatube/model/batch_propagator.h"
#include "sigmatube/model/builtin_models.h"
#include "sigmatube/model/model_factory.h"
#include "clohessy_wiltshire.h"

namespace sigmatube {
namespace {

const std::string kSource = SIGMATUBE_SOURCE_DIR;
const std::string kDemo = kSource + "/cases/inspection-approach/case.toml";

struct Lanes {
  std::vector<double> rows;
  std::vector<std::uint8_t> ok;
  model::LaneStepCounts counts;
  std::size_t width = 0;
};

// The saturation bounds ClosedLoop derives from [control].limits.
void bounds(const model::ClosedLoop& cl, const casefile::CaseOptions& options, Eigen::VectorXd& low, Eigen::VectorXd& high) {
  const auto& inputs = cl.model().input_names();
  low = Eigen::VectorXd::Constant(cl.model().input_count(), -std::numeric_limits<double>::infinity());
  high = Eigen::VectorXd::Constant(cl.model().input_count(), std::numeric_limits<double>::infinity());
  for (const auto& limit : options.control.limits) {
    const auto i = std::find(inputs.begin(), inputs.end(), limit.input) - inputs.begin();
    low(i) = limit.low;
    high(i) = limit.high;
  }
}

Lanes run_lanes(const model::ClosedLoop& cl, const casefile::CaseOptions& options,
                const std::vector<model::Perturbation>& perturbations) {
  Lanes out;
  out.width = cl.report_times().size() * static_cast<std::size_t>(cl.output_count());
  out.rows.assign(out.width * perturbations.size(), std::nan(""));
  out.ok.assign(perturbations.size(), 7);
  Eigen::VectorXd low, high;
  bounds(cl, options, low, high);
  model::dopri5_lanes(cl, options.simulation, low, high, perturbations.data(), static_cast<int>(perturbations.size()),
                      out.rows.data(), out.width, out.ok.data(), &out.counts);
  return out;
}

// Number of outputs of lane l that differ from ClosedLoop::run in any bit.
int mismatches(const model::ClosedLoop& cl, const model::Perturbation& p, const double* row) {
  Eigen::MatrixXd single(static_cast<Eigen::Index>(cl.report_times().size()), cl.output_count());
  cl.run(p, single);
  int count = 0;
  for (Eigen::Index t = 0; t < single.rows(); ++t)
    for (Eigen::Index o = 0; o < single.cols(); ++o) {
      const double a = single(t, o), b = row[t * single.cols() + o];
      count += std::memcmp(&a, &b, sizeof a) != 0;
    }
  return count;
}

// Perturbations at germ points 2·z, z from the project's counter-based generator.
std::vector<model::Perturbation> germ_perturbations(const app::LoadedCase& loaded, int lanes, double spread) {
  const auto& cl = *loaded.closed_loop;
  const int d = loaded.germ->dimension();
  const CounterRng rng(11);
  std::vector<model::Perturbation> out(static_cast<std::size_t>(lanes), cl.nominal());
  std::vector<double> z(static_cast<std::size_t>(d)), xi(static_cast<std::size_t>(d));
  for (int l = 0; l < lanes; ++l) {
    for (int j = 0; j < d; ++j)
      z[static_cast<std::size_t>(j)] = spread * rng.normal(static_cast<std::uint64_t>(l), static_cast<std::uint64_t>(j));
    loaded.germ->from_standard_normal(z.data(), xi.data());
    loaded.germ->apply(xi.data(), out[static_cast<std::size_t>(l)]);
  }
  return out;
}

// The bundled demo (built-in HCW, time-varying LQR, saturation, Gaussian-process
// drift), at lane counts that are not multiples of the vector width.
TEST(LaneDopri5, BundledDemoMatchesOneRunPathBitwise) {
  const app::LoadedCase loaded = app::load_case(kDemo);
  const auto& cl = *loaded.closed_loop;
  for (const int lanes : {1, 5, 13}) {
    const auto perturbations = germ_perturbations(loaded, lanes, 2.0);
    const Lanes out = run_lanes(cl, loaded.options, perturbations);
    for (int l = 0; l < lanes; ++l) {
      ASSERT_EQ(out.ok[static_cast<std::size_t>(l)], 1) << "lane " << l;
      EXPECT_EQ(mismatches(cl, perturbations[static_cast<std::size_t>(l)], out.rows.data() + l * out.width), 0)
          << lanes << " lanes, lane " << l;
    }
  }
  // Through BatchPropagator (the hook the pipeline uses), too.
  const model::BatchPropagator batch(cl, loaded.options);
  ASSERT_TRUE(batch.supported());
  const auto perturbations = germ_perturbations(loaded, 3, 2.0);
  const Lanes direct = run_lanes(cl, loaded.options, perturbations);
  std::vector<double> rows(direct.rows.size());
  std::vector<std::uint8_t> ok(3);
  batch.run(perturbations.data(), 3, rows.data(), direct.width, ok.data());
  EXPECT_EQ(std::memcmp(rows.data(), direct.rows.data(), rows.size() * sizeof(double)), 0);
}

// A saturating closed loop whose damping is a per-lane parameter: the stiff lanes
// are held to small steps by the explicit method's stability limit (rejecting
// steps), the others take few; input saturation switches at different times.
casefile::CaseOptions stiff_case() {
  casefile::CaseOptions options;
  options.model.states = {"x", "v"};
  options.model.inputs = {"u"};
  options.model.parameters = {{"damping", 1.0, {}}};
  options.model.rhs = {{"x", "v", {}}, {"v", "u - damping*v", {}}};
  options.plan.file = "stiff.csv";
  options.plan.path = testing::TempDir() + "lane_dopri5_test_stiff.csv";
  std::ofstream(options.plan.path) << "t,x\n0,0\n6,1\n12,0\n";
  options.control.law = casefile::ControlLaw::lqr;
  options.control.q = {10, 1};
  options.control.r = {1};
  options.control.limits = {{"u", -0.5, 0.5, {}}};
  options.simulation.step_in_seconds = 1.0;
  options.simulation.rtol = 1e-7;
  options.simulation.atol = 1e-9;
  options.simulation.report_every_in_seconds = 0.5;
  return options;
}

TEST(LaneDopri5, LanesWithDifferentStepsAndRejectionsMatchOneRunPathBitwise) {
  const casefile::CaseOptions options = stiff_case();
  const model::ClosedLoop cl(model::make_model(options.model), options);
  std::vector<model::Perturbation> perturbations;
  for (const double damping : {0.5, 40.0, 3.0, 150.0, 12.0, 0.0, 80.0}) {
    model::Perturbation p = cl.nominal();
    p.parameters(0) = damping;
    p.initial_offset(0) = 0.3 * damping / 150.0 - 2.0;  // far off: the command saturates first
    perturbations.push_back(p);
  }
  const Lanes out = run_lanes(cl, options, perturbations);
  long long fewest = std::numeric_limits<long long>::max(), most = 0, rejected = 0;
  for (std::size_t l = 0; l < perturbations.size(); ++l) {
    ASSERT_EQ(out.ok[l], 1) << "lane " << l;
    EXPECT_EQ(mismatches(cl, perturbations[l], out.rows.data() + l * out.width), 0) << "lane " << l;
    const long long steps = out.counts.accepted[l] + out.counts.rejected[l];
    fewest = std::min(fewest, steps);
    most = std::max(most, steps);
    rejected += out.counts.rejected[l];
  }
  std::cout << "steps per lane from " << fewest << " to " << most << ", " << rejected << " rejected in all\n";
  // The case must exercise what the title says: step sequences of different
  // lengths, rejected steps among them.
  EXPECT_GT(most, 3 * fewest);
  EXPECT_GT(rejected, 0);
}

// x' = x² from x(0) = x0 blows up at t = 1/x0 (closed form): lanes with x0 > 1/2
// diverge within the 2 s plan, and the lane integrator hands exactly those back
// (ok = 0) while the one-run path throws NumericalError for them.
TEST(LaneDopri5, DivergingLanesAreFlaggedAsTheOneRunPathFlagsThem) {
  casefile::CaseOptions options;
  options.model.states = {"runaway"};
  options.model.rhs = {{"runaway", "runaway^2", {}}};
  options.plan.file = "div.csv";
  options.plan.path = testing::TempDir() + "lane_dopri5_test_div.csv";
  std::ofstream(options.plan.path) << "t,runaway\n0,0\n2,0\n";
  options.simulation.report_every_in_seconds = 0.25;
  const model::ClosedLoop cl(model::make_model(options.model), options);
  std::vector<model::Perturbation> perturbations;
  const std::vector<double> starts{0.1, 0.8, 0.3, 2.0, -1.0};
  for (const double x0 : starts) {
    model::Perturbation p = cl.nominal();
    p.initial_offset(0) = x0;
    perturbations.push_back(p);
  }
  const Lanes out = run_lanes(cl, options, perturbations);
  for (std::size_t l = 0; l < starts.size(); ++l) {
    Eigen::MatrixXd single(static_cast<Eigen::Index>(cl.report_times().size()), cl.output_count());
    bool threw = false;
    try {
      cl.run(perturbations[l], single, static_cast<long long>(l));
    } catch (const NumericalError&) {
      threw = true;
    }
    EXPECT_EQ(threw, starts[l] > 0.5) << "closed form: blow-up at t = 1/x0, lane " << l;
    EXPECT_EQ(out.ok[l], threw ? 0 : 1) << "lane " << l;
    if (!threw) EXPECT_EQ(mismatches(cl, perturbations[l], out.rows.data() + l * out.width), 0) << "lane " << l;
  }
}

TEST(LaneDopri5, FreeDriftMatchesClohessyWiltshireClosedForm) {
  const double n = model::HillClohessyWiltshire::kDefaultMeanMotion;
  const double period = 2.0 * std::numbers::pi / n;
  casefile::CaseOptions options;
  options.model.builtin = "hill-clohessy-wiltshire";
  options.plan.file = "drift.csv";
  options.plan.path = testing::TempDir() + "lane_dopri5_test_drift.csv";
  std::ofstream(options.plan.path) << "t,x\n0,0\n" + std::to_string(period) + ",0\n";
  options.simulation.rtol = 1e-12;
  options.simulation.atol = 1e-14;
  options.simulation.step_in_seconds = 60.0;
  options.simulation.report_every_in_seconds = period / 16.0;
  const model::ClosedLoop cl(model::make_model(options.model), options);
  // Invented initial relative states [m, m/s], one per lane.
  const std::vector<std::array<double, 6>> starts{{100.0, -250.0, 30.0, 0.05, -0.2, 0.01},
                                                  {-40.0, 10.0, 0.0, 0.0, 0.08, -0.02},
                                                  {5.0, 500.0, -12.0, -0.1, 0.0, 0.0}};
  std::vector<model::Perturbation> perturbations;
  for (const auto& s : starts) {
    model::Perturbation p = cl.nominal();
    p.initial_offset = Eigen::Map<const Eigen::VectorXd>(s.data(), 6);
    perturbations.push_back(p);
  }
  const Lanes out = run_lanes(cl, options, perturbations);
  double worst = 0.0;
  for (std::size_t l = 0; l < starts.size(); ++l) {
    ASSERT_EQ(out.ok[l], 1);
    const Eigen::Matrix<double, 6, 1> x0 = Eigen::Map<const Eigen::Matrix<double, 6, 1>>(starts[l].data());
    for (std::size_t k = 0; k < cl.report_times().size(); ++k) {
      const Eigen::Matrix<double, 6, 1> exact = clohessy_wiltshire_transition(n, cl.report_times()[k]) * x0;
      const Eigen::Map<const Eigen::Matrix<double, 6, 1>> ours(out.rows.data() + l * out.width +
                                                               k * static_cast<std::size_t>(cl.output_count()));
      worst = std::max(worst, (ours - exact).norm() / exact.norm());
    }
  }
  std::cout << "dopri5 lanes vs Clohessy-Wiltshire closed form: max relative error " << worst << "\n";
  // rtol 1e-12 per step over one orbit (~100 steps) stays well inside 1e-9 (common practice:
  // global error a few hundred times the local tolerance at most for this smooth problem).
  constexpr double kRelativeTolerance = 1e-9;
  EXPECT_LT(worst, kRelativeTolerance);
}

// Lanes assigned by run index, blocks spread over 1 and 2 threads: the same bits,
// and the same as the pipeline's runner (blocks of 16 over 2 threads).
TEST(LaneDopri5, SameBitsOnOneAndTwoThreadsAndAsThePipelinesRunner) {
  const app::LoadedCase loaded = app::load_case(kDemo);
  const auto& cl = *loaded.closed_loop;
  const model::BatchPropagator batch(cl, loaded.options);
  const int count = 37, block = 16;
  const auto perturbations = germ_perturbations(loaded, count, 1.0);
  const std::size_t width = cl.report_times().size() * static_cast<std::size_t>(cl.output_count());
  auto run_blocks = [&](int threads, std::vector<double>& rows, std::vector<std::uint8_t>& ok) {
    rows.assign(width * count, 0.0);
    ok.assign(count, 0);
    const std::size_t blocks = (count + block - 1) / block;
    parallel_for(blocks, threads, [&](std::size_t b) {
      const int first = static_cast<int>(b) * block, lanes = std::min(block, count - first);
      batch.run(perturbations.data() + first, lanes, rows.data() + static_cast<std::size_t>(first) * width, width,
                ok.data() + first);
    });
  };
  std::vector<double> one, two;
  std::vector<std::uint8_t> ok1, ok2;
  run_blocks(1, one, ok1);
  run_blocks(2, two, ok2);
  EXPECT_EQ(std::memcmp(one.data(), two.data(), one.size() * sizeof(double)), 0);
  EXPECT_EQ(ok1, ok2);
  EXPECT_EQ(std::count(ok1.begin(), ok1.end(), 1), count);

  // ModelRunner at the same germ points.
  const app::ModelRunner runner(loaded);
  EXPECT_TRUE(runner.batched());
  const int d = loaded.germ->dimension();
  const CounterRng rng(11);
  Eigen::MatrixXd xi(count, d);
  std::vector<double> z(static_cast<std::size_t>(d)), x(static_cast<std::size_t>(d));
  for (int l = 0; l < count; ++l) {
    for (int j = 0; j < d; ++j)
      z[static_cast<std::size_t>(j)] = rng.normal(static_cast<std::uint64_t>(l), static_cast<std::uint64_t>(j));
    loaded.germ->from_standard_normal(z.data(), x.data());
    for (int j = 0; j < d; ++j) xi(l, j) = x[static_cast<std::size_t>(j)];
  }
  std::vector<double> runner_rows(width * count);
  std::vector<std::uint8_t> runner_ok(count);
  runner.run(xi, 0, 2, 16, runner_rows.data(), runner_ok.data(), false);
  EXPECT_EQ(std::memcmp(runner_rows.data(), one.data(), one.size() * sizeof(double)), 0);
}

}  // namespace
}  // namespace sigmatube
