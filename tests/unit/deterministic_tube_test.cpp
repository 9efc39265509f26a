// SPDX-License-Identifier: MIT
// Tests of model/deterministic_tube.h and the tube stage: the exact worst case of
// a scalar first-order loop, no Monte Carlo run outside the bound on bounded
// cases (constant-gain and time-varying LQR loops), "no bound" for a loop that
// does not contract, the Lyapunov solver against SciPy, and the HDF5 datasets
// read back by h5py.
#include "sigmatube/model/deterministic_tube.h"

#include <gtest/gtest.h>

#include <cmath>
#include <fstream>

#include "python_reference.h"
#include "result_fixture.h"
#include "sigmatube/app/analysis.h"
#include "sigmatube/app/case_loader.h"
#include "sigmatube/result/result_file.h"

using namespace sigmatube;

namespace {

// Writes case.toml and plan.csv into `folder` and loads the case.
app::LoadedCase write_and_load(const std::filesystem::path& folder, const std::string& toml, const std::string& plan) {
  std::ofstream(folder / "plan.csv") << plan;
  std::ofstream(folder / "case.toml") << toml;
  return app::load_case((folder / "case.toml").string());
}

// An invented scalar loop ẋ = u + w, u = −a·x: ė = −a e + w.
constexpr double kGain = 0.5, kInitial = 0.4, kDisturbance = 0.1;

std::string scalar_case(const std::string& tube_table) {
  return "title = \"invented scalar loop\"\n"
         "[model]\nstates = [\"x\"]\ninputs = [\"u\"]\nrhs = { x = \"u\" }\nunits = { x = \"m\", u = \"m/s\" }\n"
         "[plan]\nfile = \"plan.csv\"\n"
         "[control]\nlaw = \"gain\"\ngain = [[0.5]]\n"
         "[simulation]\nrtol = 1e-11\natol = 1e-13\nstep = 0.5\nreport_every = 0.5\n"
         "[[uncertain]]\nname = \"start\"\napplies_to = \"initial.x\"\ndistribution = \"uniform\"\nlow = -0.4\nhigh = 0.4\n"
         "[[uncertain]]\nname = \"push\"\napplies_to = \"disturbance.x\"\ndistribution = \"uniform\"\nlow = -0.1\nhigh = 0.1\n"
         "[surrogate]\nmethod = \"tensor-grid\"\ndegree = 2\nsamples = 4000\n"
         "[montecarlo]\nruns = 200\n" +
         tube_table;
}

}  // namespace

TEST(DeterministicTube, ScalarFirstOrderLoopBoundIsTheExactWorstCase) {
  // Closed form: ė = −a e + w, |e0| ≤ ē, |w| ≤ w̄ gives the attained worst case
  // e(t) = e^{−at} ē + (w̄/a)(1 − e^{−at}) (e0 = ē, w ≡ w̄).
  result::testing::TemporaryFolder folder;
  const app::LoadedCase loaded =
      write_and_load(folder.path, scalar_case("[tube]\nposition = [\"x\"]\n"), "t,x,u\n0,0,0\n20,0,0\n");
  const auto& cl = *loaded.closed_loop;
  const model::DeterministicTube tube = model::deterministic_tube(cl, loaded.options, {"x"}, 3.0, {});
  ASSERT_TRUE(tube.bounded);
  EXPECT_TRUE(tube.time_invariant);
  model::Perturbation worst = cl.nominal();
  worst.initial_offset[0] = kInitial;
  worst.disturbance = Eigen::MatrixXd::Constant(static_cast<Eigen::Index>(cl.report_times().size()), 1, kDisturbance);
  Eigen::MatrixXd out(static_cast<Eigen::Index>(cl.report_times().size()), cl.output_count());
  cl.run(worst, out);
  constexpr double kClosedForm = 1e-12;   // exp and a few products
  constexpr double kIntegration = 1e-8;   // dopri5 at rtol 1e-11 over 20 s
  for (std::size_t k = 0; k < cl.report_times().size(); ++k) {
    const double t = cl.report_times()[k];
    const double exact = std::exp(-kGain * t) * kInitial + kDisturbance / kGain * (1.0 - std::exp(-kGain * t));
    EXPECT_NEAR(tube.radius[static_cast<Eigen::Index>(k)], exact, kClosedForm) << "t = " << t;
    EXPECT_NEAR(out(static_cast<Eigen::Index>(k), 0), exact, kIntegration) << "t = " << t;
    EXPECT_NEAR(tube.rate[static_cast<Eigen::Index>(k)], kGain, kClosedForm);
  }
}

