#!/usr/bin/env python3
# SPDX-License-Identifier: MIT
# Writes plan.csv for the invented warehouse-tug demo: an autonomous tug drives
# 40 m down the centre line of a narrow aisle between rack uprights and stops
# short of the aisle end. Unicycle model (x along the aisle, y across it,
# heading [rad]); the plan is an exact unicycle trajectory: heading 0, y = 0,
# x(t) a smooth-step from 0 to 40 m, so the feedforward speed is dx/dt divided
# by (1 - slip) at the nominal slip, and the feedforward turn rate is 0.
# Every number is invented.
x_end = 40.0      # stop point along the aisle [m]
t_move = 32.0     # time to get there [s]
t_end = 36.0      # the plan holds the stop for the last seconds
dt = 0.5          # plan row spacing [s]
slip_nominal = 0.02  # the case's nominal model parameter slip

rows = ["t,x,y,heading,speed,turn_rate"]
k = 0
while True:
    t = k * dt
    if t > t_end + 1e-9:
        break
    tau = min(t / t_move, 1.0)
    s = 3 * tau**2 - 2 * tau**3
    ds = (6 * tau - 6 * tau**2) / t_move if t < t_move else 0.0
    x = x_end * s
    v = x_end * ds
    rows.append(f"{t:.2f},{x:.9g},0,0,{v / (1 - slip_nominal):.9g},0")
    k += 1
with open("plan.csv", "w") as f:
    f.write("\n".join(rows) + "\n")
