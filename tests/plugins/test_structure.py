"""Exact structural solvers (min-cut, gauge fixing, tree DP) against outside references.

References (docs/references.md): brute-force enumeration written in this file,
scipy.optimize.milp (HiGHS) with options={"mip_rel_gap": 0} on the standard
linearisation, networkx graph generators.  Canonical sense throughout:
maximise ½σᵀKσ + bᵀσ + k₀.
"""

from __future__ import annotations

import itertools

import networkx as nx
import numpy as np
import pytest
import scipy.sparse as sp
from scipy.optimize import Bounds, LinearConstraint, milp

from spinward.core import CanonicalProblem, Registry, SolveContext, SolverUnsuitableError
from spinward.plugins import structure
from spinward.plugins.structure import mincut, treedp, unfrustrated

SPECS = {spec.name: spec for spec in structure.spinward_solvers()}


# ---------------------------------------------------------------- outside references
def brute_force(K: np.ndarray, b: np.ndarray, k0: float) -> float:
    """max over all 2^n spin vectors of ½σᵀKσ + bᵀσ + k₀, by plain enumeration."""
    best = -np.inf
    for bits in itertools.product((-1.0, 1.0), repeat=len(b)):
        s = np.array(bits)
        best = max(best, 0.5 * s @ K @ s + b @ s + k0)
    return float(best)


def milp_optimum(K: np.ndarray, b: np.ndarray, k0: float) -> float:
    """Exact optimum from scipy.optimize.milp (HiGHS, mip_rel_gap=0).

    With x = (1+σ)/2 ∈ {0,1} and y_ij = x_i x_j (y ≤ x_i, y ≤ x_j, y ≥ x_i + x_j − 1):
    σ_iσ_j = 4y_ij − 2x_i − 2x_j + 1 and σ_i = 2x_i − 1.
    """
    n = len(b)
    i, j = np.nonzero(np.triu(K, 1))
    m = i.size
    w = K[i, j]
    c = np.zeros(n + m)  # milp minimises, so c is minus the objective
    c[n:] = -4 * w
    np.add.at(c, i, 2 * w)
    np.add.at(c, j, 2 * w)
    c[:n] -= 2 * b
    const = w.sum() - b.sum() + k0
    A = np.zeros((3 * m, n + m))
    rows = np.arange(m)
    A[rows, n + rows], A[rows, i] = 1, -1                     # y − x_i ≤ 0
    A[m + rows, n + rows], A[m + rows, j] = 1, -1             # y − x_j ≤ 0
    A[2 * m + rows, n + rows], A[2 * m + rows, i], A[2 * m + rows, j] = 1, -1, -1  # y − x_i − x_j ≥ −1
    lo = np.concatenate([np.full(2 * m, -np.inf), np.full(m, -1.0)])
    hi = np.concatenate([np.zeros(2 * m), np.full(m, np.inf)])
    cons = [LinearConstraint(A, lo, hi)] if m else []
    res = milp(c, constraints=cons, integrality=np.r_[np.ones(n), np.zeros(m)], bounds=Bounds(0, 1),
               options={"mip_rel_gap": 0})
    assert res.status == 0, res.message
    return float(-res.fun + const)


# ---------------------------------------------------------------- instance helpers
def symmetric(n: int, rng: np.random.Generator, density: float, positive: bool) -> np.ndarray:
    W = rng.uniform(0.05, 2.0, (n, n)) if positive else rng.normal(size=(n, n))
    K = np.triu(W * (rng.random((n, n)) < density), 1)
    return K + K.T


def from_graph(G: nx.Graph, rng: np.random.Generator) -> np.ndarray:
    G = nx.convert_node_labels_to_integers(G)
    K = np.zeros((G.number_of_nodes(),) * 2)
    for u, v in G.edges():
        K[u, v] = K[v, u] = rng.normal()
    return K


def solve(name: str, K, b: np.ndarray, k0: float = 0.0, **options):
    problem = CanonicalProblem(K, np.asarray(b, dtype=np.float64), k0)
    sol = SPECS[name].run(problem, SolveContext(rng=np.random.default_rng(0), options=options))
    return problem, sol


def assert_optimal(problem: CanonicalProblem, sol, optimum: float) -> None:
    tol = 1e-9 * (1 + abs(optimum))
    assert sol.exact
    assert set(np.unique(sol.sigma)) <= {-1, 1} and sol.sigma.dtype == np.int8
    assert problem.value(sol.sigma) == pytest.approx(optimum, abs=tol)
    assert sol.bound >= optimum - tol


