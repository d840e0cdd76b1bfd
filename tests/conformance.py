"""Instances for the plugin conformance suite: tiny problems in all three forms, with their own
objective functions and brute-force optima computed plainly from the caller's input (no spinward code)."""

from __future__ import annotations

import itertools
from dataclasses import dataclass
from typing import Any, Callable

import networkx as nx
import numpy as np
from hypothesis import strategies as st

import spinward


@dataclass
class Case:
    form: Any
    objective: Callable[[dict], float]   # the caller's objective of an assignment {label: value}
    labels: list
    domain: tuple[int, int]
    sense: str

    def optimum(self) -> float:
        best = None
        for values in itertools.product(self.domain, repeat=len(self.labels)):
            v = self.objective(dict(zip(self.labels, values)))
            if best is None or (v < best if self.sense == "min" else v > best):
                best = v
        return 0.0 if best is None else best


weights = st.floats(-5, 5, allow_nan=False).map(lambda w: round(w, 3))


@st.composite
def qubo_cases(draw) -> Case:
    n = draw(st.integers(1, 9))
    Q = np.array(draw(st.lists(st.lists(weights, min_size=n, max_size=n), min_size=n, max_size=n)))
    Q = Q * (np.array(draw(st.lists(st.booleans(), min_size=n * n, max_size=n * n))).reshape(n, n) | np.eye(n, dtype=bool))
    offset = draw(weights)

    def f(a):
        x = np.array([a[i] for i in range(n)], dtype=float)
        return float(x @ Q @ x + offset)

    return Case(spinward.QUBO(Q, offset=offset), f, list(range(n)), (0, 1), "min")


@st.composite
def ising_cases(draw) -> Case:
    names = draw(st.lists(st.sampled_from(["a", "b", "c", "d", "e", "f", "g", 7, (1, 2)]), min_size=1, max_size=8,
                          unique=True))
    pairs = [(u, v) for u, v in itertools.combinations(names, 2)]
    J = {p: draw(weights) for p in pairs if draw(st.booleans())}
    h = {u: draw(weights) for u in names if draw(st.booleans())}
    offset = draw(weights)
    labels = list(dict.fromkeys([*h, *(x for p in J for x in p)]))

    def f(s):
        return -sum(v * s[i] * s[j] for (i, j), v in J.items()) - sum(v * s[k] for k, v in h.items()) + offset

    return Case(spinward.Ising(J, h, offset=offset), f, labels, (-1, 1), "min")


@st.composite
def maxcut_cases(draw) -> Case:
    n = draw(st.integers(1, 10))
    g = nx.MultiGraph() if draw(st.booleans()) else nx.Graph()
    g.add_nodes_from(range(n))
    for u, v in itertools.combinations(range(n), 2):
        if draw(st.booleans()):
            g.add_edge(u, v, weight=draw(weights))

    def f(side):
        return sum(d["weight"] for u, v, d in g.edges(data=True) if side[u] != side[v])

    return Case(spinward.MaxCut(g), f, list(g.nodes), (0, 1), "max")


any_case = st.one_of(qubo_cases(), ising_cases(), maxcut_cases())


def check_result(case: Case, r: spinward.Result, optimum: float | None = None) -> None:
    """The conformance properties: labels, domain, recomputed objective, bound and exactness."""
    assert set(r.assignment) == set(case.labels), "labels must round-trip"
    assert set(r.assignment.values()) <= set(case.domain)
    direct = case.objective(r.assignment)
    assert abs(r.objective - direct) <= 1e-9 * (1 + abs(direct)), (r.objective, direct)
    opt = case.optimum() if optimum is None else optimum
    tol = 1e-9 * (1 + abs(opt))
    better = (lambda a, b: a < b - tol) if case.sense == "min" else (lambda a, b: a > b + tol)
    assert not better(r.objective, opt), "objective beats the brute-force optimum"
    if r.exact:
        assert abs(r.objective - opt) <= tol, f"marked exact but {r.objective} != optimum {opt}"
    if r.bound is not None and r.bound_kind == "certified":
        assert not better(opt, r.bound), f"certified bound {r.bound} violated by optimum {opt}"