TEST(DeterministicTube, NoMonteCarloRunLeavesTheBoundOfABoundedCase) {
  // An invented two-state loop ẍ = u + w (x, v), fixed gain u = −x − 1.4 v, with
  // bounded initial errors (uniform, triangular), a bounded disturbance (uniform)
  // and a bounded input bias (beta): every full-model run stays inside r(t).
  result::testing::TemporaryFolder folder;
  const std::string toml =
      "title = \"invented two-state loop\"\n"
      "[model]\nstates = [\"x\", \"v\"]\ninputs = [\"u\"]\nrhs = { x = \"v\", v = \"u\" }\n"
      "[plan]\nfile = \"plan.csv\"\n"
      "[control]\nlaw = \"gain\"\ngain = [[1.0, 1.4]]\n"
      "[simulation]\nstep = 0.25\nreport_every = 0.5\n"
      "[[uncertain]]\nname = \"start-x\"\napplies_to = \"initial.x\"\ndistribution = \"uniform\"\nlow = -0.5\nhigh = 0.5\n"
      "[[uncertain]]\nname = \"start-v\"\napplies_to = \"initial.v\"\ndistribution = \"triangular\"\nlow = -0.2\nmode = 0\nhigh = 0.3\n"
      "[[uncertain]]\nname = \"push\"\napplies_to = \"disturbance.v\"\ndistribution = \"uniform\"\nlow = -0.05\nhigh = 0.05\n"
      "[[uncertain]]\nname = \"bias\"\napplies_to = \"input_bias.u\"\ndistribution = \"beta\"\nalpha = 2\nbeta = 3\nlow = -0.02\nhigh = 0.04\n"
      "[surrogate]\nmethod = \"sparse-grid\"\nlevel = 2\nsamples = 5000\n"
      "[montecarlo]\nruns = 400\n"
      "[tube]\nposition = [\"x\", \"v\"]\n";
  const app::LoadedCase loaded = write_and_load(folder.path, toml, "t,x,v,u\n0,0,0,0\n15,0,0,0\n");
  app::AnalysisOptions options;
  options.threads = 2;
  options.progress = false;
  const result::AnalysisResult r = app::analyze_case(loaded, options);
  ASSERT_TRUE(r.tube.done);
  ASSERT_TRUE(r.tube.bounded) << r.tube.no_bound_reason;
  EXPECT_EQ(r.tube.runs_checked, 400);
  EXPECT_EQ(r.tube.exceedances, 0);
  EXPECT_GE(r.tube.conservatism, 1.0);
  EXPECT_GT(r.tube.largest_observed_deviation, 0.0);
}

TEST(DeterministicTube, TimeVaryingLqrLoopUsesItsRiccatiMetricAndHoldsOnBoundedInputs) {
  // The built-in Hill–Clohessy–Wiltshire model tracked by time-varying LQR along an
  // invented 600 s approach; bounded initial errors and thrust-gain error.
  result::testing::TemporaryFolder folder;
  const std::string toml =
      "title = \"invented HCW approach with bounded errors\"\n"
      "[model]\nbuiltin = \"hill-clohessy-wiltshire\"\n"
      "[plan]\nfile = \"plan.csv\"\n"
      "[control]\nlaw = \"lqr\"\nq = [1, 1, 1, 100, 100, 100]\nr = [1e4, 1e4, 1e4]\n"
      "[simulation]\nstep = 5\nreport_every = 20\n"
      "[[uncertain]]\nname = \"start\"\napplies_to = \"initial.y\"\ndistribution = \"uniform\"\nlow = -2\nhigh = 2\n"
      "[[uncertain]]\nname = \"start-r\"\napplies_to = \"initial.x\"\ndistribution = \"truncated-normal\"\nmean = 0\nstd = 0.5\nlow = -1\nhigh = 1\n"
      "[[uncertain]]\nname = \"gain\"\napplies_to = \"input_scale.ay\"\ndistribution = \"uniform\"\nlow = 0.97\nhigh = 1.03\n"
      "[surrogate]\nmethod = \"sparse-grid\"\nlevel = 2\nsamples = 5000\n"
      "[montecarlo]\nruns = 300\n"
      "[tube]\nposition = [\"x\", \"y\", \"z\"]\n";
  const app::LoadedCase loaded =
      write_and_load(folder.path, toml, "t,x,y,vy\n0,0,-100,0.1\n600,0,-40,0.1\n");
  app::AnalysisOptions options;
  options.threads = 2;
  options.progress = false;
  const result::AnalysisResult r = app::analyze_case(loaded, options);
  ASSERT_TRUE(r.tube.done);
  EXPECT_NE(r.tube.metric_kind.find("Riccati"), std::string::npos);
  ASSERT_TRUE(r.tube.bounded) << r.tube.no_bound_reason;
  EXPECT_EQ(r.tube.exceedances, 0);
  EXPECT_GE(r.tube.conservatism, 1.0);
  EXPECT_EQ(r.tube.units, "m");
}

