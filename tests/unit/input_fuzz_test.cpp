// SPDX-License-Identifier: MIT
// Fixed-seed mutation fuzzing of the readers (issue: nothing crashes): the case
// reader and loader, the expression compilers (muparser through ExpressionModel
// and the lane compiler), and the plan reader. Each mutant must end in success
// or a one-line sigmatube::InputError / NumericalError; any other exception
// fails the test, and a signal ends the test executable (which ctest reports).
// The result reader has its own fuzz test (result_integrity_test.cpp).
// Mutants per reader: a few hundred in the Release pass, fewer under the
// sanitizers (SIGMATUBE_SANITIZED).
#include <gtest/gtest.h>
#include <unistd.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "sigmatube/app/case_loader.h"
#include "sigmatube/casefile/case_options.h"
#include "sigmatube/core/counter_rng.h"
#include "sigmatube/core/error.h"
#include "sigmatube/model/expression_model.h"
#include "sigmatube/model/lane_expression.h"
#include "sigmatube/model/model_factory.h"
#include "sigmatube/model/plan.h"

namespace {

namespace fs = std::filesystem;
using namespace sigmatube;

constexpr unsigned long long kFuzzSeed = 20261203ULL;
int mutants() { return std::getenv("SIGMATUBE_SANITIZED") ? 80 : 300; }

std::string read_text(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream out;
  out << in.rdbuf();
  return out.str();
}

struct Folder {
  fs::path path;
  explicit Folder(const std::string& name)
      : path(fs::temp_directory_path() / ("sigmatube_fuzz_" + name + "_" + std::to_string(::getpid()))) {
    fs::remove_all(path);
    fs::create_directories(path);
  }
  ~Folder() { fs::remove_all(path); }
};

// Text mutations chosen by the counter-based generator: flip a bit, delete,
// duplicate or insert a run of characters (tokens that matter to the readers
// are favoured), or swap two lines.
class Mutator {
 public:
  explicit Mutator(std::uint64_t stream) : rng_(kFuzzSeed), stream_(stream) {}

  std::string operator()(std::string text) {
    const int edits = 1 + static_cast<int>(pick(0, 3));
    for (int e = 0; e < edits && !text.empty(); ++e) {
      const std::size_t at = pick(0, text.size());
      switch (pick(0, 6)) {
        case 0: text[at] = static_cast<char>(text[at] ^ (1 << pick(0, 8))); break;
        case 1: text.erase(at, pick(1, 40)); break;
        case 2: text.insert(at, text.substr(at, pick(1, 80))); break;
        case 3: {
          static const std::vector<std::string> tokens = {
              "(", ")", "[", "]", "{", "}", ",", "=", "\"", "\n", "#", "1e308", "-1e308", "nan", "inf", "0",
              "-0", "1e-300", "9223372036854775807", "99999999999999999999", "((((((((", "^", "/", "\xEF\xBB\xBF",
              "\xff", "[[uncertain]]", "[[constraint]]", "[limits]"};
          text.insert(at, tokens[pick(0, tokens.size())]);
          break;
        }
        case 4: text.resize(at); break;
        default: {
          const std::size_t a = text.rfind('\n', at), b = text.find('\n', at);
          if (a != std::string::npos && b != std::string::npos && a < b) {
            const std::string line = text.substr(a, b - a);
            text.erase(a, b - a);
            text.insert(pick(0, text.size()), line);
          }
        }
      }
    }
    return text;
  }

