"""Exact enumeration against outside references: scipy.optimize.milp (HiGHS, zero gap) and plain brute force."""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest

import spinward
from tests.references import brute_ising_min, brute_qubo_min, milp_maxcut, milp_qubo_min


@pytest.mark.parametrize("n", [15, 18, 21])
def test_qubo_matches_milp(n, rng):
    # reference: scipy.optimize.milp on the standard linearisation, mip_rel_gap=0
    Q = rng.normal(size=(n, n)) * (rng.random((n, n)) < 0.5)
    offset = float(rng.normal())
    r = spinward.solve(spinward.QUBO(Q, offset=offset), method="enumerate")
    assert r.exact and r.status == "optimal"
    assert r.objective == pytest.approx(milp_qubo_min(Q, offset), abs=1e-7)
    x = r.values.astype(float)
    assert r.objective == pytest.approx(x @ Q @ x + offset, abs=1e-12)


@pytest.mark.parametrize("n", [16, 20])
def test_ising_matches_milp(n, rng):
    # Ising → QUBO by s = 2x − 1, written out here independently of the adapters
    J = np.triu(rng.normal(size=(n, n)), 1)
    h = rng.normal(size=n)
    offset = 0.25
    # E = −Σ J s s − h s + c with s = 2x − 1:  xᵀQx + const
    Q = -4 * J
    lin = 2 * J.sum(axis=1) + 2 * J.sum(axis=0) - 2 * h
    Q = Q + np.diag(lin)
    const = -J.sum() + h.sum() + offset
    r = spinward.solve(spinward.Ising(J, h, offset=offset), method="enumerate")
    assert r.exact
    assert r.objective == pytest.approx(milp_qubo_min(Q, const), abs=1e-7)


@pytest.mark.parametrize("n", [18, 24, 26])
def test_sparse_maxcut_matches_milp(n):
    # reference: milp with z_uv = x_u XOR x_v; degree-3 graphs with signed weights
    g = nx.random_regular_graph(3, n, seed=n)
    rng = np.random.default_rng(n)
    for u, v in g.edges:
        g.edges[u, v]["weight"] = float(rng.normal())
    edges = [(u, v, d["weight"]) for u, v, d in g.edges(data=True)]
    r = spinward.solve(g, method="enumerate")
    assert r.exact
    assert r.objective == pytest.approx(milp_maxcut(n, edges), abs=1e-7)
    cut_side = [u for u, side in r.assignment.items() if side == 0]
    assert r.objective == pytest.approx(nx.cut_size(g, cut_side, weight="weight"), abs=1e-9)


def test_brute_force_small_with_fields(rng):
    # reference: enumeration written plainly in tests/references.py
    for n in range(1, 11):
        J = np.triu(rng.normal(size=(n, n)), 1)
        h = rng.normal(size=n)
        r = spinward.solve(spinward.Ising(J, h, offset=-1.5), method="enumerate")
        assert r.objective == pytest.approx(brute_ising_min(J, h, -1.5), abs=1e-9)
        Q = rng.normal(size=(n, n))
        r = spinward.solve(spinward.QUBO(Q), method="enumerate")
        assert r.objective == pytest.approx(brute_qubo_min(Q), abs=1e-9)


def test_refuses_above_its_limit():
    g = nx.cycle_graph(27)
    with pytest.raises(spinward.SolverUnsuitableError, match="exceeds its limit of 26"):
        spinward.solve(g, method="enumerate")


def test_time_limit_stops_early_and_is_not_exact():
    rng = np.random.default_rng(0)
    n = 26
    J = np.triu(rng.normal(size=(n, n)), 1)
    # fields remove the symmetry, so 2^26 states: stopped at once by a tiny limit
    r = spinward.solve(spinward.Ising(J, rng.normal(size=n)), method="enumerate", time_limit=1e-6)
    assert r.status in ("time-limit", "optimal")
    if r.status == "time-limit":
        assert not r.exact