TEST(DeterministicTube, SaysNoBoundWhereTheLoopDoesNotContract) {
  // ẋ = x + u with u = −0.5 x: A_cl = +0.5, the loop diverges; no metric contracts.
  result::testing::TemporaryFolder folder;
  const std::string toml =
      "[model]\nstates = [\"x\"]\ninputs = [\"u\"]\nrhs = { x = \"x + u\" }\n"
      "[plan]\nfile = \"plan.csv\"\n[control]\nlaw = \"gain\"\ngain = [[0.5]]\n[simulation]\nreport_every = 1\n"
      "[[uncertain]]\nname = \"start\"\napplies_to = \"initial.x\"\ndistribution = \"normal\"\nmean = 0\nstd = 0.01\n"
      "[tube]\nposition = [\"x\"]\nsigma = 2\n";
  const app::LoadedCase loaded = write_and_load(folder.path, toml, "t,x,u\n0,0,0\n5,0,0\n");
  const model::DeterministicTube tube = model::deterministic_tube(*loaded.closed_loop, loaded.options, {"x"}, 2.0, {});
  EXPECT_FALSE(tube.bounded);
  EXPECT_NE(tube.no_bound_reason.find("no bound"), std::string::npos);
  EXPECT_TRUE(std::isnan(tube.radius[tube.radius.size() - 1]));
  // The normal input is cut at 2 std and says so.
  bool stated = false;
  for (const auto& a : tube.assumptions) stated = stated || a.find("mean ± 2 std") != std::string::npos;
  EXPECT_TRUE(stated);
}

TEST(DeterministicTube, LyapunovSolutionMatchesSciPy) {
  // scipy.linalg.solve_continuous_lyapunov(a, q) solves a X + X aᴴ = q; with
  // a = Aᵀ and q = −Q this is AᵀP + PA = −Q.
  Eigen::MatrixXd A(3, 3), Q = Eigen::MatrixXd::Identity(3, 3);
  A << -1, 2, 0, -0.5, -2, 1, 0, 0.3, -0.7;
  const Eigen::MatrixXd P = model::lyapunov_solution(A, Q);
  const std::vector<double> ref = test::python_numbers(
      "import numpy as np\nfrom scipy.linalg import solve_continuous_lyapunov as s\n"
      "A = np.array([[-1, 2, 0], [-0.5, -2, 1], [0, 0.3, -0.7]])\n"
      "print(*s(A.T, -np.eye(3)).flatten())\n");
  ASSERT_EQ(ref.size(), 9u);
  constexpr double kSolver = 1e-12;  // 9×9 LU with condition ~10
  for (int i = 0; i < 3; ++i)
    for (int j = 0; j < 3; ++j) EXPECT_NEAR(P(i, j), ref[static_cast<std::size_t>(3 * i + j)], kSolver);
}

