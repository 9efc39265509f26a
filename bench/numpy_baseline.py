#!/usr/bin/python3
# SPDX-License-Identifier: MIT
"""Vectorized NumPy baseline for benchmark (b): Monte Carlo of the closed-loop
Hill-Clohessy-Wiltshire tracking case (bench/cases/hcw-tracking), the same model,
plan interpolation, constant LQR gain and fixed-step RK4 integrator as the C++
closed loop, propagated for all runs at once (one array column per run).

  u_cmd = u_ff(t) - K (x - x_ref(t)),  u_app = scale * u_cmd
  x'' = 3 n^2 x + 2 n y' + ax,  y'' = -2 n x' + ay,  z'' = -n^2 z + az
  RK4 (Runge-Kutta classical), each report interval cut into the fewest equal
  steps no longer than `step`.

The gain K comes from the C++ side (sigmatube_bench passes it), so both sides
fly exactly the same controller. Throughput is runs per CPU-second of this
process (NumPy elementwise kernels are single-threaded).

Prints one line per quantity: `key value`.
"""
import argparse
import math
import time

import numpy as np


def load_plan(path):
    with open(path) as f:
        header = f.readline().strip().split(",")
    data = np.loadtxt(path, delimiter=",", skiprows=1, ndmin=2)
    col = {name: data[:, i] for i, name in enumerate(header)}
    t = col["t"]
    xref = np.stack([col.get(s, np.zeros_like(t)) for s in ("x", "y", "z", "vx", "vy", "vz")])
    uff = np.stack([col.get(s, np.zeros_like(t)) for s in ("ax", "ay", "az")])
    return t, xref, uff


def interpolate(t_grid, table, t):
    """Linear interpolation of each row of `table` at scalar t (held outside the grid)."""
    if t <= t_grid[0]:
        return table[:, 0]
    if t >= t_grid[-1]:
        return table[:, -1]
    k = int(np.searchsorted(t_grid, t, side="right")) - 1
    w = (t - t_grid[k]) / (t_grid[k + 1] - t_grid[k])
    return (1.0 - w) * table[:, k] + w * table[:, k + 1]


def simulate(x0, scale, K, n, t_grid, xref_table, uff_table, report_times, step):
    """Propagates all runs (columns of x0, [6, N]); returns outputs [T, 6, N]."""
    n2 = n * n
    x = x0.copy()
    out = np.empty((len(report_times), 6, x.shape[1]))
    out[0] = x

    def rhs(t, s):
        xr = interpolate(t_grid, xref_table, t)
        uf = interpolate(t_grid, uff_table, t)
        u = uf[:, None] - K @ (s - xr[:, None])
        u *= scale
        d = np.empty_like(s)
        d[0:3] = s[3:6]
        d[3] = 3.0 * n2 * s[0] + 2.0 * n * s[4] + u[0]
        d[4] = -2.0 * n * s[3] + u[1]
        d[5] = -n2 * s[2] + u[2]
        return d

    for k in range(1, len(report_times)):
        span = report_times[k] - report_times[k - 1]
        pieces = max(1, math.ceil(span / step - 1e-9))
        h = span / pieces
        for i in range(pieces):
            t = report_times[k - 1] + i * h
            k1 = rhs(t, x)
            k2 = rhs(t + 0.5 * h, x + 0.5 * h * k1)
            k3 = rhs(t + 0.5 * h, x + 0.5 * h * k2)
            k4 = rhs(t + h, x + h * k3)
            x = x + (h / 6.0) * (k1 + 2.0 * k2 + 2.0 * k3 + k4)
        out[k] = x
    return out


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--plan", required=True)
    ap.add_argument("--gain", required=True, help="3x6 gain, row-major, comma separated")
    ap.add_argument("--mean-motion", type=float, required=True)
    ap.add_argument("--runs", type=int, default=4000)
    ap.add_argument("--step", type=float, default=1.0)
    ap.add_argument("--report-every", type=float, default=20.0)
    ap.add_argument("--seed", type=int, default=1)
    a = ap.parse_args()

    K = np.array([float(v) for v in a.gain.split(",")]).reshape(3, 6)
    t_grid, xref_table, uff_table = load_plan(a.plan)
    t0, tf = t_grid[0], t_grid[-1]
    report_times = list(np.arange(t0, tf - 1e-9 * (tf - t0), a.report_every)) + [tf]

    # Same input distributions as the case file (values do not change the cost).
    rng = np.random.default_rng(a.seed)
    N = a.runs
    x0 = np.repeat(xref_table[:, :1], N, axis=1)
    x0[0:3] += rng.normal(size=(3, N)) * np.array([[1.0], [1.0], [0.5]])
    x0[3] += 0.01 * rng.normal(size=N)
    scale = np.ones((3, N))
    scale[0] = rng.uniform(0.95, 1.05, size=N)

    # Nominal run: checks that this is the same closed loop as the C++ one.
    nominal = simulate(xref_table[:, :1].copy(), np.ones((3, 1)), K, a.mean_motion, t_grid, xref_table,
                       uff_table, report_times, a.step)

    c0 = time.process_time()
    w0 = time.perf_counter()
    out = simulate(x0, scale, K, a.mean_motion, t_grid, xref_table, uff_table, report_times, a.step)
    cpu = time.process_time() - c0
    wall = time.perf_counter() - w0
    print("runs", N)
    print("cpu_seconds", repr(cpu))
    print("wall_seconds", repr(wall))
    print("runs_per_cpu_second", repr(N / cpu))
    print("final_mean_x", repr(float(out[-1, 0].mean())))
    print("nominal_final", ",".join(repr(float(v)) for v in nominal[-1, :, 0]))


if __name__ == "__main__":
    main()
