// SPDX-License-Identifier: MIT
// Tests of model/integrator.h (fixed-step RK4 and adaptive Dormand–Prince 5(4)).
#include "sigmatube/model/integrator.h"

#include <gtest/gtest.h>

#include <cmath>
#include <string>
#include <vector>

#include "sigmatube/core/error.h"

namespace sigmatube::model {
namespace {

constexpr double kOmega = 2.0;  // rad/s

// ẍ = −ω²x, x(0) = 1, ẋ(0) = 0: x = cos ωt, ẋ = −ω sin ωt (closed form).
void oscillator(double, const double* x, double* dxdt) {
  dxdt[0] = x[1];
  dxdt[1] = -kOmega * kOmega * x[0];
}

double rk4_error(double step) {
  casefile::SimulationOptions options;
  options.integrator = casefile::IntegratorKind::rk4;
  options.step_in_seconds = step;
  OdeIntegrator integrator(options, 2);
  const double T = 5.0;
  double x[2] = {1.0, 0.0};
  integrator.integrate(oscillator, {0.0, T}, x, [](std::size_t, double, const double*) {});
  return std::hypot(x[0] - std::cos(kOmega * T), x[1] + kOmega * std::sin(kOmega * T));
}

TEST(Rk4, ErrorFallsSixteenfoldWhenTheStepHalves) {
  // A fourth-order method has global error C·h⁴, so halving h divides it by 2⁴ = 16
  // (Hairer, Nørsett & Wanner, Solving ODEs I, Thm II.3.6). The band [14, 18]
  // allows for the O(h⁵) term at these steps (common practice).
  constexpr double kLowestRatio = 14.0, kHighestRatio = 18.0;
  const double e1 = rk4_error(0.02), e2 = rk4_error(0.01), e3 = rk4_error(0.005);
  const double r1 = e1 / e2, r2 = e2 / e3;
  std::cout << "RK4 error ratios: " << r1 << ", " << r2 << " (errors " << e1 << ", " << e2 << ", " << e3 << ")\n";
  EXPECT_GT(r1, kLowestRatio);
  EXPECT_LT(r1, kHighestRatio);
  EXPECT_GT(r2, kLowestRatio);
  EXPECT_LT(r2, kHighestRatio);
}

TEST(Dopri5, ReportsTheOscillatorAtRequestedTimesWithinTolerance) {
  casefile::SimulationOptions options;
  options.step_in_seconds = 0.5;
  options.rtol = 1e-10;
  options.atol = 1e-12;
  OdeIntegrator integrator(options, 2);
  std::vector<double> times;
  for (int k = 0; k <= 40; ++k) times.push_back(0.123 * k);
  double x[2] = {1.0, 0.0};
  double worst = 0.0;
  std::vector<double> seen;
  integrator.integrate(oscillator, times, x, [&](std::size_t k, double t, const double* y) {
    EXPECT_EQ(t, times[k]);
    seen.push_back(t);
    worst = std::max(worst, std::hypot(y[0] - std::cos(kOmega * t), y[1] + kOmega * std::sin(kOmega * t)));
  });
  EXPECT_EQ(seen.size(), times.size());
  // Global error of a tolerance-controlled run stays within ~100·rtol over a few
  // periods (common practice); the dense output is of order 4, also well below.
  constexpr double kAllowed = 1e-8;
  std::cout << "dopri5 oscillator worst error: " << worst << "\n";
  EXPECT_LT(worst, kAllowed);
  EXPECT_GT(integrator.steps_accepted(), 0);
}

TEST(Dopri5, NeverStepsLongerThanTheLargestStep) {
  casefile::SimulationOptions options;
  // 0.1 is not exact in binary, so t drifts from k·0.1 and a naive loop would end
  // with a sliver step of ~1e-15 s before tf.
  options.step_in_seconds = 0.1;
  options.rtol = 1e-3;
  options.atol = 1e-3;
  OdeIntegrator integrator(options, 1);
  double x[1] = {1.0};
  // ẋ = 0 would let the controller grow the step without bound.
  integrator.integrate([](double, const double*, double* d) { d[0] = 0.0; }, {0.0, 10.0}, x,
                       [](std::size_t, double, const double*) {});
  EXPECT_GE(integrator.steps_accepted(), 100);
  // The first steps ramp up from the initial guess by at most 5× per step (about
  // 8 steps from 1e-6 s), then every step is the largest one.
  EXPECT_LE(integrator.steps_accepted(), 110);
}

TEST(Dopri5, FiniteTimeBlowUpThrowsNumericalErrorNamingStateAndTime) {
  // ẋ = x², x(0) = 1 has x = 1/(1 − t), infinite at t = 1 (closed form).
  casefile::SimulationOptions options;
  OdeIntegrator integrator(options, 1);
  double x[1] = {1.0};
  const std::vector<std::string> names{"blowup"};
  try {
    integrator.integrate([](double, const double* y, double* d) { d[0] = y[0] * y[0]; }, {0.0, 2.0}, x,
                         [](std::size_t, double, const double*) {}, 17, &names);
    FAIL() << "expected NumericalError";
  } catch (const NumericalError& error) {
    const std::string message = error.what();
    EXPECT_NE(message.find("blowup"), std::string::npos) << message;
    EXPECT_NE(message.find("sample 17"), std::string::npos) << message;
    EXPECT_EQ(error.sample(), 17);
    EXPECT_NEAR(error.time_in_seconds(), 1.0, 1e-3);
  }
}

TEST(OdeIntegrator, RejectsNonPositiveStep) {
  casefile::SimulationOptions options;
  options.step_in_seconds = 0.0;
  EXPECT_THROW(OdeIntegrator(options, 1), InputError);
}

}  // namespace
}  // namespace sigmatube::model
