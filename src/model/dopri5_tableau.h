// SPDX-License-Identifier: MIT
#pragma once
// Coefficients of dopri5, shared by the one-run integrator (integrator.cpp) and
// the lane integrator (lane_dopri5.cpp), which must perform the same operations.
namespace sigmatube::model::dopri5 {

// Dormand & Prince (1980) RK5(4)7M tableau, as in Hairer, Nørsett & Wanner, Table II.5.2.
constexpr double c2 = 1.0 / 5, c3 = 3.0 / 10, c4 = 4.0 / 5, c5 = 8.0 / 9;
constexpr double a21 = 1.0 / 5;
constexpr double a31 = 3.0 / 40, a32 = 9.0 / 40;
constexpr double a41 = 44.0 / 45, a42 = -56.0 / 15, a43 = 32.0 / 9;
constexpr double a51 = 19372.0 / 6561, a52 = -25360.0 / 2187, a53 = 64448.0 / 6561, a54 = -212.0 / 729;
constexpr double a61 = 9017.0 / 3168, a62 = -355.0 / 33, a63 = 46732.0 / 5247, a64 = 49.0 / 176,
                 a65 = -5103.0 / 18656;
constexpr double a71 = 35.0 / 384, a73 = 500.0 / 1113, a74 = 125.0 / 192, a75 = -2187.0 / 6784, a76 = 11.0 / 84;
// Difference between the fifth- and fourth-order weights.
constexpr double e1 = 71.0 / 57600, e3 = -71.0 / 16695, e4 = 71.0 / 1920, e5 = -17253.0 / 339200, e6 = 22.0 / 525,
                 e7 = -1.0 / 40;
// Dense output coefficients of DOPRI5 (Hairer, Nørsett & Wanner, §II.6; code DOPRI5, CONTD5).
constexpr double d1 = -12715105075.0 / 11282082432.0, d3 = 87487479700.0 / 32700410799.0,
                 d4 = -10690763975.0 / 1880347072.0, d5 = 701980252875.0 / 199316789632.0,
                 d6 = -1453857185.0 / 822651844.0, d7 = 69997945.0 / 29380423.0;

// Step-size controller (Hairer, Nørsett & Wanner, §II.4 and the code DOPRI5):
// safety factor, Lund stabilization β, bounds of the step ratio.
constexpr double kSafety = 0.9, kBeta = 0.04, kFacMin = 0.2, kFacMax = 10.0;
constexpr double kExpo1 = 0.2 - kBeta * 0.75;
// The smallest step, as a share of the integration span.
constexpr double kMinimumStepShare = 1e-12;

}  // namespace sigmatube::model::dopri5
