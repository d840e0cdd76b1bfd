"""Tabu search ("tabu"): brute-force optima, a plain reference walk, values recomputed, seeds, clock, SK energy.

Everything runs at the canonical level: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀.
"""

from __future__ import annotations

import time

import networkx as nx
import numpy as np
import pytest
import scipy.sparse as sp

from spinward.core import CanonicalProblem, InputError, SolveContext
from tests.references import brute_max, heuristic_misses, own_value, random_instance
from spinward.plugins import tabu


def solve(K, b, k0, seed=0, time_limit=None, **options):
    problem = CanonicalProblem(K, np.asarray(b, dtype=np.float64), k0)
    ctx = SolveContext(rng=np.random.default_rng(seed), time_limit=time_limit, options=options)
    return tabu.SPEC.run(problem, ctx), ctx


@pytest.mark.parametrize("options", [{"moves": 20_000, "start": "random"}, {"moves": 2_000, "restarts": 2}])
@pytest.mark.parametrize("sparse", [False, True])
def test_small_instances_reach_the_brute_force_optimum(options, sparse):
    # reference: brute force over all states (tests/references.py)
    assert heuristic_misses(solve, options, sparse=sparse, seed=17) <= 1  # "with high probability", not always


def reference_walk(K: np.ndarray, sigma: np.ndarray, tenure: int, moves: int) -> list[int]:
    """Plain one-flip tabu: best admissible gain; tabu for ``tenure`` moves; aspiration by the best value."""
    s = sigma.copy()
    tabu_until = np.zeros(len(s), dtype=int)
    current = best = 0.5 * s @ K @ s
    chosen = []
    for move in range(moves):
        gain = -2.0 * s * (K @ s)
        admissible = (tabu_until <= move) | (current + gain > best + 1e-9)
        i = int(np.argmax(np.where(admissible, gain, -np.inf)))
        chosen.append(i)
        current += gain[i]
        best = max(best, current)
        s[i] = -s[i]
        tabu_until[i] = move + 1 + tenure
    return chosen


@pytest.mark.parametrize("sparse", [False, True])
def test_kernel_walk_follows_the_plain_rule(sparse):
    # Gaussian weights make ties impossible, and spread 0 fixes the tenure: the walk is then determined.
    from spinward.plugins.tabu import _kernels as kern
    from spinward.plugins.common.flips import csr_parts

    rng = np.random.default_rng(1)
    g = nx.convert_node_labels_to_integers(nx.grid_2d_graph(8, 8, periodic=True))
    K = nx.to_numpy_array(g, weight=None) * np.triu(rng.standard_normal((64, 64)), 1)
    K = K + K.T
    start = np.where(rng.random(64) < 0.5, 1.0, -1.0)
    expected = reference_walk(K, start, tenure=7, moves=300)
    problem = CanonicalProblem(sp.csr_array(K) if sparse else K, np.zeros(64))
    walk = tabu.Walk(problem, csr_parts(problem) if sparse else (K,), seed=5, tol=1e-9)
    walk.start(start)
    chosen = []
    for _ in range(300):
        before = walk.sigma.copy()
        if sparse:
            kern.tabu_csr(*walk.couplings, walk.sigma, walk.h, walk.gain, walk.tabu_until, walk.heaps, walk.poss,
                          walk.queue, walk.best_sigma, walk.ints, walk.vals, walk.rng_state, 1, 7, 0, 10**9, 1e-9)
        else:
            kern.tabu_dense(K, walk.sigma, walk.h, walk.tabu_until, walk.best_sigma, walk.ints, walk.vals,
                            walk.rng_state, 1, 7, 0, 10**9, 1e-9)
        chosen.append(int(np.flatnonzero(before != walk.sigma)[0]))
    assert chosen == expected


def test_reported_state_is_valid_and_its_value_recomputed():
    rng = np.random.default_rng(11)
    K, b, k0 = random_instance(rng, 60)
    sol, ctx = solve(sp.csr_array(K), b, k0, seed=3)
    assert sol.sigma.dtype == np.int8 and set(np.unique(sol.sigma)) <= {-1, 1}
    assert ctx.best_value == pytest.approx(own_value(K, b, k0, sol.sigma), abs=1e-9)
    assert sol.info["finished"] is True
    h = K @ sol.sigma + b
    assert np.all(-2.0 * sol.sigma * h <= 1e-9)  # a 1-flip local optimum