 private:
  std::size_t pick(std::size_t lo, std::size_t hi) {
    return lo + static_cast<std::size_t>(rng_.uniform(stream_, draw_++) * static_cast<double>(hi - lo));
  }
  CounterRng rng_;
  std::uint64_t stream_;
  std::uint64_t draw_ = 0;
};

// Runs `body`; InputError and NumericalError must be one line; anything else fails.
template <class Body>
void expect_clean(const Body& body, const std::string& what) {
  try {
    body();
  } catch (const InputError& e) {
    EXPECT_EQ(std::string(e.what()).find('\n'), std::string::npos) << what << ": " << e.what();
  } catch (const NumericalError& e) {
    EXPECT_EQ(std::string(e.what()).find('\n'), std::string::npos) << what << ": " << e.what();
  } catch (const std::exception& e) {
    ADD_FAILURE() << what << ": not an InputError: " << e.what();
  }
}

// Case files: the invented reader-test case and an expression-model case (the
// bundled gantry crane demo, an invented scenario), each mutated and loaded.
TEST(InputFuzz, MutatedCaseFilesLoadOrFailCleanly) {
  const Folder folder("case");
  const fs::path source = SIGMATUBE_SOURCE_DIR;
  fs::copy_file(source / "tests/cases/hcw_minimal_plan.csv", folder.path / "hcw_minimal_plan.csv");
  fs::copy_file(source / "cases/gantry-crane/plan.csv", folder.path / "plan.csv");
  const std::vector<std::string> seeds = {read_text(source / "tests/cases/hcw_minimal.toml"),
                                          read_text(source / "cases/gantry-crane/case.toml")};
  const fs::path file = folder.path / "mutant.toml";
  for (int i = 0; i < mutants(); ++i) {
    Mutator mutate(static_cast<std::uint64_t>(i));
    std::ofstream(file, std::ios::binary | std::ios::trunc) << mutate(seeds[static_cast<std::size_t>(i) % seeds.size()]);
    expect_clean([&] { (void)app::load_case(file.string()); }, "case mutant " + std::to_string(i));
  }
}

// Expressions: mutated right-hand sides through muparser (ExpressionModel
// compiles and evaluates them) and through the lane compiler.
TEST(InputFuzz, MutatedExpressionsCompileOrFailCleanly) {
  const std::vector<std::string> seeds = {"-(g/L)*sin(th) - (a/L)*cos(th) - c*w", "sqrt(abs(th))^2 + min(w, a, 1e3)",
                                          "exp(-w*w) / (1 + th^2) + _pi*avg(a, w)", "sv"};
  const std::vector<std::string> names = {"th", "w", "a", "g", "L", "c"};
  for (int i = 0; i < mutants(); ++i) {
    Mutator mutate(1'000'000 + static_cast<std::uint64_t>(i));
    const std::string text = mutate(seeds[static_cast<std::size_t>(i) % seeds.size()]);
    casefile::ModelOptions options;
    options.states = {"th", "w"};
    options.inputs = {"a"};
    options.parameters = {{"g", 9.81, {}}, {"L", 5.0, {}}, {"c", 0.05, {}}};
    options.rhs = {{"th", "w", {"mutant", 1, "model.rhs.th"}}, {"w", text, {"mutant", 2, "model.rhs.w"}}};
    expect_clean(
        [&] {
          const model::ExpressionModel m(options);
          const double x[2] = {0.1, -0.2}, u[1] = {0.3};
          double dx[2];
          const Eigen::VectorXd p = m.parameters();
          m.rhs(0.0, x, u, p.data(), dx);
        },
        "expression mutant " + std::to_string(i) + " '" + text + "'");
    const auto program = model::LaneExpression::compile(text, names);
    if (program) {
      std::vector<double> values(names.size(), 0.5), scratch(program->scratch_size(1));
      std::vector<const double*> variables;
      for (const double& v : values) variables.push_back(&v);
      double out = 0;
      program->evaluate(variables.data(), 1, &out, scratch.data());
    }
  }
}

// Plans: mutated CSV text read for the built-in Hill–Clohessy–Wiltshire model.
TEST(InputFuzz, MutatedPlansReadOrFailCleanly) {
  const Folder folder("plan");
  const std::string seed = read_text(fs::path(SIGMATUBE_SOURCE_DIR) / "tests/cases/hcw_minimal_plan.csv");
  casefile::ModelOptions hcw;
  hcw.builtin = "hill-clohessy-wiltshire";
  hcw.parameters = {{"mean_motion", 0.00113, {}}};
  const auto model = model::make_model(hcw);
  const fs::path file = folder.path / "plan.csv";
  for (int i = 0; i < mutants(); ++i) {
    Mutator mutate(2'000'000 + static_cast<std::uint64_t>(i));
    std::ofstream(file, std::ios::binary | std::ios::trunc) << mutate(seed);
    casefile::PlanOptions options;
    options.file = "plan.csv";
    options.path = file.string();
    options.interpolation = i % 2 ? casefile::Interpolation::cubic : casefile::Interpolation::linear;
    expect_clean([&] { const model::Plan plan(options, *model); }, "plan mutant " + std::to_string(i));
  }
}

}  // namespace
