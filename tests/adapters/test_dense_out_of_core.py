"""Dense and memory-mapped couplings through the Ising and QUBO adapters: no full copies, same numbers.

References: the canonical parts are checked against the plain numpy formulas written here
(S = (Q + Qᵀ)/2, ...), energies against the caller's own sums; "no copy" is checked with
numpy's ``shares_memory`` and tracemalloc's peak (numpy allocations are traced).
"""

from __future__ import annotations

import math
import tracemalloc

import numpy as np
import pytest

import spinward
from spinward.adapters import validate


@pytest.fixture
def small_tiles(monkeypatch):
    """Tiles of 7 entries, so that a 30×30 matrix has partial tiles on both edges."""
    monkeypatch.setattr(validate, "TILE", 7)


def symmetric(n: int, seed: int, dtype=np.float32) -> np.ndarray:
    rng = np.random.default_rng(seed)
    J = np.triu(rng.standard_normal((n, n)), 1)
    return (J + J.T).astype(dtype)


def saved(tmp_path, J: np.ndarray):
    path = tmp_path / "J.npy"
    np.save(path, J)
    return np.load(path, mmap_mode="r")


def test_symmetric_memmap_is_used_in_place(tmp_path, small_tiles):
    J = saved(tmp_path, symmetric(30, 0))
    problem = spinward.Ising(J).canonical()
    assert isinstance(problem.K, np.memmap) and np.shares_memory(problem.K, J)
    s = np.where(np.arange(30) % 3 == 0, 1.0, -1.0)
    plain = -sum(float(J[i, j]) * s[i] * s[j] for i in range(30) for j in range(i + 1, 30))  # E(s), written out
    assert spinward.Ising(J).evaluate(s) == pytest.approx(plain, rel=1e-12)
    assert -problem.value(s) == pytest.approx(plain, rel=1e-6)


def test_memmap_checks_read_tiles_not_copies(tmp_path, monkeypatch):
    monkeypatch.setattr(validate, "TILE", 256)
    n = 2000
    J = saved(tmp_path, symmetric(n, 1))
    tracemalloc.start()
    try:
        form = spinward.Ising(J)
        form.canonical()
        form.evaluate(np.ones(n))
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert peak < 0.5 * n * n * 4, f"traced peak {peak / 2**20:.1f} MiB for a {n * n * 4 / 2**20:.1f} MiB J"


def test_upper_triangular_and_nearly_symmetric_memmaps(tmp_path, small_tiles):
    full = symmetric(30, 2, np.float64)
    upper = saved(tmp_path, np.triu(full, 1))
    p_upper = spinward.Ising(upper).canonical()
    np.testing.assert_array_equal(np.asarray(p_upper.K), full)
    nudged = full.copy()
    nudged[3, 17] *= 1 + 1e-14
    p_near = spinward.Ising(nudged).canonical()
    np.testing.assert_allclose(p_near.K, (nudged + nudged.T) / 2, rtol=0, atol=0)


def test_asymmetry_is_found_in_any_tile(small_tiles):
    J = symmetric(30, 3, np.float64)
    J[25, 4] += 0.5  # below the diagonal, in an off-diagonal tile
    with pytest.raises(spinward.InputError, match=r"max \|J_ij − J_ji\| = 0\.5"):
        spinward.Ising(J)
    with pytest.warns(spinward.InputWarning):
        form = spinward.Ising(J, symmetrize=True)
    np.testing.assert_allclose(form.canonical().K, (J + J.T) / 2)


def test_non_finite_entry_is_named_from_a_row_block(monkeypatch):
    monkeypatch.setattr(validate, "TILE", 4)  # row blocks of 16 entries: 1 row of 20
    J = symmetric(20, 4, np.float64)
    J[13, 7] = np.nan
    with pytest.raises(spinward.InputError, match=r"J\[13, 7\] is nan"):
        spinward.Ising(J)


def test_diagonal_of_a_memmap_is_dropped_in_a_copy(tmp_path):
    J = symmetric(12, 5)
    J[np.arange(12), np.arange(12)] = 1.0
    mm = saved(tmp_path, J)
    with pytest.warns(spinward.InputWarning, match="diagonal"):
        problem = spinward.Ising(mm).canonical()
    assert not np.shares_memory(problem.K, mm) and np.all(np.diag(problem.K) == 0)
    assert problem.K.dtype == np.float32  # the copy keeps the input's precision


def test_qubo_tiles_match_the_plain_formulas(small_tiles):
    rng = np.random.default_rng(6)
    Q = rng.standard_normal((30, 30))
    problem = spinward.QUBO(Q).canonical()
    S = (Q + Q.T) / 2
    d = np.diag(S).copy()
    off = S - np.diag(d)
    row = off.sum(axis=1)
    np.testing.assert_allclose(problem.K, -off / 2, rtol=1e-15, atol=1e-15)
    np.testing.assert_allclose(problem.b, -(d / 2 + row / 2), rtol=1e-12)
    assert problem.k0 == pytest.approx(-(d.sum() / 2 + row.sum() / 4), rel=1e-12)
    x = (rng.random(30) < 0.5).astype(float)
    assert spinward.QUBO(Q).evaluate(x) == pytest.approx(float(x @ Q @ x), rel=1e-12)


def test_float32_qubo_evaluates_without_a_float64_copy(tmp_path):
    n = 2000
    Q = saved(tmp_path, np.random.default_rng(7).standard_normal((n, n)).astype(np.float32))
    form = spinward.QUBO(Q)
    x = (np.arange(n) % 2).astype(float)
    tracemalloc.start()
    try:
        value = form.evaluate(x)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert peak < n * n * 8 / 4
    assert value == pytest.approx(float(x @ np.asarray(Q, dtype=np.float64) @ x), rel=1e-12)


def test_resource_error_gives_the_out_of_core_numbers(monkeypatch):
    monkeypatch.setenv("SPINWARD_MEMORY_LIMIT", str(1 << 20))
    n = 1000
    with pytest.raises(spinward.ResourceError) as err:
        spinward.solve(spinward.QUBO(np.zeros((n, n))))
    text = str(err.value)
    need = validate.dense_solve_estimate(n)
    assert f"{need / 2**30:.1f} GiB" in text and f"{4 * n * n / 2**30:.1f} GiB on disk" in text
    assert "mmap_mode='r'" in text and "method='iamp'" in text and "bound=False" in text
    assert f"{validate.out_of_core_estimate(n) / 2**30:.2f} GiB of memory" in text


def test_dense_solve_estimate_grows_with_n_squared():
    a, b = validate.dense_solve_estimate(4000), validate.dense_solve_estimate(8000)
    fixed = validate.DENSE_SOLVE_FIXED_BYTES
    assert math.isclose((b - fixed) / (a - fixed), 4.0)