# ---------------------------------------------------------------- registration
def test_the_hook_registers_three_exact_solvers():
    registry = Registry(["spinward.plugins.structure"], autoload=False)
    assert {"mincut", "unfrustrated", "treedp"} <= set(registry.names())
    for name in ("mincut", "unfrustrated", "treedp"):
        spec = registry.get(name)
        assert spec.capabilities.exact and spec.capabilities.fields


# ---------------------------------------------------------------- min-cut
@pytest.mark.parametrize("seed", range(40))
def test_mincut_equals_brute_force_on_float_ferromagnets_with_fields(seed):
    rng = np.random.default_rng(seed)
    n = int(rng.integers(2, 12))
    K = symmetric(n, rng, 0.5, positive=True)
    b = rng.normal(size=n) * rng.choice([0.01, 1.0, 30.0])
    K_in = sp.csr_array(K) if seed % 2 else K
    problem, sol = solve("mincut", K_in, b, k0=float(rng.normal()))
    assert_optimal(problem, sol, brute_force(K, b, problem.k0))  # outside check: enumeration


def test_mincut_equals_milp_on_a_ferromagnetic_grid():
    # beyond brute force: a 6×25 grid with float couplings and fields against scipy.optimize.milp
    rng = np.random.default_rng(21)
    G = nx.convert_node_labels_to_integers(nx.grid_2d_graph(6, 25))
    K = np.abs(from_graph(G, rng))
    b = rng.normal(size=len(K)) * 0.8
    problem, sol = solve("mincut", sp.csr_array(K), b, k0=2.0)
    assert_optimal(problem, sol, milp_optimum(K, b, 2.0))


def test_mincut_with_weights_far_apart_stays_exact():
    # capacities spanning 24 orders of magnitude exercise the 32-bit guard and the refinement
    rng = np.random.default_rng(7)
    n = 10
    K = symmetric(n, rng, 0.6, positive=True) * 10.0 ** rng.integers(-12, 12, (n, n))
    K = np.triu(K, 1)
    K = K + K.T
    b = rng.normal(size=n) * 10.0 ** rng.integers(-12, 12, n)
    problem, sol = solve("mincut", K, b)
    assert_optimal(problem, sol, brute_force(K, b, 0.0))


def test_mincut_integer_weights_are_proved_in_one_level():
    rng = np.random.default_rng(3)
    K = np.round(symmetric(11, rng, 0.5, positive=True) * 5)
    b = rng.integers(-6, 7, 11).astype(float)
    problem, sol = solve("mincut", K, b)
    assert_optimal(problem, sol, brute_force(K, b, 0.0))
    assert sol.info["levels"] == 1


def test_mincut_without_proof_reports_a_valid_gap():
    rng = np.random.default_rng(11)
    for _ in range(10):
        K = symmetric(10, rng, 0.6, positive=True)
        b = rng.normal(size=10)
        problem, sol = solve("mincut", K, b, max_levels=1)
        optimum = brute_force(K, b, 0.0)
        assert sol.bound >= optimum - 1e-9
        assert problem.value(sol.sigma) >= optimum - sol.info["gap_bound"] - 1e-9
        if not sol.exact:
            assert "not proved optimal" in sol.info["tolerance"]


def test_mincut_tiny_fields_below_the_first_scale():
    # fields far below the first integer scale vanish there: level one alone is off the optimum by
    # about 2e-10 per spin and must say so; the refinement then proves the true optimum
    rng = np.random.default_rng(13)
    K = symmetric(8, rng, 0.5, positive=True)
    K[6:, :] = K[:, 6:] = 0.0  # spins 6 and 7 are isolated
    b = np.r_[rng.normal(size=6), 1e-10, 1e-10]
    optimum = brute_force(K, b, 0.0)
    problem, rough = solve("mincut", K, b, max_levels=1)
    assert not rough.exact and rough.bound >= optimum
    assert problem.value(rough.sigma) >= optimum - rough.info["gap_bound"]
    problem, sol = solve("mincut", K, b)
    assert_optimal(problem, sol, optimum)
    assert problem.value(sol.sigma) > problem.value(rough.sigma)


