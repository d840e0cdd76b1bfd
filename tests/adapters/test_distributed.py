"""Couplings as a dask array in row blocks: checks, products and the IAMP solve where the blocks live.

References: products and energies against numpy on the same matrix; the solve against the
in-memory path of this project on the same instance and seed (the IAMP iteration is
deterministic given the seed; float rounding in the products is the only difference, and it is
amplified by the last IAMP steps, where ∂_xxΦ grows like (1 − t)^{-1/2}: measured, a relative
change of 1e-15 in the coupling scale moves the magnetisation by up to 0.04, no sign changing).
"""

from __future__ import annotations

import math
import subprocess
import sys
import warnings

import numpy as np
import pytest

import spinward

da = pytest.importorskip("dask.array")


def sk(n: int, seed: int) -> np.ndarray:
    J = np.triu(np.random.default_rng(seed).standard_normal((n, n)), 1)
    return (J + J.T) / math.sqrt(n)


def solve(form, **options):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return spinward.solve(form, method="iamp", seed=3, bound=False, precision="float64", **options)


def test_import_spinward_does_not_import_dask():
    code = "import sys, spinward; spinward.Ising([[0, 1], [1, 0]]).canonical(); print('dask' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_products_energy_and_checks_without_a_cluster():
    J = sk(300, 0)
    rng = np.random.default_rng(1)
    form = spinward.Ising(da.from_array(J, chunks=(70, 300)), rng.standard_normal(300))
    problem = form.canonical()
    assert problem.kind == "operator" and problem.K.bounds[1] == (70, 140)
    x = rng.standard_normal(300)
    np.testing.assert_allclose(problem.matvec(x), J @ x, rtol=1e-12, atol=1e-12)
    s = np.sign(x)
    assert form.evaluate(s) == pytest.approx(spinward.Ising(J, form.h).evaluate(s), rel=1e-12)
    off = J[~np.eye(300, dtype=bool)]
    s1, s2, *_ = problem.K.power_sums()
    assert s1 == pytest.approx(off.sum(), abs=1e-9) and s2 == pytest.approx((off**2).sum(), rel=1e-12)


def test_triangular_diagonal_and_bad_inputs():
    J = sk(120, 2)
    upper = np.triu(J, 1) + np.diag(np.full(120, 0.5))
    with pytest.warns(spinward.InputWarning, match="diagonal|upper-triangular"):
        problem = spinward.Ising(da.from_array(upper, chunks=(50, 120))).canonical()
    x = np.random.default_rng(3).standard_normal(120)
    np.testing.assert_allclose(problem.matvec(x), J @ x, rtol=1e-12, atol=1e-12)
    asym = J.copy()
    asym[100, 3] += 0.25
    with pytest.raises(spinward.InputError, match="neither symmetric nor upper-triangular"):
        spinward.Ising(da.from_array(asym, chunks=(50, 120)))
    bad = J.copy()
    bad[77, 5] = np.inf
    with pytest.raises(spinward.InputError, match=r"J\[77, 5\] is not finite"):
        spinward.Ising(da.from_array(bad, chunks=(50, 120)))
    with pytest.warns(spinward.InputWarning, match="rechunked"):
        spinward.Ising(da.from_array(J, chunks=(60, 60)))


def test_local_blocks_give_the_in_memory_iamp_state():
    J = sk(1000, 4)
    memory = solve(spinward.Ising(J), polish_sweeps=1000)
    blocks = solve(spinward.Ising(da.from_array(J, chunks=(250, 1000))), polish_sweeps=1000)
    for key in ("energy_per_spin_rounded", "energy_per_spin_cleaned"):
        assert blocks.info[key] == pytest.approx(memory.info[key], abs=1e-9)
    assert blocks.info["stages"]["polish"]["precision"].startswith("row blocks")
    # one sweep per visit: the in-memory walk, proposal for proposal (float64 products either way)
    assert blocks.objective == pytest.approx(memory.objective, rel=1e-9)


def test_local_cluster_n4000_same_iamp_state_and_close_objective():
    from distributed import Client, LocalCluster

    n = 4000
    J = sk(n, 5)
    light = {"polish_sweeps": 60, "delta": 0.01}  # 100 IAMP steps: each product is a round trip to the workers
    memory = solve(spinward.Ising(J), **light)
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster, \
            Client(cluster), warnings.catch_warnings():
        warnings.simplefilter("ignore")  # dask's note that J travels to the workers inside the graph, once
        cluster_run = solve(spinward.Ising(da.from_array(J, chunks=(n // 2, n))), **light)
    # IAMP state: its energy per spin agrees to rounding (see the module docstring)
    assert cluster_run.info["energy_per_spin_rounded"] == pytest.approx(memory.info["energy_per_spin_rounded"],
                                                                        abs=1e-4)
    assert abs(cluster_run.objective - memory.objective) / n < 0.002


@pytest.mark.parametrize("scale, sign", [(1.0, "hardware"), (2.0**70, "physics")])
def test_rescaled_or_negated_blocks_solve_like_memory(scale, sign):
    # K = (M − diag M)/scale where the blocks hold M: the clean-up and polish visits must apply it
    J = sk(400, 6) * scale
    memory = solve(spinward.Ising(J, energy_sign=sign), polish_sweeps=300)
    blocks = solve(spinward.Ising(da.from_array(J, chunks=(100, 400)), energy_sign=sign), polish_sweeps=300)
    assert blocks.objective == pytest.approx(memory.objective, rel=1e-9)
    assert blocks.info["energy_per_spin"] == pytest.approx(memory.info["energy_per_spin"], abs=1e-9)
