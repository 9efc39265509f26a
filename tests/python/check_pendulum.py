# SPDX-License-Identifier: MIT
# Reads a `sigmatube simulate` result file with h5py (an independent reader, which
# also checks the layout of product.md §5) and compares the nominal trajectory of
# the damped pendulum in tests/cases/reference/pendulum.toml with SciPy's
# solve_ivp (RK45, rtol 1e-11, atol 1e-12). Prints the worst absolute error.
import sys

import h5py
import numpy as np
from scipy.integrate import solve_ivp

path = sys.argv[1]
g, L, c = 9.81, 0.7, 0.15
with h5py.File(path, "r") as f:
    for attr in ("tool_version", "case_sha256", "created_utc", "seed"):
        assert attr in f.attrs, f"missing root attribute {attr}"
    assert len(f.attrs["case_sha256"]) == 64
    t = f["time"][...]
    names = [n.decode() if isinstance(n, bytes) else n for n in f["outputs/names"][...]]
    y = f["nominal/outputs"][...]
assert names[:2] == ["theta", "omega"], names
assert "bob_x" in names and "bob_y" in names and "cmd.torque" in names, names
assert y.shape == (len(t), len(names)), y.shape

sol = solve_ivp(lambda _, s: [s[1], -(g / L) * np.sin(s[0]) - c * s[1]], (t[0], t[-1]), [1.2, 0.0],
                method="RK45", rtol=1e-11, atol=1e-12, t_eval=t)
ref = sol.y.T
err_states = np.max(np.abs(y[:, :2] - ref))
bob_x = L * np.sin(ref[:, 0])
bob_y = -L * np.cos(ref[:, 0])
err_outputs = max(np.max(np.abs(y[:, names.index("bob_x")] - bob_x)), np.max(np.abs(y[:, names.index("bob_y")] - bob_y)))
print(f"{max(err_states, err_outputs):.3e}")
