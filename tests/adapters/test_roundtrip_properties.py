"""Property tests (hypothesis): the caller's objective equals the canonical image, in all three forms.

For random instances and assignments, the objective computed plainly from the
caller's input here must equal scale·C(σ) + shift through the canonical form.
"""

from __future__ import annotations

import networkx as nx
import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

import spinward

coef = st.floats(min_value=-1e3, max_value=1e3, allow_nan=False, allow_infinity=False)


def _check(form, values, direct):
    c = form.canonical()
    sigma = form.encode(np.asarray(values))
    via = c.to_objective(c.value(sigma))
    scale = 1.0 + abs(direct)
    assert abs(via - direct) <= 1e-9 * scale * 100
    assert abs(form.evaluate(np.asarray(values)) - direct) <= 1e-9 * scale * 100


@settings(max_examples=60, deadline=None)
@given(st.integers(1, 8).flatmap(lambda n: st.tuples(
    st.lists(st.lists(coef, min_size=n, max_size=n), min_size=n, max_size=n),
    st.lists(st.integers(0, 1), min_size=n, max_size=n), coef)))
def test_qubo_matrix(data):
    Q, x, offset = np.array(data[0]), np.array(data[1]), data[2]
    direct = sum(Q[i, j] * x[i] * x[j] for i in range(len(x)) for j in range(len(x))) + offset
    _check(spinward.QUBO(Q, offset=offset), x, direct)


@settings(max_examples=60, deadline=None)
@given(st.dictionaries(st.tuples(st.sampled_from("abcdef"), st.sampled_from("abcdef")), coef, min_size=1, max_size=12),
       st.dictionaries(st.sampled_from("abcdefg"), coef, max_size=5), coef, st.randoms())
def test_ising_dicts(J, h, offset, rnd):
    J = {k: v for k, v in J.items() if k[0] != k[1]} or {("a", "b"): 1.0}
    form = spinward.Ising(J, h, offset=offset)
    labels = form.labels
    s = {k: rnd.choice((-1, 1)) for k in labels}
    direct = -sum(v * s[i] * s[j] for (i, j), v in J.items()) - sum(v * s[k] for k, v in h.items()) + offset
    _check(form, [s[k] for k in labels], direct)


@settings(max_examples=60, deadline=None)
@given(st.integers(2, 9), st.integers(0, 10_000), st.randoms())
def test_maxcut_graph(n, seed, rnd):
    g = nx.gnp_random_graph(n, 0.5, seed=seed, directed=False)
    for u, v in g.edges:
        g.edges[u, v]["weight"] = rnd.uniform(-5, 5)
    side = {u: rnd.choice((0, 1)) for u in g}
    direct = sum(d["weight"] for u, v, d in g.edges(data=True) if side[u] != side[v])
    form = spinward.MaxCut(g)
    _check(form, [side[u] for u in form.labels], direct)
