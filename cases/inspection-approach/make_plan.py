#!/usr/bin/env python3
# SPDX-License-Identifier: MIT
# Writes plan.csv for the invented inspection-approach demo: a free-flyer slides
# along-track from 200 m behind an invented station to a hold point 30 m behind
# its docking port, in Hill-Clohessy-Wiltshire coordinates (x radial, y
# along-track, z cross-track), then holds. The feedforward accelerations make the
# plan an exact HCW trajectory: a_x = -2 n dy/dt (cancels the Coriolis term with
# x = 0), a_y = d2y/dt2.
n = 0.00113            # mean motion [rad/s] (invented low orbit)
y0, yf = -200.0, -30.0 # along-track start and hold point [m]
t_move, t_end, dt = 1200.0, 1500.0, 10.0

rows = ["t,x,y,z,vx,vy,vz,ax,ay,az"]
t = 0.0
while t <= t_end + 1e-9:
    tau = min(t / t_move, 1.0)
    s = 3 * tau**2 - 2 * tau**3
    ds = (6 * tau - 6 * tau**2) / t_move if t < t_move else 0.0
    dds = (6 - 12 * tau) / t_move**2 if t < t_move else 0.0
    y = y0 + (yf - y0) * s
    vy = (yf - y0) * ds
    ay = (yf - y0) * dds
    ax = -2 * n * vy
    rows.append(f"{t:.1f},0,{y:.9g},0,0,{vy:.9g},0,{ax:.9g},{ay:.9g},0")
    t += dt
with open("plan.csv", "w") as f:
    f.write("\n".join(rows) + "\n")
