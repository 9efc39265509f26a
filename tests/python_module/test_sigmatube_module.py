# SPDX-License-Identifier: MIT
# The Python module against the command line: the same case with the same
# options must give the same numbers through `sigmatube run` (read back with
# h5py, an independent HDF5 reader, and from its JSON summary) and through
# sigmatube.run. The surrogate's evaluate() is checked against the expansion
# summed with NumPy's own Hermite and Legendre polynomials.
# Run: PYTHONPATH=build/python SIGMATUBE_CLI=build/sigmatube /usr/bin/python3 -m pytest tests/python_module
import json
import math
import os
import subprocess
import sys
from pathlib import Path

import h5py
import numpy as np
import pytest
from numpy.polynomial import hermite_e, legendre

import sigmatube

SOURCE = Path(__file__).resolve().parents[2]
CLI = os.environ["SIGMATUBE_CLI"]
CASE = str(SOURCE / "tests/cases/hcw_minimal.toml")
OPTIONS = dict(seed=11, mc_runs=120, samples=4000)


def run_cli(tmp, *extra):
    out, summary = tmp / "cli.h5", tmp / "cli.json"
    proc = subprocess.run([CLI, "run", CASE, "-o", str(out), "--json", str(summary), "--threads", "1",
                           "--seed", str(OPTIONS["seed"]), "--mc-runs", str(OPTIONS["mc_runs"]),
                           "--samples", str(OPTIONS["samples"]), *extra], capture_output=True, text=True)
    assert proc.returncode in (0, 1, 3), proc.stderr
    return out, json.loads(summary.read_text())


