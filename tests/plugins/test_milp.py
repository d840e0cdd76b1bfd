"""The "milp" solver: exact against brute force and tree DP, a certified bound when stopped, "auto" on mid-size sparse graphs.

References: plain brute force (tests/references.py), the tree DP solver (an independent exact method),
and scipy.optimize.milp on the MaxCut formulation of tests/references.py.
"""

from __future__ import annotations

import itertools
import threading
import time

import networkx as nx
import numpy as np
import pytest
import scipy.sparse as sp

import spinward
from spinward.cli import main
from spinward.core import CanonicalProblem, SolveContext
from spinward.core.profile import profile_of
from spinward.plugins.milp import SPEC, cycle_rank, fit
from spinward.plugins.milp.cycles import CycleSeparator
from spinward.plugins.milp.formulation import build_program
from tests.references import brute_max, milp_maxcut, random_instance


def regular_maxcut(n: int, seed: int, weights: str = "pm", degree: int = 3) -> nx.Graph:
    g = nx.random_regular_graph(degree, n, seed=seed)
    rng = np.random.default_rng(seed)
    for u, v in g.edges:
        g[u][v]["weight"] = float(rng.choice([-1.0, 1.0])) if weights == "pm" else float(rng.standard_normal())
    return g


def run(problem: CanonicalProblem, **options):
    ctx = SolveContext(rng=np.random.default_rng(0), options=options)
    return SPEC.run(problem, ctx), ctx


@pytest.mark.parametrize("sparse", [False, True])
def test_matches_brute_force_on_random_integer_problems(sparse):
    rng = np.random.default_rng(11 + sparse)
    for _ in range(15):
        n = int(rng.integers(2, 13))
        K = np.triu(rng.integers(-4, 5, size=(n, n)) * (rng.random((n, n)) < 0.5), 1).astype(float)
        K = K + K.T
        b = rng.integers(-3, 4, size=n).astype(float) * (rng.random() < 0.6)
        problem = CanonicalProblem(sp.csr_array(K) if sparse else K, b, 0.5)
        sol, _ = run(problem)
        assert problem.value(sol.sigma) == pytest.approx(brute_max(K, b, 0.5))  # reference: brute force
        assert sol.exact  # integer data: the widened dual bound proves it


def test_continuous_data_gets_a_certified_bound_within_the_margin():
    rng = np.random.default_rng(4)
    for _ in range(6):
        K, b, k0 = random_instance(rng, int(rng.integers(4, 12)))
        problem = CanonicalProblem(K, b, k0)
        sol, _ = run(problem)
        optimum = brute_max(K, b, k0)  # reference: brute force
        assert problem.value(sol.sigma) == pytest.approx(optimum, abs=1e-9)
        if not sol.exact:  # Gaussian data has no resolution, so the margin cannot prove it
            margin = sol.info["margin"]
            assert optimum <= sol.bound <= optimum + margin + 1e-6


def test_matches_tree_dp_where_both_apply():
    g = regular_maxcut(60, seed=3)
    form = spinward.MaxCut(g)
    assert spinward.default_registry().get("treedp").can_run(form.canonical()) is True
    a = spinward.solve(form, method="milp", bound=False)
    b = spinward.solve(form, method="treedp", bound=False)
    assert a.exact and b.exact and a.objective == b.objective  # two independent exact methods
    edges = [(u, v, d["weight"]) for u, v, d in g.edges(data=True)]
    assert a.objective == pytest.approx(milp_maxcut(60, edges))  # reference: HiGHS on the XOR formulation


def test_grid_with_fields_matches_tree_dp():
    rng = np.random.default_rng(5)
    g = nx.grid_2d_graph(5, 14)
    J = {(u, v): float(rng.normal()) for u, v in g.edges}
    h = {u: float(rng.normal()) for u in g.nodes}
    form = spinward.Ising(J, h)
    a = spinward.solve(form, method="milp", bound=False)
    b = spinward.solve(form, method="treedp", bound=False)
    assert a.objective == pytest.approx(b.objective, abs=1e-9)


def test_done_when_a_3_regular_pm1_graph_with_150_nodes_is_proved_by_auto_from_the_cli(tmp_path, capsys):
    g = regular_maxcut(150, seed=1)
    path = tmp_path / "g.txt"
    path.write_text("".join(f"{u} {v} {d['weight']:g}\n" for u, v, d in g.edges(data=True)))
    assert main(["solve", str(path), "--seed", "1", "-o", str(tmp_path / "r.json")]) == 0
    r = spinward.Result.from_json((tmp_path / "r.json").read_text())
    assert r.exact and r.solver == "milp" and r.status == "optimal"
    assert "exact: True" in capsys.readouterr().out


