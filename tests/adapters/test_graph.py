"""MaxCut adapter and front door on graphs with known cuts (elementary facts and graph-theory folklore; docs/references.md)."""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest

import spinward


def _cut(g, result, weight="weight"):
    # reference: networkx.cut_size recomputes the cut independently
    return nx.cut_size(g, [u for u, s in result.assignment.items() if s == 0], weight=weight)


def test_petersen_graph_is_12():
    # Petersen graph MaxCut = 12: common knowledge in graph theory (from memory)
    r = spinward.solve(nx.petersen_graph())
    assert r.objective == 12 and r.exact and r.sense == "max"
    assert _cut(nx.petersen_graph(), r) == 12


@pytest.mark.parametrize("n", [2, 3, 4, 7, 10, 13])
def test_complete_graph_floor_n2_over_4(n):
    # K_n, unit weights: ⌊n²/4⌋ (elementary, balanced bipartition)
    r = spinward.solve(nx.complete_graph(n))
    assert r.objective == n * n // 4 and r.exact


@pytest.mark.parametrize("n", [3, 4, 9, 10, 15, 16])
def test_cycles(n):
    # C_n: n if even, n − 1 if odd (elementary)
    r = spinward.solve(nx.cycle_graph(n))
    assert r.objective == (n if n % 2 == 0 else n - 1)


def test_bipartite_graph_cuts_everything():
    # any bipartite graph with positive weights: MaxCut = total weight (elementary)
    g = nx.complete_bipartite_graph(5, 7)
    rng = np.random.default_rng(1)
    for u, v in g.edges:
        g.edges[u, v]["weight"] = float(rng.uniform(0.5, 2))
    r = spinward.solve(g)
    assert r.objective == pytest.approx(g.size(weight="weight"))
    assert _cut(g, r) == pytest.approx(r.objective)


def test_hashable_labels_and_custom_weight_name():
    g = nx.grid_2d_graph(3, 4)
    for k, (u, v) in enumerate(g.edges):
        g.edges[u, v]["cost"] = 1.0 + k % 3
    r = spinward.solve(spinward.MaxCut(g, weight="cost"))
    assert set(r.assignment) == set(g.nodes)
    assert r.objective == pytest.approx(g.size(weight="cost"))  # grids are bipartite
    assert _cut(g, r, weight="cost") == pytest.approx(r.objective)


def test_multigraph_parallel_edges_add_up():
    g = nx.MultiGraph()
    g.add_edge("a", "b", weight=2.0)
    g.add_edge("a", "b", weight=-5.0)
    g.add_edge("b", "c", weight=1.0)
    r = spinward.solve(g)
    # a–b totals −3: keep a and b together, cut b–c
    assert r.objective == pytest.approx(1.0)
    assert r.assignment["a"] == r.assignment["b"] != r.assignment["c"]


def test_self_loops_dropped_with_warning():
    g = nx.Graph([(0, 1), (1, 1)])
    with pytest.warns(spinward.InputWarning, match="self-loop"):
        form = spinward.MaxCut(g)
    r = spinward.solve(form)
    assert r.objective == 1 and any("self-loop" in w for w in r.warnings)


def test_digraph_needs_symmetrize():
    d = nx.DiGraph([(0, 1), (1, 0), (1, 2)])
    with pytest.raises(spinward.InputError, match="symmetrize=True"):
        spinward.MaxCut(d)
    r = spinward.solve(spinward.MaxCut(d, symmetrize=True))
    assert r.objective == 3  # arcs 0→1 and 1→0 add up to weight 2, plus 1–2


def test_bad_weight_names_the_edge():
    g = nx.Graph()
    g.add_edge("x", "y", weight="heavy")
    with pytest.raises(spinward.InputError, match=r"edge \('x', 'y'\)"):
        spinward.MaxCut(g)


def test_negative_weights():
    g = nx.Graph()
    g.add_weighted_edges_from([(0, 1, -1.0), (1, 2, -1.0), (0, 2, 3.0)])
    r = spinward.solve(g)
    assert r.objective == pytest.approx(2.0)  # cut {0,1} | {2}: 3 − 1 = 2 (by hand)