@pytest.mark.parametrize("sparse", [False, True])
def test_same_seed_same_answer(sparse):
    rng = np.random.default_rng(5)
    K, b, k0 = random_instance(rng, 150)
    K = sp.csr_array(K) if sparse else K
    first, _ = solve(K, b, k0, seed=42, moves=30_000, restarts=2, start="random")
    second, _ = solve(K, b, k0, seed=42, moves=30_000, restarts=2, start="random")
    assert np.array_equal(first.sigma, second.sigma)
    assert first.info == second.info
    first, _ = solve(K, b, k0, seed=7, moves=10_000)  # with the anneal start
    second, _ = solve(K, b, k0, seed=7, moves=10_000)
    assert np.array_equal(first.sigma, second.sigma)
    assert first.info == second.info


@pytest.mark.parametrize("start", ["random", "anneal", "auto"])  # "auto" on sparse: ball-anneal
@pytest.mark.parametrize("sparse", [False, True])
def test_time_limit_is_honoured_and_best_state_kept(sparse, start):
    g = nx.random_regular_graph(3, 3000, seed=2)
    K = nx.to_scipy_sparse_array(g, format="csr", dtype=np.float64)
    K = K if sparse else K.toarray()
    t0 = time.perf_counter()
    sol, ctx = solve(K, np.zeros(3000), 0.0, seed=1, time_limit=0.5, start=start)
    assert time.perf_counter() - t0 < 5.0  # generous: a clock check, not a speed test
    assert sol.info["finished"] is False
    dense = K.toarray() if sparse else K
    assert ctx.best_value == pytest.approx(own_value(dense, np.zeros(3000), 0.0, sol.sigma))


def test_bipartite_maxcut_cuts_every_edge():
    # Reference: a bipartite graph with positive weights has MaxCut = total weight (elementary).
    rng = np.random.default_rng(4)
    g = nx.convert_node_labels_to_integers(nx.grid_2d_graph(20, 20))
    W = nx.to_scipy_sparse_array(g, format="csr", dtype=np.float64)
    W.data = rng.uniform(0.5, 2.0, W.nnz)
    W = sp.csr_array(sp.triu(W, 1) + sp.triu(W, 1).T)
    total = float(sp.triu(W, 1).sum())
    # MaxCut in canonical form: K = −W/2, k₀ = total/2, so C(σ) = Σ_{i<j} w_ij [σ_i ≠ σ_j].
    sol, _ = solve(-0.5 * W, np.zeros(400), total / 2, seed=2)
    cut = sum(d for (i, j), d in zip(zip(*sp.triu(W, 1).nonzero()), sp.triu(W, 1).data) if sol.sigma[i] != sol.sigma[j])
    assert cut == pytest.approx(total)


def test_options_are_checked():
    K, b, k0 = random_instance(np.random.default_rng(0), 5)
    for bad in ({"moves": 0}, {"tenure": -1}, {"perturb": 0.0}, {"start": "greedy"}, {"stall": 0},
                {"ball_kicks": -1}, {"ball_kicks": 1.5}):
        with pytest.raises(InputError):
            solve(K, b, k0, **bad)


def test_sk_1000_reaches_the_expected_energy():
    # e = H/n^{3/2}, H = Σ_{i<j} J_ij σ_i σ_j, J ~ N(0,1), canonical K = J.  Parisi P* = 0.7632 with
    # finite-size correction ≈ −0.7·n^{-2/3} (REFERENCES: Crisanti & Rizzo 2002; Boettcher 2005; from memory)
    # gives e_1000 ≈ 0.756; the default tabu budget should land within about 3% of it.
    rng = np.random.default_rng(1)
    n = 1000
    J = np.triu(rng.standard_normal((n, n)), 1)
    J = J + J.T
    sol, _ = solve(J, np.zeros(n), 0.0, seed=1, start="random")  # plain tabu search, no anneal
    e = own_value(J, np.zeros(n), 0.0, sol.sigma) / n**1.5
    assert 0.735 <= e <= 0.7632 + 0.01


