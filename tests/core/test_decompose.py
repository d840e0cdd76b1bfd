"""Connected components and restrictions of canonical problems.

Outside checks: networkx.connected_components for the split, and brute-force
enumeration written here for "the optimum of a two-component instance is the
sum of its parts' optima".  Canonical sense: maximise ½σᵀKσ + bᵀσ + k₀.
"""

from __future__ import annotations

import itertools

import networkx as nx
import numpy as np
import pytest
import scipy.sparse as sp

from spinward.core import CanonicalProblem
from spinward.core.decompose import assemble, connected_components, subproblem


def brute_force(problem: CanonicalProblem) -> float:
    """max over all 2^n spin vectors, by plain enumeration."""
    K, b = problem.dense_K(), problem.b
    best = -np.inf
    for bits in itertools.product((-1.0, 1.0), repeat=problem.n):
        s = np.array(bits)
        best = max(best, 0.5 * s @ K @ s + b @ s + problem.k0)
    return float(best)


def two_components(rng: np.random.Generator, sparse: bool) -> tuple[CanonicalProblem, list[set[int]]]:
    """Two random connected blocks on interleaved indices, with float weights and fields."""
    n = 12
    perm = rng.permutation(n)
    blocks = [perm[:5], perm[5:]]
    K = np.zeros((n, n))
    for blk in blocks:
        path = list(blk)
        for u, v in itertools.pairwise(path):  # a path keeps each block connected
            K[u, v] = K[v, u] = rng.normal()
        for u, v in itertools.combinations(path, 2):
            if rng.random() < 0.3:
                K[u, v] = K[v, u] = rng.normal()
    problem = CanonicalProblem(sp.csr_array(K) if sparse else K, rng.normal(size=n), 1.75,
                               labels=tuple(f"s{i}" for i in range(n)), scale=-2.0, shift=3.0, sense="min")
    return problem, [set(map(int, blk)) for blk in blocks]


@pytest.mark.parametrize("sparse", [False, True])
def test_two_components_match_networkx_and_add_up(sparse):
    problem, _ = two_components(np.random.default_rng(8), sparse)
    parts = connected_components(problem)
    G = nx.from_numpy_array(problem.dense_K())
    assert sorted(map(set, map(list, parts)), key=min) == sorted(map(set, nx.connected_components(G)), key=min)
    assert 0 in parts[0]
    subs = [subproblem(problem, idx) for idx in parts]
    assert [s.k0 for s in subs] == [1.75, 0.0] and [s.shift for s in subs] == [3.0, 0.0]
    assert subs[1].labels == tuple(problem.labels[i] for i in parts[1])
    # the optimum of the whole is the sum of the optima of the parts (enumeration)
    assert brute_force(problem) == pytest.approx(sum(brute_force(s) for s in subs), abs=1e-9)


def test_assembled_parts_give_the_sum_of_values():
    rng = np.random.default_rng(12)
    problem, _ = two_components(rng, sparse=True)
    parts = connected_components(problem)
    subs = [subproblem(problem, idx) for idx in parts]
    sigmas = [rng.choice([-1, 1], len(idx)).astype(np.int8) for idx in parts]
    whole = assemble(problem.n, parts, sigmas)
    assert problem.value(whole) == pytest.approx(sum(s.value(x) for s, x in zip(subs, sigmas)), abs=1e-12)
    objective = sum(s.to_objective(s.value(x)) for s, x in zip(subs, sigmas))
    assert problem.to_objective(problem.value(whole)) == pytest.approx(objective, abs=1e-12)


def test_isolated_spins_are_their_own_components():
    K = np.zeros((4, 4))
    K[1, 3] = K[3, 1] = 0.5
    parts = connected_components(CanonicalProblem(K, np.array([0.1, -0.2, 0.3, 0.0])))
    assert [p.tolist() for p in parts] == [[0], [1, 3], [2]]
    assert connected_components(CanonicalProblem(np.zeros((0, 0)), np.zeros(0))) == []


def test_operator_is_one_component():
    from scipy.sparse.linalg import aslinearoperator

    K = np.zeros((3, 3))
    parts = connected_components(CanonicalProblem(aslinearoperator(K), np.zeros(3)))
    assert len(parts) == 1 and parts[0].tolist() == [0, 1, 2]
