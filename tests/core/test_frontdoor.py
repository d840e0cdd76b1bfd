"""The front door's own duties: statuses, interrupts, seeds, options, consistency."""

from __future__ import annotations

import os
import signal

import networkx as nx
import pytest

import spinward
from spinward.core import Registry, Solution, SolverSpec


def _interrupting_solver(problem, ctx):
    from spinward.plugins.common.flips import local_search, random_spins

    sigma, value = local_search(problem, random_spins(problem.n, ctx.rng))
    ctx.offer(sigma, value)
    os.kill(os.getpid(), signal.SIGINT)  # as if the user pressed Ctrl-C now
    while not ctx.should_stop():
        pass
    return Solution(sigma=sigma)


def test_sigint_in_api_returns_best_state_flagged():
    reg = Registry(autoload=False)
    reg.add_solver(SolverSpec(name="interruptible", run=_interrupting_solver))
    g = nx.random_regular_graph(3, 50, seed=0)
    r = spinward.solve(g, method="interruptible", registry=reg, seed=1)
    assert r.status == "interrupted" and not r.exact
    assert r.objective == nx.cut_size(g, [u for u, s in r.assignment.items() if s == 0])


def test_seed_recorded_and_reproducible():
    g = nx.gnp_random_graph(120, 0.1, seed=5)
    r = spinward.solve(g, method="local")
    assert isinstance(r.seed, int)
    again = spinward.solve(g, method="local", seed=r.seed)
    assert again.assignment == r.assignment


@pytest.mark.parametrize("bad", [-1, 0, float("nan"), "10", True])
def test_bad_time_limit(bad):
    with pytest.raises(spinward.InputError, match="time_limit"):
        spinward.solve(nx.path_graph(3), time_limit=bad)


def test_bad_seed():
    with pytest.raises(spinward.InputError, match="seed"):
        spinward.solve(nx.path_graph(3), seed=-4)


def test_not_a_problem():
    with pytest.raises(spinward.InputError, match="cannot solve a str"):
        spinward.solve("graph.txt")


def test_auto_picks_exact_when_small_and_heuristic_when_large():
    assert spinward.solve(nx.cycle_graph(12)).solver == "enumerate"
    big = spinward.solve(nx.random_regular_graph(3, 500, seed=1), seed=0)
    assert not big.exact and big.solver != "enumerate"