def test_registers_through_the_hook_and_runs_with_declared_defaults():
    from spinward.core import Registry

    spec = Registry(["spinward.plugins.tabu"], autoload=False).get("tabu")
    K, b, k0 = random_instance(np.random.default_rng(8), 10)
    # the front door hands a solver every declared option, defaults included
    ctx = SolveContext(rng=np.random.default_rng(0), time_limit=0.2, options=dict(spec.options))
    sol = spec.run(CanonicalProblem(K, b, k0), ctx)
    assert own_value(K, b, k0, sol.sigma) == pytest.approx(brute_max(K, b, k0))


def test_ball_kicks_alone_reach_the_brute_force_optimum():
    # reference: brute force over all states (tests/references.py); kicks only, no anneal, no walk
    assert heuristic_misses(solve, {"start": "random", "ball_kicks": 3000, "moves": 1}, sparse=True, seed=23) <= 1


def test_ball_kicks_never_lose_and_end_at_a_local_optimum():
    # C(σ) recomputed plainly from K, b, k₀ (tests/references.py own_value), not from the kernel
    from spinward.plugins.common.kicks import kick_search

    rng = np.random.default_rng(5)
    g = nx.random_regular_graph(3, 400, seed=5)
    upper = np.triu(nx.to_numpy_array(g) * rng.standard_normal((400, 400)), 1)  # Gaussian weights on the edges
    K = sp.csr_array(upper + upper.T)
    b = rng.standard_normal(400) * 0.3
    problem = CanonicalProblem(K, b, 1.5)
    start = np.where(rng.random(400) < 0.5, 1, -1).astype(np.int8)
    ctx = SolveContext(rng=np.random.default_rng(1))
    sigma, value, done = kick_search(problem, start, ctx, kicks=20_000)
    Kd = K.toarray()
    assert done == 20_000
    assert value == pytest.approx(own_value(Kd, b, 1.5, sigma), abs=1e-9)
    assert value >= own_value(Kd, b, 1.5, start)
    gains = -2.0 * sigma * (Kd @ sigma + b)
    assert gains.max() <= 1e-9  # no single flip improves


def test_ball_kicks_stop_when_they_stall():
    # a 1-flip local optimum of a 6-cycle ferromagnet (all spins equal) is the optimum: no kick gains,
    # so a stall limit ends the search long before the kick budget (optimum by hand: every edge satisfied)
    from spinward.plugins.common.kicks import kick_search

    g = nx.cycle_graph(6)
    K = sp.csr_array(nx.to_numpy_array(g))
    problem = CanonicalProblem(K, np.zeros(6))
    ctx = SolveContext(rng=np.random.default_rng(0))
    sigma, value, done = kick_search(problem, np.ones(6, dtype=np.int8), ctx, kicks=10**6, stall=5000)
    assert value == pytest.approx(6.0)  # ½σᵀKσ with K the cycle's adjacency: 6 satisfied edges
    assert done < 10**6


def test_ball_kicks_without_a_time_limit_do_not_depend_on_the_clock(monkeypatch):
    # determinism is the contract (DEVELOPERS.md): a fast and a slow clock must give the same state
    from spinward.plugins.common import kicks

    rng = np.random.default_rng(9)
    g = nx.random_regular_graph(3, 300, seed=9)
    upper = np.triu(nx.to_numpy_array(g) * rng.standard_normal((300, 300)), 1)
    problem = CanonicalProblem(sp.csr_array(upper + upper.T), np.zeros(300))
    start = np.where(rng.random(300) < 0.5, 1, -1).astype(np.int8)
    runs = []
    for step in (1e-9, 10.0):  # each clock read advances the fake clock by this much
        ticks = iter(range(10**9))
        monkeypatch.setattr(kicks.time, "perf_counter", lambda step=step: step * next(ticks))
        sigma, value, done = kicks.kick_search(problem, start, SolveContext(rng=np.random.default_rng(2)),
                                               kicks=50_000)
        runs.append((sigma.tolist(), value, done))
    assert runs[0] == runs[1]


def test_annealed_ball_kicks_reach_the_brute_force_optimum():
    # reference: brute force over all states (tests/references.py); annealed kicks, then a 1-move walk
    assert heuristic_misses(solve, {"start": "ball-anneal", "moves": 1}, sparse=True, seed=29) <= 1


