#!/usr/bin/env python3
# SPDX-License-Identifier: MIT
# Writes plan.csv for the invented turbine-survey demo: a survey multirotor flies
# a quarter circle of radius 15 m around a wind-turbine tower (axis at x = y = 0)
# at 60 m height, on the upwind side, in a steady 6 m/s wind along +x, so that the
# wind pushes it towards the tower. It hovers, flies the arc, hovers again.
# Built-in multirotor-point-mass model (z up). The feedforward thrust makes the
# plan an exact trajectory of the model at the nominal parameters:
#   f = m a_ref + c |v - w| (v - w) + m g e_z,   c = drag_area,
# i.e. it holds the hover (m g) and cancels the drag of the relative wind.
# Every number is invented.
import math

mass, drag_area, gravity = 1.5, 0.05, 9.80665   # nominal [kg], [kg/m], [m/s^2]
wind = (6.0, 0.0, 0.0)                           # nominal steady wind [m/s]
radius, height = 15.0, 60.0                      # arc radius [m], height [m]
phi0, phi1 = math.radians(135.0), math.radians(225.0)   # upwind quarter circle
t_hold, t_arc, dt = 4.0, 22.0, 0.25
t_end = t_hold + t_arc + t_hold

rows = ["t,x,y,z,vx,vy,vz,fx,fy,fz"]
k = 0
while True:
    t = k * dt
    if t > t_end + 1e-9:
        break
    tau = min(max((t - t_hold) / t_arc, 0.0), 1.0)
    moving = 0.0 < (t - t_hold) < t_arc
    s = 3 * tau**2 - 2 * tau**3
    ds = (6 * tau - 6 * tau**2) / t_arc if moving else 0.0
    dds = (6 - 12 * tau) / t_arc**2 if moving else 0.0
    phi = phi0 + (phi1 - phi0) * s
    w = (phi1 - phi0) * ds        # angular rate
    dw = (phi1 - phi0) * dds      # angular acceleration
    x, y = radius * math.cos(phi), radius * math.sin(phi)
    vx, vy = -radius * w * math.sin(phi), radius * w * math.cos(phi)
    ax = -radius * (dw * math.sin(phi) + w * w * math.cos(phi))
    ay = radius * (dw * math.cos(phi) - w * w * math.sin(phi))
    r = (vx - wind[0], vy - wind[1], 0.0 - wind[2])
    speed = math.sqrt(sum(c * c for c in r))
    fx = mass * ax + drag_area * speed * r[0]
    fy = mass * ay + drag_area * speed * r[1]
    fz = mass * gravity + drag_area * speed * r[2]
    rows.append(f"{t:.2f},{x:.9g},{y:.9g},{height:.9g},{vx:.9g},{vy:.9g},0,{fx:.9g},{fy:.9g},{fz:.9g}")
    k += 1
with open("plan.csv", "w") as f:
    f.write("\n".join(rows) + "\n")
