"""The front door's documented behaviour for hostile inputs, one test per row of the table in README.md."""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest
import scipy.sparse as sp

import spinward


@pytest.mark.parametrize("make", [
    lambda: spinward.QUBO(np.array([[0.0, 1.0], [np.inf, 0.0]])),
    lambda: spinward.Ising(np.zeros((2, 2)), [0.0, np.nan]),
    lambda: spinward.QUBO(sp.csr_array(np.array([[0.0, np.nan], [0.0, 0.0]]))),
    lambda: spinward.QUBO({(0, 1): float("nan")}),
])
def test_nan_or_inf_names_the_entry(make):
    with pytest.raises(spinward.InputError, match=r"\[.*\]"):
        make()


@pytest.mark.parametrize("bad, match", [
    (np.zeros((2, 3)), r"shape \(2, 3\)"),
    (np.zeros(4), r"shape \(4,\)"),
    ([[1, 2], [3]], "ragged"),
    (np.zeros((2, 2, 2)), r"shape \(2, 2, 2\)"),
])
def test_non_square_or_ragged(bad, match):
    with pytest.raises(spinward.InputError, match=match):
        spinward.QUBO(bad)
    with pytest.raises(spinward.InputError, match=match):
        spinward.Ising(bad)


def test_complex_and_object_dtypes():
    with pytest.raises(spinward.InputError, match="complex"):
        spinward.Ising(np.eye(2, dtype=complex))
    with pytest.raises(spinward.InputError, match="object"):
        spinward.QUBO(np.array([[1, "a"], [None, 2]], dtype=object))


def test_empty_problem_each_form():
    for form in (spinward.QUBO(np.zeros((0, 0))), spinward.Ising({}, {}), spinward.MaxCut(nx.Graph())):
        r = spinward.solve(form)
        assert r.assignment == {} and r.exact and r.status == "optimal" and r.objective == 0.0


def test_single_variable_each_form():
    assert spinward.solve(spinward.QUBO(np.array([[2.0]]))).assignment == {0: 0}
    assert spinward.solve(spinward.Ising({}, {"s": -1.0})).assignment == {"s": -1}
    g = nx.Graph(); g.add_node("only")
    r = spinward.solve(g)
    assert r.objective == 0 and set(r.assignment) == {"only"}


def test_mixed_type_labels():
    Q = {(1, "1"): -2.0, ("1", "1"): 1.0, ((0, 1), 1): -1.0, (1, 1): 0.5}
    r = spinward.solve(spinward.QUBO(Q))
    assert set(r.assignment) == {1, "1", (0, 1)}
    x = r.assignment
    direct = -2.0 * x[1] * x["1"] + x["1"] - x[(0, 1)] * x[1] + 0.5 * x[1]
    assert r.objective == pytest.approx(direct)
    back = spinward.Result.from_json(r.to_json())
    assert set(back.assignment) == {1, "1", (0, 1)}


def test_dense_too_big_refused_before_allocating(monkeypatch):
    monkeypatch.setenv("SPINWARD_MEMORY_LIMIT", str(1 << 20))  # pretend only 1 MiB is free
    with pytest.raises(spinward.ResourceError, match=r"GiB.*sparse.*memmap"):
        spinward.solve(spinward.QUBO(np.zeros((1000, 1000))))


def test_integers_beyond_float_precision_refused():
    with pytest.raises(spinward.InputError, match="2\\*\\*53"):
        spinward.QUBO(np.array([[0, 2**60], [0, 0]], dtype=np.int64))
    with pytest.raises(spinward.InputError, match="2\\*\\*53"):
        spinward.QUBO({(0, 1): 2**60})


def test_extreme_magnitudes_rescaled_exactly_or_refused():
    for scale in (1e300, 1e-300):
        g = nx.Graph()
        g.add_weighted_edges_from([(0, 1, 3 * scale), (1, 2, 2 * scale), (0, 2, 2 * scale)])
        r = spinward.solve(g)
        assert r.objective == pytest.approx(5 * scale, rel=1e-12) and r.exact
    with pytest.raises(spinward.InputError, match="beyond float64 range"):
        spinward.solve(spinward.QUBO(np.full((3, 3), 1e308)))


def test_duplicate_edges_and_self_loops_documented():
    g = nx.MultiGraph([(0, 1), (0, 1), (1, 2), (2, 2)])
    with pytest.warns(spinward.InputWarning, match="self-loop"):
        r = spinward.solve(g)
    assert r.objective == 3  # the doubled edge counts twice (parallel edges add up)
