// SPDX-License-Identifier: MIT
// validate_against_model on option structs built in code (the file-based cases are in
// case_reader_test with tests/bad_cases/*.toml).
#include "sigmatube/casefile/case_validation.h"

#include <gtest/gtest.h>

#include <string>
#include <vector>

using namespace sigmatube;
using namespace sigmatube::casefile;

namespace {

// An invented expression model: a damped oscillator with one derived output.
const std::vector<std::string> kStates = {"x", "v"};
const std::vector<std::string> kInputs = {"u"};
const std::vector<std::string> kParameters = {"k", "c"};
const std::vector<std::string> kOutputs = {"x", "v", "energy"};

CaseOptions oscillator_case() {
  CaseOptions c;
  c.path = "invented.toml";
  c.control.law = ControlLaw::lqr;
  c.control.q = {1, 1};
  c.control.r = {0.1};
  UncertainOptions stiffness;
  stiffness.name = "stiffness";
  stiffness.applies_to = {"parameter.k"};
  stiffness.where = {"invented.toml", 20, "uncertain[1]"};
  c.uncertain.push_back(stiffness);
  ConstraintOptions energy;
  energy.name = "energy-cap";
  energy.type = ConstraintKind::inside_box;
  energy.position = {"energy"};
  energy.where = {"invented.toml", 30, "constraint[1]"};
  energy.key_where.keys["position"] = {"invented.toml", 33, "constraint[1].position"};
  c.constraints.push_back(energy);
  return c;
}

TEST(ValidateAgainstModel, AcceptsDerivedOutputsInPosition) {
  EXPECT_NO_THROW(validate_against_model(oscillator_case(), kStates, kInputs, kParameters, kOutputs));
}

TEST(ValidateAgainstModel, NamesTheKeyLineWhenItWasRecorded) {
  CaseOptions c = oscillator_case();
  c.constraints[0].position = {"energi"};
  try {
    validate_against_model(c, kStates, kInputs, kParameters, kOutputs);
    FAIL() << "no exception";
  } catch (const InputError& error) {
    EXPECT_EQ(error.where().line, 33);
    EXPECT_EQ(error.where().key, "constraint[1].position");
    EXPECT_NE(std::string(error.what()).find("did you mean 'energy'?"), std::string::npos);
  }
}

TEST(ValidateAgainstModel, FallsBackToTheEntryLineForUnrecordedKeys) {
  CaseOptions c = oscillator_case();
  c.uncertain[0].applies_to = {"parameter.kk"};
  try {
    validate_against_model(c, kStates, kInputs, kParameters, kOutputs);
    FAIL() << "no exception";
  } catch (const InputError& error) {
    EXPECT_EQ(error.where().line, 20);
    EXPECT_EQ(error.where().key, "uncertain[1].applies_to");
    EXPECT_NE(std::string(error.what()).find("did you mean 'k'?"), std::string::npos);
  }
}

TEST(ValidateAgainstModel, RejectsBuiltinOutputThatReusesAStateName) {
  CaseOptions c = oscillator_case();
  c.model.builtin = "invented-builtin";
  c.model.outputs.push_back({"v", "x*x", {"invented.toml", 6, "model.outputs.v"}});
  EXPECT_THROW(validate_against_model(c, kStates, kInputs, kParameters, kOutputs), InputError);
}

TEST(ValidateAgainstModel, RejectsGainWithWrongRowCount) {
  CaseOptions c = oscillator_case();
  c.control.law = ControlLaw::gain;
  c.control.gain = {{1, 2}, {3, 4}};
  EXPECT_THROW(validate_against_model(c, kStates, kInputs, kParameters, kOutputs), InputError);
  c.control.gain = {{1, 2}};
  EXPECT_NO_THROW(validate_against_model(c, kStates, kInputs, kParameters, kOutputs));
}

TEST(ValidateAgainstModel, InputTargetsMustBeInputsNotStates) {
  CaseOptions c = oscillator_case();
  c.uncertain[0].applies_to = {"input_bias.x"};
  EXPECT_THROW(validate_against_model(c, kStates, kInputs, kParameters, kOutputs), InputError);
  c.uncertain[0].applies_to = {"disturbance.x"};
  EXPECT_NO_THROW(validate_against_model(c, kStates, kInputs, kParameters, kOutputs));
}

}  // namespace