def test_default_on_3_regular_graphs_reaches_the_milp_optimum():
    # reference: scipy.optimize.milp (HiGHS, mip_rel_gap 0) proves the maximum cut of 3-regular graphs
    # up to n ≈ 120 (measured here; docs/references.md); the default start here is "ball-anneal" (mean degree 3)
    from tests.references import milp_maxcut

    for seed in (1, 2):
        rng = np.random.default_rng(seed)
        g = nx.random_regular_graph(3, 90, seed=seed)
        edges = [(u, v, float(w)) for (u, v), w in zip(g.edges, rng.standard_normal(g.number_of_edges()))]
        W = np.zeros((90, 90))
        for u, v, w in edges:
            W[u, v] = W[v, u] = w
        # cut(σ) = Σ_{u<v} w_uv (1 − σ_uσ_v)/2 = ½σᵀ(−W/2)σ + Σ w/2
        sol, _ = solve(sp.csr_array(-W / 2), np.zeros(90), sum(w for *_, w in edges) / 2, seed=seed)
        assert sol.info["start"] == "ball-anneal"
        cut = sum(w for u, v, w in edges if sol.sigma[u] != sol.sigma[v])
        assert cut == pytest.approx(milp_maxcut(90, edges), abs=1e-7)


def test_annealed_ball_kicks_never_lose_and_end_at_a_local_optimum():
    # C(σ) recomputed plainly from K, b, k₀ (tests/references.py own_value): a hot start from a good
    # state may wander, but the best state seen is what comes back
    from spinward.plugins.common.kicks import kick_search

    rng = np.random.default_rng(6)
    g = nx.random_regular_graph(3, 300, seed=6)
    upper = np.triu(nx.to_numpy_array(g) * rng.standard_normal((300, 300)), 1)
    K = sp.csr_array(upper + upper.T)
    b = rng.standard_normal(300) * 0.3
    problem = CanonicalProblem(K, b, -2.0)
    good, _, _ = kick_search(problem, np.ones(300, dtype=np.int8), SolveContext(rng=np.random.default_rng(0)),
                             kicks=30_000)
    sigma, value, done = kick_search(problem, good, SolveContext(rng=np.random.default_rng(1)), kicks=30_000,
                                     heat=5.0)
    Kd = K.toarray()
    assert done == 30_000
    assert value == pytest.approx(own_value(Kd, b, -2.0, sigma), abs=1e-9)
    assert value >= own_value(Kd, b, -2.0, good) - 1e-9
    assert (-2.0 * sigma * (Kd @ sigma + b)).max() <= 1e-9
    with pytest.raises(ValueError, match="needs seconds or kicks"):
        kick_search(problem, good, SolveContext(rng=np.random.default_rng(1)), heat=1.0)


def test_start_auto_follows_the_mean_degree():
    # mean degree 3 and 4 → annealed ball kicks; 5, G(n, 10/n) (mean degree ≈ 10) and dense K → annealing first
    def start_of(K):
        sol, _ = solve(K, np.zeros(K.shape[0]), 0.0, moves=10, ball_kicks=10, seed=0)
        return sol.info["start"]

    regular = sp.csr_array(nx.to_scipy_sparse_array(nx.random_regular_graph(3, 200, seed=0)) * -0.5)
    gnp = sp.csr_array(nx.to_scipy_sparse_array(nx.fast_gnp_random_graph(400, 10 / 400, seed=0)) * -0.5)
    dense = np.random.default_rng(0).standard_normal((30, 30))
    assert start_of(regular) == "ball-anneal"
    torus = nx.convert_node_labels_to_integers(nx.grid_2d_graph(12, 12, periodic=True))
    assert start_of(sp.csr_array(nx.to_scipy_sparse_array(torus) * -0.5)) == "ball-anneal"
    five = sp.csr_array(nx.to_scipy_sparse_array(nx.random_regular_graph(5, 200, seed=0)) * -0.5)
    assert start_of(five) == "anneal"
    assert start_of(gnp) == "anneal"
    assert start_of(dense + dense.T) == "anneal"
    with pytest.raises(InputError, match="needs sparse couplings"):
        solve(dense + dense.T, np.zeros(30), 0.0, start="ball-anneal")
    from spinward.plugins import annealing

    assert tabu.fit(CanonicalProblem(regular, np.zeros(200))) > annealing.fit(CanonicalProblem(regular, np.zeros(200)))
    assert tabu.fit(CanonicalProblem(gnp, np.zeros(400))) < annealing.fit(CanonicalProblem(gnp, np.zeros(400)))
