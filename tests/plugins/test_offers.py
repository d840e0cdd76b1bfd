"""Improvements reach the context as they happen: traces of tabu, annealing and ball kicks.

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀.  Every offered value is checked against a
plain recomputation (tests/references.own_value), and offering must not change any answer.
"""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest
import scipy.sparse as sp

from spinward.core import CanonicalProblem, SolveContext
from spinward.plugins import annealing, tabu
from spinward.plugins.common import offers
from tests.references import own_value


class Recording(SolveContext):
    """A context that keeps every state offered to it (by the solver or a child), with the value claimed."""

    def __init__(self, *args, **kwargs) -> None:
        super().__init__(*args, **kwargs)
        self.offered: list[tuple[np.ndarray, float]] = []

    def offer(self, sigma, value):
        self.offered.append((np.array(sigma, dtype=np.float64), float(value)))
        return super().offer(sigma, value)


def regular_glass(n: int = 400, d: int = 3, seed: int = 1) -> tuple[np.ndarray, CanonicalProblem]:
    g = nx.random_regular_graph(d, n, seed=seed)
    rng = np.random.default_rng(seed)
    K = np.zeros((n, n))
    for u, v in g.edges:
        K[u, v] = K[v, u] = rng.standard_normal()
    return K, CanonicalProblem(sp.csr_array(K), np.zeros(n), 0.0)


def sk_problem(n: int = 120, seed: int = 2) -> tuple[np.ndarray, CanonicalProblem]:
    rng = np.random.default_rng(seed)
    K = np.triu(rng.standard_normal((n, n)), 1)
    K = K + K.T
    return K, CanonicalProblem(K, np.zeros(n), 0.0)


def run(spec, problem, seed=3, **options) -> tuple[object, Recording]:
    ctx = Recording(rng=np.random.default_rng(seed), options=options)
    return spec.run(problem, ctx), ctx


@pytest.fixture
def every_chunk(monkeypatch):
    """No wait between offers: every chunk that raised the running best offers it (small problems run
    their whole schedule within the few milliseconds an offer would otherwise wait)."""
    monkeypatch.setattr(offers, "COST_RATIO", 0.0)


@pytest.mark.parametrize("case", ["sparse ball-anneal start", "dense anneal start"])
def test_default_tabu_run_offers_each_improvement_with_exact_values(case, every_chunk):
    K, problem = regular_glass() if case.startswith("sparse") else sk_problem()
    sol, ctx = run(tabu.SPEC, problem)
    values = [v for _, v in ctx.offered]
    for sigma, value in ctx.offered:  # every offer states the exact value of its state
        assert value == pytest.approx(own_value(K, problem.b, 0.0, sigma), abs=1e-9)
    times, kept = zip(*ctx.trace)
    # before this change the default run offered once a second: one point at the end of a short run
    assert len(ctx.trace) >= 4, ctx.trace
    assert list(times) == sorted(times) and list(kept) == sorted(kept) and len(set(kept)) == len(kept)
    assert kept[-1] == pytest.approx(own_value(K, problem.b, 0.0, sol.sigma), abs=1e-9)
    assert max(values) == kept[-1]


def test_tabu_trace_includes_its_annealed_start(every_chunk):
    """The anneal that seeds the walk runs in a child context; its improvements reach the caller's trace."""
    K, problem = sk_problem()
    _, ctx = run(tabu.SPEC, problem, start="anneal", moves=5000)
    walk_only = run(tabu.SPEC, problem, start="random", moves=5000)[1]
    assert len(ctx.trace) >= 3
    # the annealed start's first offers are far below the optimum: a hot schedule's early states
    assert ctx.trace[0][1] < 0.5 * ctx.trace[-1][1]
    assert walk_only.trace  # the plain walk offers too


@pytest.mark.parametrize("spec, options", [(tabu.SPEC, {}), (tabu.SPEC, {"start": "anneal"}),
                                           (annealing.SPEC, {"sweeps": 3000})])
def test_offering_does_not_change_the_answer(monkeypatch, spec, options):
    """Offers read the clock but never change the walk: the same seed gives the same state without them."""
    _, problem = regular_glass(n=300, seed=4)
    with_offers, _ = run(spec, problem, seed=9, **options)
    monkeypatch.setattr(offers.OfferPace, "__call__", lambda self, sigma, running: None)
    without, ctx = run(spec, problem, seed=9, **options)
    assert np.array_equal(with_offers.sigma, without.sigma)


def test_pace_skips_states_below_the_incumbent_and_waits_after_a_costly_offer(monkeypatch):
    K, problem = sk_problem(n=30)
    ctx = Recording(rng=np.random.default_rng(0))
    ctx.offer(np.ones(30), 1e6)  # an incumbent far above anything below
    pace = offers.OfferPace(problem, ctx)
    pace(np.ones(30), 10.0)
    assert len(ctx.offered) == 1  # 10 is far below the incumbent: no evaluation, no offer
    monkeypatch.setattr(offers, "SECONDS_PER_ENTRY", 1.0)  # the size estimate (930 s) is above the measured 1 s
    ctx2 = Recording(rng=np.random.default_rng(0))
    pace = offers.OfferPace(problem, ctx2)
    clock = iter([0.0, 1.0, 1.5, 30.0, 30.5])  # first offer costs 1 s: the next waits 20 s
    monkeypatch.setattr(offers, "time", type("FakeClock", (), {"perf_counter": staticmethod(lambda: next(clock))}))
    pace(np.ones(30), 1.0)
    pace(-np.ones(30), 2.0)  # at t = 1.5, before 1 + 20 × 1: skipped
    pace(-np.ones(30), 3.0)  # at t = 30: offered
    assert [v for _, v in ctx2.offered] == [own_value(K, problem.b, 0.0, np.ones(30))] * 2
