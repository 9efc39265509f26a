// SPDX-License-Identifier: MIT
// The case reader against a complete invented case (tests/cases/hcw_minimal.toml) and
// against one file per defect class (tests/bad_cases/*.toml). Each bad file names
// the expected line, dotted key, stage and a message fragment in its first line:
//   # expect: line=12 key=uncertain[1].std stage=read message=must be > 0
// stage=read: read_case must throw; stage=model: read_case succeeds and
// validate_against_model (Hill–Clohessy–Wiltshire names, product.md §4) throws;
// stage=load: both succeed and app::load_case throws (limits and windows,
// which need the plan: docs/case-file.md, "Limits").
#include <gtest/gtest.h>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <regex>
#include <string>
#include <vector>

#include "sigmatube/app/case_loader.h"
#include "sigmatube/casefile/case_reader.h"
#include "sigmatube/casefile/case_validation.h"

namespace fs = std::filesystem;
using namespace sigmatube;
using namespace sigmatube::casefile;

namespace {

const std::string kSource = SIGMATUBE_SOURCE_DIR;

// The built-in names of hill-clohessy-wiltshire as fixed by product.md §4.
const std::vector<std::string> kHcwStates = {"x", "y", "z", "vx", "vy", "vz"};
const std::vector<std::string> kHcwInputs = {"ax", "ay", "az"};
const std::vector<std::string> kHcwParameters = {"mean_motion"};

// Numbers in the case file are decimal literals; reading them must give the nearest
// double exactly (toml++ parses like strtod), so compare with ==.

TEST(CaseReader, ReadsCompleteCaseIntoExpectedValues) {
  const std::string path = kSource + "/tests/cases/hcw_minimal.toml";
  const CaseOptions c = read_case(path);
  EXPECT_EQ(c.path, path);
  EXPECT_EQ(c.title, "invented HCW approach");
  EXPECT_EQ(c.model.builtin, "hill-clohessy-wiltshire");
  ASSERT_EQ(c.model.parameters.size(), 1u);
  EXPECT_EQ(c.model.parameters[0].name, "mean_motion");
  EXPECT_EQ(c.model.parameters[0].value, 0.00113);
  EXPECT_EQ(c.model.parameters[0].where.line, 7);
  EXPECT_EQ(c.model.parameters[0].where.key, "model.mean_motion");

  EXPECT_EQ(c.plan.file, "hcw_minimal_plan.csv");
  EXPECT_TRUE(fs::equivalent(c.plan.path, kSource + "/tests/cases/hcw_minimal_plan.csv"));
  EXPECT_EQ(c.plan.interpolation, Interpolation::linear);  // default

  EXPECT_EQ(c.control.law, ControlLaw::lqr);
  EXPECT_EQ(c.control.q, (std::vector<double>{1, 1, 1, 10, 10, 10}));
  EXPECT_EQ(c.control.r, (std::vector<double>{1e3, 1e3, 1e3}));
  EXPECT_TRUE(c.control.time_varying);  // default
  ASSERT_EQ(c.control.limits.size(), 2u);
  // File order, not the alphabetical order of the TOML table.
  EXPECT_EQ(c.control.limits[0].input, "ay");
  EXPECT_EQ(c.control.limits[1].input, "ax");
  EXPECT_EQ(c.control.limits[1].low, -0.03);
  EXPECT_EQ(c.control.limits[1].high, 0.03);
  EXPECT_EQ(c.control.limits[1].where.key, "control.limits.ax");

  EXPECT_EQ(c.simulation.integrator, IntegratorKind::rk4);
  EXPECT_EQ(c.simulation.step_in_seconds, 0.5);
  EXPECT_EQ(c.simulation.rtol, 1e-8);   // default
  EXPECT_EQ(c.simulation.atol, 1e-10);  // default
  EXPECT_EQ(c.simulation.report_every_in_seconds, 0.0);  // default: the plan's times

  ASSERT_EQ(c.uncertain.size(), 3u);
  const UncertainOptions& nav = c.uncertain[0];
  EXPECT_EQ(nav.name, "nav-position");
  EXPECT_EQ(nav.applies_to, (std::vector<std::string>{"initial.x", "initial.y", "initial.z"}));
  EXPECT_EQ(nav.distribution, DistributionKind::normal);
  EXPECT_EQ(nav.mean, (std::vector<double>{0, 0, 0}));
  ASSERT_EQ(nav.covariance.size(), 3u);
  EXPECT_EQ(nav.covariance[0][1], 0.01);
  EXPECT_EQ(nav.covariance[2][2], 0.04);
  EXPECT_TRUE(nav.std.empty());
  EXPECT_EQ(nav.where.line, 22);
  EXPECT_EQ(nav.where.key, "uncertain[1]");
  EXPECT_EQ(nav.key_where.of("covariance", nav.where).line, 27);

  const UncertainOptions& gain = c.uncertain[1];
  EXPECT_EQ(gain.applies_to, (std::vector<std::string>{"input_scale.ax"}));  // a bare string is one target
  EXPECT_EQ(gain.distribution, DistributionKind::uniform);
  EXPECT_EQ(gain.low, 0.97);
  EXPECT_EQ(gain.high, 1.03);

  const UncertainOptions& drift = c.uncertain[2];
  EXPECT_EQ(drift.distribution, DistributionKind::gaussian_process);
  EXPECT_EQ(drift.kernel, KernelKind::squared_exponential);
  EXPECT_EQ(drift.std, (std::vector<double>{1e-5}));
  EXPECT_EQ(drift.correlation_time_in_seconds, 120.0);  // an integer where a float is expected
  EXPECT_EQ(drift.modes, 0);
  EXPECT_EQ(drift.energy, 0.95);

  ASSERT_EQ(c.constraints.size(), 2u);
  const ConstraintOptions& keep_out = c.constraints[0];
  EXPECT_EQ(keep_out.name, "keep-out");
  EXPECT_EQ(keep_out.type, ConstraintKind::outside_sphere);
  EXPECT_EQ(keep_out.position, (std::vector<std::string>{"x", "y", "z"}));
  EXPECT_EQ(keep_out.center, (std::vector<double>{0, 0, 0}));
  EXPECT_EQ(keep_out.radius, 20.0);
  ASSERT_TRUE(keep_out.window_in_seconds.has_value());
  EXPECT_EQ(keep_out.window_in_seconds->first, 0.0);
  EXPECT_EQ(keep_out.window_in_seconds->second, 300.0);
  EXPECT_EQ(keep_out.max_probability, 1e-3);
  EXPECT_EQ(keep_out.scope, ConstraintScope::path);  // default

  const ConstraintOptions& thrust = c.constraints[1];
  EXPECT_EQ(thrust.type, ConstraintKind::input_limit);
  EXPECT_EQ(thrust.input, "ay");
  EXPECT_EQ(thrust.low, (std::vector<double>{-0.05}));
  EXPECT_EQ(thrust.high, (std::vector<double>{0.05}));
  EXPECT_FALSE(thrust.window_in_seconds.has_value());
  EXPECT_EQ(thrust.scope, ConstraintScope::pointwise);

  // [surrogate] sets only degree; everything else keeps the documented defaults.
  EXPECT_EQ(c.surrogate.method, SurrogateMethod::sparse_grid);
  EXPECT_EQ(c.surrogate.degree, 2);
  EXPECT_EQ(c.surrogate.level, 3);
  EXPECT_EQ(c.surrogate.q_norm, 1.0);
  EXPECT_FALSE(c.surrogate.adaptive);
  EXPECT_EQ(c.surrogate.tolerance, 1e-3);
  EXPECT_EQ(c.surrogate.max_model_runs, 2000);
  EXPECT_EQ(c.surrogate.samples, 1000000);
  EXPECT_EQ(c.surrogate.oversampling, 2.0);
  EXPECT_EQ(c.surrogate.design, RegressionDesign::sobol);
  EXPECT_FALSE(c.surrogate.nested);

  EXPECT_EQ(c.montecarlo.runs, 500);
  EXPECT_EQ(c.montecarlo.seed, 20261201ULL);  // default
  EXPECT_EQ(c.montecarlo.confidence, 0.95);   // default

  EXPECT_NO_THROW(validate_against_model(c, kHcwStates, kHcwInputs, kHcwParameters, kHcwStates));
}

TEST(CaseReader, ExpressionModelKeepsFileOrderAndLines) {
  const fs::path dir = fs::path(testing::TempDir()) / "case_reader_expression";
  fs::create_directories(dir);
  std::ofstream(dir / "plan.csv") << "t,x,v\n0,1,0\n1,1,0\n";
  std::ofstream(dir / "case.toml") << "[model]\n"
                                      "states = [\"x\", \"v\"]\n"
                                      "inputs = [\"u\"]\n"
                                      "parameters = { k = 1, c = 0.1 }\n"
                                      "rhs = { x = \"v\", v = \"-k*x - c*v + u\" }\n"
                                      "outputs = { energy = \"0.5*v^2 + 0.5*k*x^2\", abs_x = \"abs(x)\" }\n"
                                      "[plan]\nfile = \"plan.csv\"\ninterpolation = \"cubic\"\n";
  const CaseOptions c = read_case((dir / "case.toml").string());
  EXPECT_TRUE(c.model.builtin.empty());
  EXPECT_EQ(c.model.states, (std::vector<std::string>{"x", "v"}));
  EXPECT_EQ(c.model.inputs, (std::vector<std::string>{"u"}));
  ASSERT_EQ(c.model.parameters.size(), 2u);
  EXPECT_EQ(c.model.parameters[0].name, "k");  // file order, not alphabetical
  EXPECT_EQ(c.model.parameters[0].value, 1.0);
  EXPECT_EQ(c.model.parameters[1].name, "c");
  ASSERT_EQ(c.model.rhs.size(), 2u);
  EXPECT_EQ(c.model.rhs[1].name, "v");
  EXPECT_EQ(c.model.rhs[1].text, "-k*x - c*v + u");
  EXPECT_EQ(c.model.rhs[1].where.line, 5);
  EXPECT_EQ(c.model.rhs[1].where.key, "model.rhs.v");
  ASSERT_EQ(c.model.outputs.size(), 2u);
  EXPECT_EQ(c.model.outputs[0].name, "energy");
  EXPECT_EQ(c.model.outputs[1].name, "abs_x");
  EXPECT_EQ(c.plan.interpolation, Interpolation::cubic);
  EXPECT_EQ(c.control.law, ControlLaw::open_loop);  // default when [control] is absent
  EXPECT_TRUE(c.uncertain.empty());
  EXPECT_TRUE(c.constraints.empty());
}

// ------------------------------------------------------------------ bad cases

struct BadCase {
  std::string path;
  int line = -1;
  std::string key;
  std::string stage;
  std::string message;
};

// gtest prints parameters on failure; the file name says everything.
void PrintTo(const BadCase& c, std::ostream* out) { *out << c.path; }

std::vector<BadCase> load_bad_cases() {
  std::vector<BadCase> cases;
  const std::regex header(R"(^# expect: line=(\d+) key=(\S*) stage=(read|model|load) message=(.+)$)");
  for (const auto& entry : fs::directory_iterator(kSource + "/tests/bad_cases")) {
    if (entry.path().extension() != ".toml") continue;
    std::ifstream in(entry.path());
    std::string first;
    std::getline(in, first);
    BadCase c;
    c.path = entry.path().string();
    std::smatch m;
    if (std::regex_match(first, m, header)) {
      c.line = std::stoi(m[1]);
      c.key = m[2];
      c.stage = m[3];
      c.message = m[4];
    }
    cases.push_back(c);
  }
  std::sort(cases.begin(), cases.end(), [](const BadCase& a, const BadCase& b) { return a.path < b.path; });
  return cases;
}

class BadCaseFile : public testing::TestWithParam<BadCase> {};

TEST_P(BadCaseFile, FailsWithOneLineMessageNamingFileLineAndKey) {
  const BadCase& c = GetParam();
  ASSERT_GE(c.line, 0) << c.path << ": first line must be '# expect: line=N key=K stage=S message=M'";
  bool thrown = false;
  try {
    const CaseOptions options = read_case(c.path);
    ASSERT_NE(c.stage, "read") << c.path << " was expected to fail in read_case";
    validate_against_model(options, kHcwStates, kHcwInputs, kHcwParameters, kHcwStates);
    ASSERT_EQ(c.stage, "load") << c.path << " was expected to fail in validate_against_model";
    (void)app::load_case(c.path);
  } catch (const InputError& error) {
    thrown = true;
    const std::string what = error.what();
    SCOPED_TRACE(what);
    EXPECT_EQ(what.find('\n'), std::string::npos);
    EXPECT_EQ(error.where().file, c.path);
    EXPECT_EQ(error.where().line, c.line);
    EXPECT_EQ(error.where().key, c.key);
    const std::string prefix = c.line > 0 ? c.path + ":" + std::to_string(c.line) + ": " : c.path + ": ";
    EXPECT_EQ(what.rfind(prefix, 0), 0u) << "expected prefix " << prefix;
    if (!c.key.empty()) EXPECT_NE(what.find(": " + c.key + ": "), std::string::npos);
    EXPECT_NE(what.find(c.message), std::string::npos) << "expected fragment: " << c.message;
  }
  EXPECT_TRUE(thrown) << c.path << " did not fail";
}

std::string bad_case_name(const testing::TestParamInfo<BadCase>& info) {
  std::string name = fs::path(info.param.path).stem().string();
  for (char& ch : name)
    if (!std::isalnum(static_cast<unsigned char>(ch))) ch = '_';
  return name;
}

INSTANTIATE_TEST_SUITE_P(AllBadCases, BadCaseFile, testing::ValuesIn(load_bad_cases()), bad_case_name);

TEST(CaseReader, BadCaseCollectionCoversAtLeast25Defects) {
  EXPECT_GE(load_bad_cases().size(), 25u);
}

TEST(CaseReader, MissingCaseFileIsInputError) {
  const std::string path = kSource + "/tests/cases/no-such-case.toml";
  try {
    read_case(path);
    FAIL() << "no exception";
  } catch (const InputError& error) {
    EXPECT_EQ(error.where().file, path);
    EXPECT_NE(std::string(error.what()).find("cannot open case file"), std::string::npos);
  }
}

}  // namespace
