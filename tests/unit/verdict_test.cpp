// SPDX-License-Identifier: MIT
// The bound verdict of montecarlo/verdict.h: evidence of violation from the surrogate
// or the Monte Carlo runs is never overruled by a rare-event estimate, an estimate
// that missed its CoV target gives no verdict, and failed runs count against the
// bound. The expected outcomes follow from the rules in the header (hand-worked).
#include "sigmatube/montecarlo/verdict.h"

#include <gtest/gtest.h>

namespace sigmatube::montecarlo {
namespace {

RareEventEvidence rare(double p, bool converged) {
  RareEventEvidence r;
  r.probability = p;
  r.pessimistic_probability = p;
  r.lower = 0.8 * p;
  r.upper = 1.2 * p;
  r.coefficient_of_variation = converged ? 0.08 : 0.9;
  r.effective_sample_size = converged ? 150 : 1.3;
  r.runs = 5000;
  r.converged = converged;
  return r;
}

TEST(BoundVerdict, CertainViolationIsNeverOverruledByImportanceSampling) {
  // The case of issue 10: the path starts inside the forbidden half-space, surrogate
  // P = 1, Monte Carlo 200 of 200, ε = 1e-5; an importance-sampling estimate of 1e-9
  // (one effective sample) must not turn it into "within".
  BoundEvidence e;
  e.max_probability = 1e-5;
  e.surrogate_probability = 1.0;
  e.surrogate_within = false;
  e.has_montecarlo = true;
  e.montecarlo_pessimistic = 1.0;
  e.montecarlo_violations = 200;
  e.montecarlo_runs = 200;
  for (bool converged : {true, false}) {
    e.rare_event = rare(1e-9, converged);
    const BoundVerdict v = decide_bound(e, "exceeds: p = 1 > 1e-05");
    EXPECT_FALSE(v.within);
    EXPECT_NE(v.basis.find("surrogate"), std::string::npos);
    EXPECT_NE(v.basis.find("Monte Carlo"), std::string::npos);
    EXPECT_EQ(v.line.rfind("exceeds", 0), 0u) << v.line;
  }
}

TEST(BoundVerdict, MonteCarloAloneShowingAViolationFails) {
  // Surrogate says 2e-4 ≤ 1e-3, but 9 of 2000 runs violate: 4.5e-3 > 1e-3.
  BoundEvidence e;
  e.max_probability = 1e-3;
  e.surrogate_probability = 2e-4;
  e.has_montecarlo = true;
  e.montecarlo_pessimistic = 9.0 / 2000.0;
  e.montecarlo_violations = 9;
  e.montecarlo_runs = 2000;
  const BoundVerdict v = decide_bound(e, "meets 0.001 with 0.2 m to spare");
  EXPECT_FALSE(v.within);
  EXPECT_EQ(v.basis, "Monte Carlo");
  EXPECT_NE(v.line.find("exceeds by Monte Carlo"), std::string::npos) << v.line;
}

TEST(BoundVerdict, FailedRunsCountAsViolationsForTheVerdict) {
  // 0 violations but 5 failed of 2000: pessimistic 2.5e-3 > 1e-3.
  BoundEvidence e;
  e.max_probability = 1e-3;
  e.has_montecarlo = true;
  e.montecarlo_failed = 5;
  e.montecarlo_runs = 2000;
  e.montecarlo_pessimistic = 5.0 / 2000.0;
  const BoundVerdict v = decide_bound(e, "meets");
  EXPECT_FALSE(v.within);
  EXPECT_NE(v.line.find("5 failed counted as violations"), std::string::npos) << v.line;
}

TEST(BoundVerdict, ConvergedRareEventEstimateRefinesAndUnconvergedGivesNoVerdict) {
  BoundEvidence e;
  e.max_probability = 1e-5;
  e.surrogate_probability = 3e-6;
  e.has_montecarlo = true;
  e.montecarlo_runs = 2000;
  e.rare_event = rare(2e-5, true);  // converged, above the bound: exceeds
  BoundVerdict v = decide_bound(e, "meets");
  EXPECT_FALSE(v.within);
  EXPECT_EQ(v.basis, "importance sampling");
  e.rare_event = rare(2e-5, false);  // same number, CoV target missed: no verdict from it
  v = decide_bound(e, "meets");
  EXPECT_TRUE(v.within);
  EXPECT_NE(v.line.find("CoV target not met, no verdict from it"), std::string::npos) << v.line;
  e.rare_event = rare(4e-6, true);  // converged, below: supports the verdict
  v = decide_bound(e, "meets");
  EXPECT_TRUE(v.within);
  EXPECT_NE(v.line.find("supports it"), std::string::npos) << v.line;
  // Failed importance-sampling runs counted as violations push it over the bound.
  e.rare_event->pessimistic_probability = 1.5e-5;
  EXPECT_FALSE(decide_bound(e, "meets").within);
}

}  // namespace
}  // namespace sigmatube::montecarlo
