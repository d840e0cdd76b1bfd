"""QUBO and Ising adapters: the caller's terms in, the caller's terms out."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp

import spinward
from tests.references import brute_ising_min, brute_qubo_min


def test_qubo_numpy_array_in_caller_terms():
    Q = np.array([[2.0, -4.0, 0.0], [0.0, 1.0, 3.0], [1.0, 0.0, -2.0]])
    r = spinward.solve(Q)  # a bare array is read as a QUBO
    assert r.form == "qubo" and r.sense == "min"
    assert set(r.assignment.values()) <= {0, 1}
    x = r.values.astype(float)
    assert r.objective == pytest.approx(x @ Q @ x)
    assert r.objective == pytest.approx(brute_qubo_min(Q))  # reference: brute force


def test_qubo_dict_with_names_and_offset():
    Q = {("pump", "pump"): -1.0, ("pump", "valve"): 2.0, ("valve", "pump"): 0.5, ("valve", "valve"): -1.0}
    r = spinward.solve(spinward.QUBO(Q, offset=10.0))
    # by hand: x=(1,0) or (0,1) → −1 + 10 = 9; (1,1) → −2 + 2.5 + 10 = 10.5
    assert r.objective == pytest.approx(9.0)
    assert sorted(r.assignment.values()) == [0, 1]


def test_qubo_sparse_and_dense_agree(rng):
    Q = sp.random_array((30, 30), density=0.1, random_state=3, format="csr")
    dense = spinward.canonical(spinward.QUBO(Q.toarray()))
    sparse = spinward.canonical(spinward.QUBO(Q))
    s = np.where(rng.random(30) < 0.5, 1, -1)
    assert dense.value(s) == pytest.approx(sparse.value(s))


def test_ising_dicts_in_caller_terms():
    J = {("a", "b"): 1.0, ("b", "c"): -2.0, ("c", "b"): 0.5}
    h = {"a": 0.5, "d": -1.0}
    r = spinward.solve(spinward.Ising(J, h, offset=1.0))
    s = r.assignment
    assert set(s) == {"a", "b", "c", "d"} and set(s.values()) <= {-1, 1}
    energy = -(1.0 * s["a"] * s["b"] - 1.5 * s["b"] * s["c"]) - (0.5 * s["a"] - s["d"]) + 1.0
    assert r.objective == pytest.approx(energy)
    assert r.objective == pytest.approx(-1.0 - 1.5 - 0.5 - 1.0 + 1.0)  # every term satisfied (by hand)


def test_ising_symmetric_and_upper_triangular_agree(rng):
    n = 9
    U = np.triu(rng.normal(size=(n, n)), 1)
    h = rng.normal(size=n)
    a = spinward.solve(spinward.Ising(U, h), method="enumerate")
    b = spinward.solve(spinward.Ising(U + U.T, h), method="enumerate")
    assert a.objective == pytest.approx(b.objective)
    assert a.objective == pytest.approx(brute_ising_min(U, h))  # reference: brute force


def test_asymmetric_J_refused_unless_symmetrized(rng):
    J = rng.normal(size=(4, 4))
    with pytest.raises(spinward.InputError, match="symmetrize=True"):
        spinward.Ising(J)
    with pytest.warns(spinward.InputWarning, match="asymmetric"):
        form = spinward.Ising(J, symmetrize=True)
    S = (J + J.T) / 2
    r = spinward.solve(form)
    assert r.objective == pytest.approx(brute_ising_min(np.triu(S, 1), np.zeros(4)))


@pytest.mark.parametrize("bad, match", [
    (np.array([[0.0, np.nan], [np.nan, 0.0]]), r"Q\[0, 1\] is nan"),
    (np.ones((3, 4)), r"square, got shape \(3, 4\)"),
    (np.array([[1j, 0], [0, 1]]), "complex"),
    ([[1.0, 2.0], [3.0]], "ragged"),
    (np.array([[1, 2], [3, 2**60]], dtype=np.int64), "2\\*\\*53"),
])
def test_bad_matrices_named(bad, match):
    with pytest.raises(spinward.InputError, match=match):
        spinward.QUBO(bad)


def test_empty_and_single_variable():
    r = spinward.solve(spinward.QUBO(np.zeros((0, 0)), offset=2.0))
    assert r.assignment == {} and r.objective == 2.0 and r.exact
    r = spinward.solve(spinward.QUBO(np.array([[-3.0]])))
    assert r.assignment == {0: 1} and r.objective == -3.0


def test_extreme_magnitudes_rescaled_exactly():
    for scale in (1e200, 1e-200):
        Q = np.array([[1.0, -3.0], [0.0, 1.0]]) * scale
        r = spinward.solve(spinward.QUBO(Q))
        assert r.objective == pytest.approx(-1.0 * scale, rel=1e-12)
        assert r.assignment == {0: 1, 1: 1}