def test_mincut_check_gives_its_reason():
    K = np.array([[0, 1, -2], [1, 0, 0.5], [-2, 0.5, 0]])
    verdict = SPECS["mincut"].can_run(CanonicalProblem(K, np.zeros(3)))
    assert verdict == ("couplings are not all ferromagnetic: 1 of 3 are negative "
                       "(min-cut needs Ising J_ij ≥ 0, i.e. QUBO off-diagonal ≤ 0)")
    assert SPECS["mincut"].can_run(CanonicalProblem(np.abs(K), np.ones(3))) is True
    with pytest.raises(SolverUnsuitableError, match="not all ferromagnetic"):
        SPECS["mincut"].run(CanonicalProblem(K, np.zeros(3)), SolveContext(rng=np.random.default_rng(0)))


def test_mincut_without_fields_or_one_sided_fields_is_uniform():
    rng = np.random.default_rng(5)
    K = symmetric(8, rng, 0.5, positive=True)
    for b in (np.zeros(8), np.abs(rng.normal(size=8)), -np.abs(rng.normal(size=8))):
        problem, sol = solve("mincut", K, b)
        assert_optimal(problem, sol, brute_force(K, b, 0.0))


# ---------------------------------------------------------------- gauge
def planted(n: int, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """A random ferromagnet, then a random gauge flip: frustration-free by construction."""
    tau = rng.choice([-1.0, 1.0], n)
    return symmetric(n, rng, 0.5, positive=True) * np.outer(tau, tau), tau


@pytest.mark.parametrize("seed", range(30))
def test_gauge_equals_brute_force_on_planted_instances(seed):
    rng = np.random.default_rng(100 + seed)
    n = int(rng.integers(2, 12))
    K, _ = planted(n, rng)
    b = rng.normal(size=n) if seed % 3 else np.zeros(n)
    K_in = sp.csr_array(K) if seed % 2 else K
    problem, sol = solve("unfrustrated", K_in, b, k0=0.25)
    assert SPECS["unfrustrated"].can_run(problem) is True
    assert_optimal(problem, sol, brute_force(K, b, 0.25))  # outside check: enumeration


def test_gauge_signs_undo_the_planted_flip():
    rng = np.random.default_rng(9)
    K, tau = planted(30, rng)
    K = np.triu(K, 1) + np.triu(K, 1).T
    found, bad, _ = unfrustrated.gauge_signs(CanonicalProblem(K, np.zeros(30)))
    assert bad == 0
    G = nx.from_numpy_array(K)
    for comp in nx.connected_components(G):  # τ is fixed up to one flip per component (networkx)
        idx = sorted(comp)
        ratio = found[idx] * tau[idx]
        assert np.all(ratio == ratio[0])


def test_gauge_check_rejects_a_frustrated_triangle():
    K = np.array([[0, 1, 1], [1, 0, -1], [1, -1, 0.0]])
    verdict = SPECS["unfrustrated"].can_run(CanonicalProblem(K, np.zeros(3)))
    assert isinstance(verdict, str) and "frustrated" in verdict and "1 of 3" in verdict
    # a large dense Gaussian matrix is declined from a sampled frustrated triangle, which the test re-checks
    rng = np.random.default_rng(2)
    K = symmetric(300, rng, 1.0, positive=False)
    verdict = SPECS["unfrustrated"].can_run(CanonicalProblem(K, np.zeros(300)))
    i, j, k = map(int, verdict.split("(")[1].split(")")[0].split(","))
    assert K[i, j] * K[j, k] * K[k, i] < 0
    with pytest.raises(SolverUnsuitableError, match="frustrated"):
        SPECS["unfrustrated"].run(CanonicalProblem(K, np.zeros(300)), SolveContext(rng=rng))


# ---------------------------------------------------------------- tree DP
def random_tree(n: int, rng: np.random.Generator) -> nx.Graph:
    return nx.Graph([(i, int(rng.integers(0, i))) for i in range(1, n)])


def series_parallel(steps: int, rng: np.random.Generator) -> nx.Graph:
    """Random series (subdivide an edge) and parallel (add a 2-path beside an edge) compositions."""
    G = nx.Graph([(0, 1)])
    for _ in range(steps):
        u, v = list(G.edges())[int(rng.integers(G.number_of_edges()))]
        w = G.number_of_nodes()
        if rng.random() < 0.5:
            G.remove_edge(u, v)
        G.add_edges_from([(u, w), (w, v)])
    return G


def graph_cases() -> list[tuple[str, int]]:
    return [("tree", s) for s in range(4)] + [("grid3", s) for s in range(3)] + \
        [("grid4", s) for s in range(3)] + [("sp", s) for s in range(4)]


@pytest.mark.parametrize("kind,seed", graph_cases())
def test_treedp_equals_milp(kind, seed):
    rng = np.random.default_rng(200 + seed)
    G = {"tree": lambda: random_tree(int(rng.integers(20, 60)), rng),
         "grid3": lambda: nx.grid_2d_graph(3, int(rng.integers(6, 12))),
         "grid4": lambda: nx.grid_2d_graph(4, int(rng.integers(6, 10))),
         "sp": lambda: series_parallel(int(rng.integers(15, 35)), rng)}[kind]()
    K = from_graph(G, rng)
    b = rng.normal(size=len(K)) * 0.7
    problem, sol = solve("treedp", sp.csr_array(K) if seed % 2 else K, b, k0=-1.5)
    assert_optimal(problem, sol, milp_optimum(K, b, -1.5))  # outside check: scipy.optimize.milp
    assert sol.info["width"] <= {"tree": 1, "grid3": 3, "grid4": 4, "sp": 2}[kind] + 1


@pytest.mark.parametrize("seed", range(15))
def test_treedp_equals_brute_force_on_small_dense_graphs(seed):
    rng = np.random.default_rng(300 + seed)
    n = int(rng.integers(1, 12))
    K = symmetric(n, rng, rng.uniform(0.1, 0.9), positive=False)
    b = rng.normal(size=n)
    problem, sol = solve("treedp", K, b, k0=0.5)
    assert_optimal(problem, sol, brute_force(K, b, 0.5))


def test_treedp_declines_wide_graphs_with_a_reason():
    rng = np.random.default_rng(1)
    problem = CanonicalProblem(from_graph(nx.complete_graph(30), rng), np.zeros(30))
    verdict = SPECS["treedp"].can_run(problem)
    assert isinstance(verdict, str) and ("> 20" in verdict or "above the limit of 20" in verdict)
    with pytest.raises(SolverUnsuitableError, match="max_width"):
        SPECS["treedp"].run(problem, SolveContext(rng=rng))


def test_treedp_orders_a_ladder_narrowly():
    # a k×L grid has treewidth k (networkx's min-degree finds about 2k on long grids)
    K = from_graph(nx.grid_2d_graph(6, 200), np.random.default_rng(2))
    found = treedp.decompose(CanonicalProblem(sp.csr_array(K), np.zeros(len(K))), 20, treedp.Budget(5.0 * treedp.WORK_PER_SECOND))
    assert isinstance(found, treedp.Elimination) and 6 <= found.width <= 7


def test_treedp_out_of_time_is_not_exact():
    rng = np.random.default_rng(4)
    problem = CanonicalProblem(from_graph(nx.grid_2d_graph(4, 30), rng), rng.normal(size=120))
    sol = SPECS["treedp"].run(problem, SolveContext(rng=rng, time_limit=0.0))
    assert not sol.exact and "searching for an order" in sol.info["stopped"]
    assert SPECS["treedp"].can_run(problem) is True  # a cheap check: no order search
    treedp.decompose(problem, 20, treedp.Budget(5.0 * treedp.WORK_PER_SECOND))  # leaves the order cached
    sol = SPECS["treedp"].run(problem, SolveContext(rng=rng, time_limit=0.0))  # now the DP itself is cut short
    assert not sol.exact and "before the DP finished" in sol.info["stopped"]


def test_mincut_network_prices_every_state():
    # C(σ) = constant − 2·cut(σ) on the network, checked on all states of a small instance
    # (couplings kept small against the fields, so that no capacity is clipped at twice the flow bound)
    rng = np.random.default_rng(6)
    K = symmetric(6, rng, 0.7, positive=True) * 0.05
    b = np.r_[1.0, -1.0, rng.normal(size=4)]
    problem = CanonicalProblem(K, b, 0.4)
    net = mincut.build_network(problem)
    assert np.isclose(net.c_uv.sum() + net.c_vu.sum(), np.abs(K).sum() + np.abs(b).sum())
    for bits in itertools.product((-1, 1), repeat=6):
        side = np.r_[np.array(bits) > 0, True, False]
        cut = net.c_uv[side[net.u] & ~side[net.v]].sum() + net.c_vu[side[net.v] & ~side[net.u]].sum()
        assert problem.value(np.array(bits)) == pytest.approx(net.constant - 2 * cut, abs=1e-9)