@pytest.mark.slow
def test_the_150_node_optimum_matches_plain_highs():
    """The plain XOR formulation (no cuts) takes 10–30 s here, hence slow."""
    g = regular_maxcut(150, seed=1)
    r = spinward.solve(g, seed=1)
    edges = [(u, v, d["weight"]) for u, v, d in g.edges(data=True)]
    assert r.exact and r.objective == pytest.approx(milp_maxcut(150, edges))  # reference: HiGHS, zero gap


def test_cycle_cuts_hold_for_every_cut_of_the_graph():
    """Every odd-cycle inequality found is valid: checked on all 2ⁿ states of a small frustrated graph."""
    g = regular_maxcut(12, seed=2)
    problem = spinward.MaxCut(g).canonical()
    program = build_program(problem)
    u, v, columns = program.edges
    separator = CycleSeparator(program.nodes, u, v, columns)
    lp_point = np.full(len(program.c), 0.5)
    lp_point[columns] = np.where(problem.K[u, v] < 0, 1.0, 0.0)  # the plain LP's optimum: every edge satisfied
    cuts = separator.cuts(lp_point, 1000)
    assert cuts
    for sigma in itertools.product((1, -1), repeat=12):
        s = np.array(sigma)
        z = (s[u] != s[v]).astype(float)
        point = np.zeros(len(program.c))
        point[columns] = z
        for cut in cuts:
            assert point[list(cut.odd)].sum() - point[list(cut.even)].sum() <= cut.rhs + 1e-12


def test_without_cycle_cuts_the_answer_is_the_same():
    g = regular_maxcut(40, seed=6, weights="gauss")
    form = spinward.MaxCut(g)
    a = spinward.solve(form, method="milp", bound=False)
    b = spinward.solve(form, method="milp", bound=False, cycles=False)
    assert a.objective == pytest.approx(b.objective, abs=1e-9)
    assert a.info["cuts"] > 0 and b.info["cuts"] == 0


def test_time_limit_returns_a_certified_bound_and_a_good_state():
    g = regular_maxcut(700, seed=1)
    t0 = time.perf_counter()
    r = spinward.solve(spinward.MaxCut(g), method="milp", time_limit=1.5, bound=False)
    assert time.perf_counter() - t0 < 1.5 + 1.0  # only the limit, with slack for a loaded machine
    assert not r.exact and r.status == "time-limit"
    if r.bound is not None:
        assert r.bound_kind == "certified" and r.bound >= r.objective


def test_ctrl_c_returns_promptly_with_the_greedy_state():
    problem = spinward.MaxCut(regular_maxcut(700, seed=2)).canonical()
    ctx = SolveContext(rng=np.random.default_rng(0))
    threading.Timer(0.5, lambda: setattr(ctx, "interrupted", True)).start()
    t0 = time.perf_counter()
    sol = SPEC.run(problem, ctx)
    assert time.perf_counter() - t0 < 0.5 + 1.0
    assert not sol.exact and len(sol.sigma) == problem.n and ctx.best_sigma is not None


def test_fit_prefers_milp_only_where_proofs_were_measured_quick():
    def prof(n, weights="pm", degree=3):
        return profile_of(spinward.MaxCut(regular_maxcut(n, seed=1, weights=weights, degree=degree)).canonical())

    assert cycle_rank(prof(150)) == 76
    assert fit(prof(150)) == 70.0 and fit(prof(200)) == 70.0
    assert fit(prof(400)) == 0.0 and fit(prof(300, "gauss")) == 70.0
    assert fit(profile_of(spinward.QUBO(np.ones((40, 40))).canonical())) == 0.0  # dense: never
    assert fit(prof(150), budget=0.05) == 0.5  # a limit too short for the proof: leave it to a heuristic
    from spinward.core.dispatch import rank

    problem = spinward.MaxCut(regular_maxcut(150, seed=4)).canonical()
    ranked = [s.name for s in rank(problem, profile_of(problem), spinward.default_registry(), None).ranked]
    assert [name for name in ranked if name != "treedp"][0] == "milp"  # tree DP's cheap check passes, then it declines
