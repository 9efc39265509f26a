// SPDX-License-Identifier: MIT
// Tests of model/plan.h: reading a plan CSV, interpolation and every input error.
#include "sigmatube/model/plan.h"

#include <gtest/gtest.h>

#include <fstream>
#include <string>

#include "sigmatube/core/error.h"
#include "sigmatube/model/model_factory.h"

namespace sigmatube::model {
namespace {

std::unique_ptr<Model> unicycle() {
  casefile::ModelOptions options;
  options.builtin = "unicycle";
  return make_model(options);
}

casefile::PlanOptions write_plan(const std::string& name, const std::string& text,
                                 casefile::Interpolation interpolation = casefile::Interpolation::linear) {
  casefile::PlanOptions options;
  options.file = name;
  options.path = testing::TempDir() + "plan_test_" + name;
  std::ofstream(options.path) << text;
  options.interpolation = interpolation;
  return options;
}

// Reads the plan and returns the InputError it throws.
InputError plan_error(const std::string& name, const std::string& text) {
  const auto model = unicycle();
  try {
    Plan plan(write_plan(name, text), *model);
  } catch (const InputError& error) {
    return error;
  }
  ADD_FAILURE() << "no InputError for " << name;
  return InputError("none");
}

TEST(Plan, ReadsAnySubsetOfColumnsInAnyOrderMissingOnesAreZero) {
  const auto model = unicycle();
  const Plan plan(write_plan("subset.csv", "# invented test plan\nt, speed, y\n0, 1.0, 0\n\n10, 3.0, 5\n"), *model);
  EXPECT_EQ(plan.times(), (std::vector<double>{0.0, 10.0}));
  const Eigen::VectorXd x = plan.reference_state(2.5), u = plan.feedforward(2.5);
  EXPECT_DOUBLE_EQ(x(0), 0.0);    // no x column
  EXPECT_DOUBLE_EQ(x(1), 1.25);   // linear in y
  EXPECT_DOUBLE_EQ(u(0), 1.5);    // linear in speed
  EXPECT_DOUBLE_EQ(u(1), 0.0);    // no turn_rate column
  // Held at the end values outside the span.
  EXPECT_DOUBLE_EQ(plan.reference_state(99.0)(1), 5.0);
  EXPECT_DOUBLE_EQ(plan.reference_state(-1.0)(1), 0.0);
}

TEST(Plan, CubicIsTheNaturalSplineComputedByHand) {
  // Knots (0,0), (1,1), (2,0). Natural spline: M0 = M2 = 0 and
  // 2(h0 + h1)·M1 = 6·((y2 − y1)/h1 − (y1 − y0)/h0) → 4·M1 = −12 → M1 = −3.
  // S(0.5) = ½·0 + ½·1 + ((⅛ − ½)·0 + (⅛ − ½)·(−3))·1/6 = 0.5 + 0.1875 = 0.6875.
  const auto model = unicycle();
  const Plan plan(write_plan("cubic.csv", "t,x\n0,0\n1,1\n2,0\n", casefile::Interpolation::cubic), *model);
  EXPECT_NEAR(plan.reference_state(0.5)(0), 0.6875, 1e-15);
  EXPECT_NEAR(plan.reference_state(1.5)(0), 0.6875, 1e-15);  // symmetric
  EXPECT_NEAR(plan.reference_state(1.0)(0), 1.0, 1e-15);     // interpolates
}

TEST(Plan, CubicReproducesStraightLines) {
  const auto model = unicycle();
  const Plan plan(write_plan("line.csv", "t,x\n0,1\n0.5,2\n2,5\n3,7\n", casefile::Interpolation::cubic), *model);
  for (double t : {0.1, 0.7, 1.3, 2.9}) EXPECT_NEAR(plan.reference_state(t)(0), 1.0 + 2.0 * t, 1e-13);
}

TEST(PlanErrors, MissingFileNamesTheFile) {
  const auto model = unicycle();
  casefile::PlanOptions options;
  options.file = "nowhere.csv";
  options.path = "/nonexistent/nowhere.csv";
  try {
    Plan plan(options, *model);
    FAIL();
  } catch (const InputError& error) {
    EXPECT_EQ(error.where().file, "nowhere.csv");
  }
}

TEST(PlanErrors, FirstColumnMustBeTime) {
  const InputError error = plan_error("no_t.csv", "time,x\n0,0\n1,1\n");
  EXPECT_EQ(error.where().file, "no_t.csv");
  EXPECT_EQ(error.where().line, 1);
  EXPECT_NE(std::string(error.what()).find("'t'"), std::string::npos) << error.what();
}

TEST(PlanErrors, UnknownColumnSuggestsNearestName) {
  const InputError error = plan_error("unknown.csv", "t,x,haeding\n0,0,0\n1,1,1\n");
  EXPECT_EQ(error.where().line, 1);
  EXPECT_NE(error.where().key.find("haeding"), std::string::npos);
  EXPECT_NE(std::string(error.what()).find("did you mean 'heading'?"), std::string::npos) << error.what();
}

TEST(PlanErrors, NonNumericCellNamesLineAndColumn) {
  const InputError error = plan_error("text.csv", "t,x,y\n0,0,0\n1,one,1\n");
  EXPECT_EQ(error.where().line, 3);
  EXPECT_EQ(error.where().key, "column 'x'");
  EXPECT_NE(std::string(error.what()).find("'one'"), std::string::npos) << error.what();
}

TEST(PlanErrors, FewerThanTwoRows) {
  const InputError error = plan_error("short.csv", "t,x\n0,0\n");
  EXPECT_NE(std::string(error.what()).find("at least 2 rows"), std::string::npos) << error.what();
}

TEST(PlanErrors, TimesNotStrictlyIncreasingNameTheLine) {
  const InputError error = plan_error("order.csv", "t,x\n0,0\n1,1\n1,2\n");
  EXPECT_EQ(error.where().line, 4);
  EXPECT_EQ(error.where().key, "column 't'");
}

TEST(PlanErrors, RowWithWrongCellCount) {
  const InputError error = plan_error("ragged.csv", "t,x\n0,0\n1\n");
  EXPECT_EQ(error.where().line, 3);
}

}  // namespace
}  // namespace sigmatube::model
