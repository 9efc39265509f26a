#!/usr/bin/env python3
# SPDX-License-Identifier: MIT
# Writes plan.csv for the invented gantry-crane demo: an overhead trolley carries
# a load hanging on a 5 m cable 12 m along its rail, over a stack of crates, and
# stops. The trolley acceleration a(t) is the derivative of a smooth-step speed
# profile; the swing angle th and rate w of the plan are the pendulum's own
# response to that a(t) at the nominal cable length, integrated here with
# classical RK4 at a fine step, so the plan is an exact trajectory of the model
#   s' = sv, sv' = a, th' = w, w' = -(g/L) sin th - (a/L) cos th - c w.
# Every number is invented.
import math

L, g, c = 5.0, 9.81, 0.05      # nominal cable [m], gravity [m/s^2], damping [1/s]
distance, t_move, t_end = 12.0, 16.0, 22.0
dt_out, substeps = 0.25, 50


def accel(t):
    # s(t) = distance * (10 tau^3 - 15 tau^4 + 6 tau^5): smooth start and stop
    # with zero acceleration at both ends (no jerk step).
    if t <= 0.0 or t >= t_move:
        return 0.0
    tau = t / t_move
    return distance * (60 * tau - 180 * tau**2 + 120 * tau**3) / t_move**2


def rhs(t, x):
    s, sv, th, w = x
    a = accel(t)
    return [sv, a, w, -(g / L) * math.sin(th) - (a / L) * math.cos(th) - c * w]


x = [0.0, 0.0, 0.0, 0.0]
rows = ["t,s,sv,th,w,a"]
t = 0.0
n_out = int(round(t_end / dt_out))
for k in range(n_out + 1):
    t = k * dt_out
    rows.append(f"{t:.2f},{x[0]:.12g},{x[1]:.12g},{x[2]:.12g},{x[3]:.12g},{accel(t):.12g}")
    h = dt_out / substeps
    for j in range(substeps):
        tj = t + j * h
        k1 = rhs(tj, x)
        k2 = rhs(tj + h / 2, [xi + h / 2 * ki for xi, ki in zip(x, k1)])
        k3 = rhs(tj + h / 2, [xi + h / 2 * ki for xi, ki in zip(x, k2)])
        k4 = rhs(tj + h, [xi + h * ki for xi, ki in zip(x, k3)])
        x = [xi + h / 6 * (a1 + 2 * a2 + 2 * a3 + a4) for xi, a1, a2, a3, a4 in zip(x, k1, k2, k3, k4)]
with open("plan.csv", "w") as f:
    f.write("\n".join(rows) + "\n")
