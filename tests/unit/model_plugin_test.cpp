// SPDX-License-Identifier: MIT
// Model plugins (sigmatube/model_plugin.h). The reference for the numbers is the
// built-in "hill-clohessy-wiltshire" model, whose own accuracy is checked against
// the Clohessy–Wiltshire closed form in builtin_models_test: the example plugin
// (examples/model-plugin/hcw_plugin.c) computes the same dynamics, so every
// number of an analysis must agree. The loader's error checks use one fixture
// library per defect (tests/plugins/faulty_plugin.c).
#include <gtest/gtest.h>
#include <sys/wait.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <regex>
#include <sstream>
#include <string>
#include <vector>

#include "sigmatube/app/analysis.h"
#include "sigmatube/app/case_loader.h"
#include "sigmatube/core/error.h"
#include "sigmatube/model/batch_propagator.h"
#include "sigmatube/model/plugin_model.h"

namespace {

namespace fs = std::filesystem;
using namespace sigmatube;

const fs::path kSource = SIGMATUBE_SOURCE_DIR;

// The plugin has no analytic Jacobians, so the LQR gains come from central
// differences (Model::jacobians); for the linear HCW dynamics those are exact up
// to rounding (≈ eps/cbrt(eps) ≈ 1e-11 relative at worst), which moves
// trajectories, moments and clearances by far less than this (relative to
// max(1, |value|); measured 2.5e-14 on tests/cases/hcw_minimal.toml).
constexpr double kAgreement = 1e-10;

std::string read_file(const fs::path& path) {
  std::ifstream in(path);
  std::stringstream text;
  text << in.rdbuf();
  return text.str();
}

// A copy of tests/cases/hcw_minimal.toml in `folder` whose model is `model_lines`
// (and whose plan is the original plan file).
fs::path write_case(const fs::path& folder, const std::string& name, const std::string& model_lines,
                    const std::string& extra = "") {
  fs::create_directories(folder);
  std::string text = read_file(kSource / "tests/cases/hcw_minimal.toml");
  const std::string builtin = "builtin = \"hill-clohessy-wiltshire\"\nmean_motion = 0.00113\n";
  const auto at = text.find(builtin);
  if (at == std::string::npos) throw std::runtime_error("hcw_minimal.toml changed: model lines not found");
  text.replace(at, builtin.size(), model_lines);
  const std::string plan = "file = \"hcw_minimal_plan.csv\"";
  text.replace(text.find(plan), plan.size(), "file = \"" + (kSource / "tests/cases/hcw_minimal_plan.csv").string() + "\"");
  const fs::path path = folder / name;
  std::ofstream(path) << text << extra;
  return path;
}

fs::path case_folder() { return fs::path(SIGMATUBE_HCW_PLUGIN).parent_path() / "cases"; }

// The plugin case lives one folder below the library: plugin = "../libhcw_plugin.so"
// tests that the path is relative to the case file.
fs::path hcw_plugin_case() {
  return write_case(case_folder(), "hcw_plugin.toml",
                    "plugin = \"../" + fs::path(SIGMATUBE_HCW_PLUGIN).filename().string() +
                        "\"\nparameters = { mean_motion = 0.00113 }\n");
}

double scale(double v) { return std::max(1.0, std::abs(v)); }

void expect_close(const Eigen::MatrixXd& a, const Eigen::MatrixXd& b, const std::string& what) {
  ASSERT_EQ(a.rows(), b.rows()) << what;
  ASSERT_EQ(a.cols(), b.cols()) << what;
  double worst = 0.0;
  for (Eigen::Index i = 0; i < a.rows(); ++i)
    for (Eigen::Index j = 0; j < a.cols(); ++j) {
      if (std::isnan(a(i, j)) && std::isnan(b(i, j))) continue;
      worst = std::max(worst, std::abs(a(i, j) - b(i, j)) / scale(b(i, j)));
    }
  EXPECT_LE(worst, kAgreement) << what;
}

TEST(ModelPlugin, HcwPluginAnalysisGivesTheBuiltinNumbers) {
  const app::LoadedCase builtin = app::load_case((kSource / "tests/cases/hcw_minimal.toml").string());
  const app::LoadedCase plugin = app::load_case(hcw_plugin_case().string());
  ASSERT_NE(dynamic_cast<const model::PluginModel*>(plugin.model.get()), nullptr);
  EXPECT_EQ(plugin.model->state_names(), builtin.model->state_names());
  EXPECT_EQ(plugin.model->input_names(), builtin.model->input_names());
  EXPECT_EQ(plugin.model->parameter_names(), builtin.model->parameter_names());

  app::AnalysisOptions options;
  options.threads = 2;
  options.mc_runs = 200;
  options.progress = false;
  const result::AnalysisResult a = app::analyze_case(builtin, options);
  const result::AnalysisResult b = app::analyze_case(plugin, options);
  EXPECT_EQ(b.output_names, a.output_names);
  expect_close(b.nominal_outputs, a.nominal_outputs, "nominal");
  expect_close(b.surrogate.mean, a.surrogate.mean, "surrogate mean");
  expect_close(b.surrogate.std, a.surrogate.std, "surrogate std");
  expect_close(b.montecarlo.mean, a.montecarlo.mean, "Monte Carlo mean");
  expect_close(b.montecarlo.std, a.montecarlo.std, "Monte Carlo std");
  ASSERT_EQ(b.constraints.size(), a.constraints.size());
  for (std::size_t c = 0; c < a.constraints.size(); ++c) {
    const auto &ca = a.constraints[c], &cb = b.constraints[c];
    EXPECT_NEAR(cb.path_probability, ca.path_probability, kAgreement) << ca.name;
    EXPECT_NEAR(cb.margin, ca.margin, kAgreement * scale(ca.margin)) << ca.name;
    EXPECT_EQ(cb.montecarlo.path_violations, ca.montecarlo.path_violations) << ca.name;
    EXPECT_EQ(cb.verdict, ca.verdict) << ca.name;
  }
}

// The batched path hands all lanes to the plugin's rhs at once (structure of
// arrays); the one-run path calls it with one lane. Same arithmetic: bit-identical.
TEST(ModelPlugin, BatchedLanesEqualOneRunCalls) {
  const app::LoadedCase loaded = app::load_case(hcw_plugin_case().string());
  const auto& cl = *loaded.closed_loop;
  const model::BatchPropagator batch(cl, loaded.options);
  ASSERT_TRUE(batch.supported());
  const int lanes = 5, d = loaded.germ->dimension();
  const auto T = static_cast<Eigen::Index>(cl.report_times().size());
  const std::size_t width = static_cast<std::size_t>(T) * static_cast<std::size_t>(cl.output_count());
  std::vector<model::Perturbation> perturbations(lanes, cl.nominal());
  std::vector<double> xi(static_cast<std::size_t>(d));
  for (int l = 0; l < lanes; ++l) {
    for (int j = 0; j < d; ++j) xi[static_cast<std::size_t>(j)] = 0.1 * (l - 2) * (j % 2 ? -1.0 : 1.0);
    loaded.germ->apply(xi.data(), perturbations[static_cast<std::size_t>(l)]);
  }
  std::vector<double> rows(width * lanes);
  std::vector<std::uint8_t> ok(lanes, 0);
  batch.run(perturbations.data(), lanes, rows.data(), width, ok.data());
  for (int l = 0; l < lanes; ++l) {
    ASSERT_EQ(ok[static_cast<std::size_t>(l)], 1);
    Eigen::MatrixXd single(T, cl.output_count());
    cl.run(perturbations[static_cast<std::size_t>(l)], single, l);
    for (Eigen::Index t = 0; t < T; ++t)
      for (int o = 0; o < cl.output_count(); ++o)
        ASSERT_EQ(rows[static_cast<std::size_t>(l) * width + static_cast<std::size_t>(t * cl.output_count() + o)], single(t, o))
            << "lane " << l << " time " << t << " output " << o;
  }
}

// A case for the two-state fixture plugin x' = v, v' = −c·v + a.
fs::path line_case(const std::string& fault, const std::string& model_extra = "", const std::string& integrator = "rk4") {
  const fs::path folder = fs::path(SIGMATUBE_TEST_PLUGIN_DIR) / "cases";
  fs::create_directories(folder);
  std::ofstream(folder / "line_plan.csv") << "t,x,v\n0,0,0\n10,1,0.1\n";
  const fs::path path = folder / ("line_" + fault + ".toml");
  std::ofstream(path) << "# invented test case\n[model]\nplugin = \"../libtest_plugin_" << fault << ".so\"\n"
                      << model_extra << "\n[plan]\nfile = \"line_plan.csv\"\n\n[simulation]\nintegrator = \""
                      << integrator << "\"\nstep = 0.5\n";
  return path;
}

void expect_input_error(const fs::path& path, int line, const std::string& key, const std::string& words) {
  try {
    (void)app::load_case(path.string());
    ADD_FAILURE() << path << ": no error";
  } catch (const InputError& error) {
    const std::string message = error.what();
    const std::string prefix = path.string() + ":" + std::to_string(line) + ": " + key + ": ";
    EXPECT_EQ(message.rfind(prefix, 0), 0u) << message;
    EXPECT_NE(message.find(words), std::string::npos) << message;
    EXPECT_EQ(message.find('\n'), std::string::npos) << message;
  }
}

TEST(ModelPlugin, LoaderNamesTheDefectAtTheCaseKey) {
  expect_input_error(line_case("abi"), 3, "model.plugin", "ABI version 2");
  expect_input_error(line_case("duplicate"), 3, "model.plugin", "'x' is used twice");
  expect_input_error(line_case("bad_name"), 3, "model.plugin", "'v-dot' is not a valid name");
  expect_input_error(line_case("null_rhs"), 3, "model.plugin", "rhs is null");
  expect_input_error(line_case("no_entry"), 3, "model.plugin", "does not export sigmatube_model_v1");
  expect_input_error(line_case("missing"), 3, "model.plugin", "not found");
  // A file that is not a shared library (the plan CSV).
  const fs::path not_library = line_case("none").parent_path() / "not_a_library.toml";
  std::ofstream(not_library) << "[model]\nplugin = \"line_plan.csv\"\n[plan]\nfile = \"line_plan.csv\"\n";
  expect_input_error(not_library, 2, "model.plugin", "cannot load model plugin 'line_plan.csv'");
}

TEST(ModelPlugin, ParametersAreOverriddenByNameAndCheckedAgainstThePlugin) {
  const app::LoadedCase loaded = app::load_case(line_case("none", "parameters = { c = 0.5 }").string());
  ASSERT_EQ(loaded.model->parameters().size(), 1);
  EXPECT_EQ(loaded.model->parameters()(0), 0.5);
  expect_input_error(line_case("none", "parameters = { cc = 0.5 }"), 4, "model.parameters.cc", "did you mean 'c'");
  expect_input_error(line_case("none", "states = [\"x\"]"), 4, "model.states", "does not belong to a model plugin");
}

TEST(ModelPlugin, DerivedOutputsAreExpressionsInThePluginNames) {
  const app::LoadedCase loaded = app::load_case(line_case("none", "outputs = { energy = \"0.5 * v^2\" }").string());
  const std::vector<std::string> expected{"energy"};
  EXPECT_EQ(loaded.model->derived_output_names(), expected);
  const double x[2] = {1.0, 3.0}, u[1] = {0.0}, p[1] = {0.1};
  double y = 0.0;
  loaded.model->derived_outputs(0.0, x, u, p, &y);
  EXPECT_EQ(y, 4.5);  // ½·3², exact in binary
}

// NaN from a plugin is a numerical failure of that run: an exception naming the
// run, and in a batch a failed lane beside lanes that are fine.
TEST(ModelPlugin, NanFromThePluginFailsThatRunOnly) {
  for (const std::string integrator : {"rk4", "dopri5"}) {
    const app::LoadedCase bad = app::load_case(line_case("nan", "parameters = { c = -1 }", integrator).string());
    EXPECT_THROW((void)app::simulate_case(bad), NumericalError) << integrator;
  }
  const app::LoadedCase loaded = app::load_case(line_case("nan").string());
  const auto& cl = *loaded.closed_loop;
  const model::BatchPropagator batch(cl, loaded.options);
  const auto T = static_cast<Eigen::Index>(cl.report_times().size());
  const std::size_t width = static_cast<std::size_t>(T) * static_cast<std::size_t>(cl.output_count());
  std::vector<model::Perturbation> perturbations(3, cl.nominal());
  perturbations[1].parameters(0) = -1.0;
  std::vector<double> rows(width * 3);
  std::vector<std::uint8_t> ok(3, 0);
  batch.run(perturbations.data(), 3, rows.data(), width, ok.data());
  EXPECT_EQ(ok[0], 1);
  EXPECT_EQ(ok[1], 0);
  EXPECT_EQ(ok[2], 1);
}

int run_cli(const std::string& arguments) {
  const int status = std::system((std::string(SIGMATUBE_CLI) + " " + arguments + " >/dev/null 2>&1").c_str());
  return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
}

TEST(ModelPlugin, CommandLineExitCodes) {
  EXPECT_EQ(run_cli("check " + line_case("abi").string()), 2);
  EXPECT_EQ(run_cli("check " + line_case("none").string()), 0);
  const fs::path out = fs::path(SIGMATUBE_TEST_PLUGIN_DIR) / "cases" / "nan_out.h5";
  fs::remove(out);
  EXPECT_EQ(run_cli("simulate " + line_case("nan", "parameters = { c = -1 }").string() + " -o " + out.string()), 4);
  EXPECT_FALSE(fs::exists(out));
}

}  // namespace