TEST(DeterministicTube, WrittenToHdf5AndReadByH5py) {
  result::testing::TemporaryFolder folder;
  const app::LoadedCase loaded =
      write_and_load(folder.path, scalar_case("[tube]\nposition = [\"x\"]\n"), "t,x,u\n0,0,0\n20,0,0\n");
  app::AnalysisOptions options;
  options.threads = 1;
  options.progress = false;
  const result::AnalysisResult r = app::analyze_case(loaded, options);
  const auto path = folder.path / "r.h5";
  result::write_result_file(r, path.string(), false);
  const std::string out = result::testing::run_python(
      "import h5py, numpy as np\n"
      "f = h5py.File('" + path.string() + "', 'r')\n"
      "r = f['/tube/radius']\n"
      "t = f['/time'][...]\n"
      "exact = np.exp(-0.5 * t) * 0.4 + 0.2 * (1 - np.exp(-0.5 * t))\n"
      "print('shape', r.shape == t.shape)\n"
      "print('exact', float(np.max(np.abs(r[...] - exact))) < 1e-12)\n"
      "print('rate', abs(float(r.attrs['rate']) - 0.5) < 1e-12)\n"
      "print('metric', 'Lyapunov' in r.attrs['metric'] or 'P = I' in r.attrs['metric'])\n"
      "print('assumptions', len(r.attrs['assumptions']) >= 3)\n"
      "print('units', r.attrs['units'] == 'm', list(f['/outputs/names'].attrs['units']) == ['m', 'm/s'])\n"
      "print('exceed', int(f['/tube/exceedances'][()]) == 0)\n"
      "q = f['/surrogate/quantiles']\n"
      "print('levels', q.shape[2] == len(q.attrs['levels']), q.shape[:2] == (len(t), 2))\n"
      "s = f['/surrogate/sobol_first_by_input']\n"
      "print('shares', s.shape == (len(t), 2, 2), list(f['/surrogate/input_names'].asstr()[...]) == ['start', 'push'])\n",
      folder.path);
  EXPECT_EQ(out,
            "shape True\nexact True\nrate True\nmetric True\nassumptions True\nunits True True\nexceed True\n"
            "levels True True\nshares True True\n");
}

TEST(InputShareStage, SharesOfTheScalarLoopMatchTheClosedForm) {
  // Closed form: x(t) = e^{−at} e0 + (1 − e^{−at})/a · w with e0 ~ U(−0.4, 0.4)
  // (variance 0.16/3) and w ~ U(−0.1, 0.1) (variance 0.01/3), independent, so the
  // share of "start" is V0/(V0 + Vw) with V0 = e^{−2at}·0.16/3 and
  // Vw = ((1 − e^{−at})/a)²·0.01/3, for the output x and for the clearance
  // 0.6 − x of the half-space x ≤ 0.6 alike (linear, so no interaction).
  result::testing::TemporaryFolder folder;
  const app::LoadedCase loaded = write_and_load(
      folder.path,
      scalar_case("[[constraint]]\nname = \"ceiling\"\ntype = \"half-space\"\nposition = [\"x\"]\nnormal = [1]\n"
                  "offset = 0.6\nmax_probability = 0.01\n"),
      "t,x,u\n0,0,0\n20,0,0\n");
  app::AnalysisOptions options;
  options.threads = 2;
  options.progress = false;
  options.mc_runs = 0;
  const result::AnalysisResult r = app::analyze_case(loaded, options);
  const auto& s = r.surrogate;
  ASSERT_EQ(s.input_names, (std::vector<std::string>{"start", "push"}));
  ASSERT_EQ(r.constraints.size(), 1u);
  const auto& c = r.constraints[0];
  // Tensor-grid degree 2 reproduces a linear map exactly; the clearance fit is a
  // least-squares fit of an exactly linear function: both exact to round-off.
  constexpr double kExact = 1e-9;
  for (std::size_t k = 0; k < r.time.size(); ++k) {
    const double t = r.time[k], e = std::exp(-kGain * t);
    const double v0 = e * e * 0.16 / 3, vw = std::pow((1 - e) / kGain, 2) * 0.01 / 3;
    const double share = v0 / (v0 + vw);
    EXPECT_NEAR(s.sobol_first_by_input[k](0, 0), share, kExact) << "t = " << t;
    EXPECT_NEAR(s.sobol_total_by_input[k](0, 1), 1 - share, kExact) << "t = " << t;
    EXPECT_NEAR(c.sobol_first_by_input(static_cast<Eigen::Index>(k), 0), share, kExact) << "t = " << t;
    EXPECT_NEAR(c.sobol_first_by_input(static_cast<Eigen::Index>(k), 1), 1 - share, kExact) << "t = " << t;
    // No residual: the interval collapses onto the value.
    EXPECT_NEAR(c.sobol_first_by_input_upper(static_cast<Eigen::Index>(k), 0), share, 1e-6);
  }
  // Quantile levels hold the constraint's ε, 1 − ε and the median.
  for (double level : {0.01, 0.5, 0.99})
    EXPECT_NE(std::find_if(s.quantile_levels.begin(), s.quantile_levels.end(),
                           [&](double l) { return std::abs(l - level) < 1e-15; }),
              s.quantile_levels.end());
}