@pytest.fixture(scope="module")
def both(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("cli")
    path, summary = run_cli(tmp)
    result = sigmatube.run(CASE, threads=2, **OPTIONS)
    return path, summary, result


def test_arrays_equal_the_command_line_result_file(both):
    path, _, r = both
    with h5py.File(path, "r") as f:
        np.testing.assert_array_equal(r.time, f["time"][...])
        names = [n.decode() if isinstance(n, bytes) else n for n in f["outputs/names"][...]]
        assert r.output_names == names
        np.testing.assert_array_equal(r.nominal, f["nominal/outputs"][...])
    loaded = sigmatube.load(str(path))
    np.testing.assert_array_equal(r.surrogate.mean, loaded.surrogate.mean)
    np.testing.assert_array_equal(r.surrogate.std, loaded.surrogate.std)
    np.testing.assert_array_equal(r.surrogate.sobol_first, loaded.surrogate.sobol_first)
    np.testing.assert_array_equal(r.surrogate.sobol_total, loaded.surrogate.sobol_total)
    np.testing.assert_array_equal(r.montecarlo.mean, loaded.montecarlo.mean)
    np.testing.assert_array_equal(r.montecarlo.std, loaded.montecarlo.std)
    assert r.montecarlo.runs == loaded.montecarlo.runs == OPTIONS["mc_runs"]
    for name, c in r.constraints.items():
        other = loaded.constraints[name]
        np.testing.assert_array_equal(c.pointwise_probability, other.pointwise_probability)
        assert c.verdict == other.verdict


def same(a, b):
    return (b is None and math.isnan(a)) or a == b


def test_constraints_equal_the_command_line_summary(both):
    _, summary, r = both
    assert list(r.constraints) == [c["name"] for c in summary["constraints"]]
    for ref in summary["constraints"]:
        c = r.constraints[ref["name"]]
        assert same(c.path_probability, ref["surrogate"]["path_probability"])
        assert same(c.margin, ref["margin"])
        assert c.verdict == ref["verdict"]
        assert c.montecarlo.path_violations == ref["montecarlo"]["path_violations"]
        assert same(c.montecarlo.path_probability, ref["montecarlo"]["path_probability"])


def test_arrays_are_read_only_views_of_the_result(both):
    _, _, r = both
    first = next(iter(r.constraints.values()))
    for a in (r.time, r.nominal, r.surrogate.mean, r.montecarlo.std, first.pointwise_probability):
        assert not a.flags.owndata and not a.flags.writeable
    T, n = len(r.time), len(r.output_names)
    assert r.nominal.shape == (T, n) and r.surrogate.std.shape == (T, n)
    d = len(r.surrogate.germ_names)
    assert r.surrogate.sobol_first.shape == (T, n, d)
    assert r.surrogate.multi_indices.shape[1] == d


def orthonormal(family, degree, x):
    # ψ_n: probabilists' Hermite He_n/√(n!) for N(0,1); √(2n+1)·P_n for U(−1,1).
    c = np.zeros(degree + 1)
    c[degree] = 1.0
    if family == "hermite":
        return hermite_e.hermeval(x, c) / math.sqrt(math.factorial(degree))
    if family == "legendre":
        return legendre.legval(x, c) * math.sqrt(2 * degree + 1)
    raise AssertionError("family not covered here: " + family)


def test_evaluate_sums_the_expansion_with_numpy_polynomials(both):
    _, _, r = both
    s = r.surrogate
    d = len(s.germ_families)
    rng = np.random.default_rng(3)  # seeded
    xi = rng.uniform(-0.9, 0.9, size=(7, d))
    values = s.evaluate(xi)
    T, n = len(r.time), len(r.output_names)
    assert values.shape == (7, T, n)
    C = s.coefficients  # [T, n_out, P]
    A = s.multi_indices  # [P, d]
    psi = np.ones((7, A.shape[0]))
    for k, family in enumerate(s.germ_families):
        for p in range(A.shape[0]):
            psi[:, p] *= orthonormal(family, int(A[p, k]), xi[:, k])
    expected = np.einsum("np,top->nto", psi, C)
    # Same sums in another order: agreement to rounding of the largest terms.
    np.testing.assert_allclose(values, expected, rtol=1e-9, atol=1e-9 * np.abs(expected).max())
    # The mean is the value of the constant term, E[Y] = C_0 (orthonormal basis).
    np.testing.assert_allclose(s.mean, C[:, :, 0], rtol=0, atol=0)
    one = s.evaluate(xi[0])
    # One point and seven points go through differently blocked matrix products.
    np.testing.assert_allclose(one, values[0], rtol=1e-12, atol=1e-12 * np.abs(values).max())
    with pytest.raises(sigmatube.InputError, match="germ dimensions"):
        s.evaluate(np.zeros((2, d + 1)))


def test_thread_count_does_not_change_the_numbers(both):
    _, _, r2 = both
    r1 = sigmatube.run(CASE, threads=1, **OPTIONS)
    np.testing.assert_array_equal(r1.surrogate.mean, r2.surrogate.mean)
    np.testing.assert_array_equal(r1.montecarlo.mean, r2.montecarlo.mean)


def test_save_and_load_round_trip_and_never_replace_without_force(both, tmp_path):
    _, _, r = both
    out = tmp_path / "saved.h5"
    r.save(str(out))
    back = sigmatube.load(str(out))
    np.testing.assert_array_equal(back.nominal, r.nominal)
    np.testing.assert_array_equal(back.surrogate.evaluate(np.zeros(len(r.surrogate.germ_names))),
                                  r.surrogate.evaluate(np.zeros(len(r.surrogate.germ_names))))
    with pytest.raises(sigmatube.InputError):
        r.save(str(out))
    r.save(str(out), force=True)


def cli_error(arguments):
    proc = subprocess.run([CLI, *arguments], capture_output=True, text=True)
    assert proc.returncode == 2, proc.stderr
    line = proc.stderr.strip()
    assert line.startswith("sigmatube: error: "), line
    return line[len("sigmatube: error: "):]


@pytest.mark.parametrize("bad", ["unknown_key_suggestion.toml", "covariance_not_symmetric.toml", "missing_plan_file.toml"])
def test_bad_input_raises_the_command_line_message(bad, tmp_path):
    path = str(SOURCE / "tests/bad_cases" / bad)
    expected = cli_error(["run", path, "-o", str(tmp_path / "x.h5")])
    with pytest.raises(sigmatube.InputError) as caught:
        sigmatube.run(path)
    assert str(caught.value) == expected
    assert isinstance(caught.value, ValueError)


def test_missing_result_file_raises_input_error(tmp_path):
    with pytest.raises(sigmatube.InputError):
        sigmatube.load(str(tmp_path / "none.h5"))


def test_bad_options_raise(tmp_path):
    with pytest.raises(sigmatube.InputError, match="threads"):
        sigmatube.run(CASE, threads=-1)
    with pytest.raises(sigmatube.InputError, match="samples"):
        sigmatube.run(CASE, samples=0)
