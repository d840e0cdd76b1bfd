"""The run path on inputs where one read of K is dear: skipped steps, remembered values, early checks.

References: brute force over all 2ⁿ states (common practice) for the values; numpy for the
counts of negative couplings.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

import spinward
from spinward.core import Registry, Solution, SolverSpec
from spinward.core.canonical import CanonicalProblem
from spinward.plugins.structure import mincut


def _spins_up_solver(problem, ctx):  # noqa: ANN001, ANN202 - a solver that must never be run here
    raise AssertionError("the runner should have skipped this solver")


def test_a_solver_whose_first_state_cannot_fit_is_skipped_with_a_warning() -> None:
    reg = Registry()
    reg.add_solver(SolverSpec(name="dear", run=_spins_up_solver, first_reads=1e12))
    J = np.triu(np.random.default_rng(0).normal(size=(30, 30)), 1)
    r = spinward.solve(spinward.Ising(J), method="dear", registry=reg, time_limit=0.5, seed=0)
    assert r.status == "time-limit"
    assert any("left no time for any solver" in w and "first state needs" in w for w in r.warnings)
    step = next(s for s in r.info["plan"] if s["step"] == "primary")
    assert step["outcome"] == "skipped"
    # the state is all spins up, and its objective is the Ising energy of that state (numpy)
    assert r.objective == pytest.approx(-float(J.sum()))


def test_without_a_time_limit_the_reads_do_not_matter() -> None:
    reg = Registry()
    reg.add_solver(SolverSpec(name="dear", first_reads=1e12,
                              run=lambda p, ctx: Solution(sigma=np.ones(p.n, dtype=np.int8))))
    J = np.triu(np.random.default_rng(1).normal(size=(12, 12)), 1)
    r = spinward.solve(spinward.Ising(J), method="dear", registry=reg, seed=0)
    assert r.status == "feasible" and not any("left no time" in w for w in r.warnings)


def test_remembered_values_equal_fresh_ones_brute_force() -> None:
    """A dense K above the memo size: every ±1 state's value, asked twice, equals the brute-force sum."""
    from spinward.core import canonical

    rng = np.random.default_rng(2)
    n = 8
    K = rng.normal(size=(n, n))
    K = np.triu(K, 1) + np.triu(K, 1).T
    b = rng.normal(size=n)
    p = CanonicalProblem(K, b, 0.25)
    old = canonical.DEAR_READ_ENTRIES
    canonical.DEAR_READ_ENTRIES = 1  # every dense K counts as big
    try:
        for bits in itertools.product((-1, 1), repeat=n):
            s = np.array(bits, dtype=np.int8)
            direct = 0.5 * sum(K[i, j] * s[i] * s[j] for i in range(n) for j in range(n)) + b @ s + 0.25
            assert p.value(s) == pytest.approx(direct, abs=1e-12)
            assert p.value(s.astype(np.float64)) == pytest.approx(direct, abs=1e-12)
        half = np.full(n, 0.5)  # not a ±1 state: never taken from the memo
        assert p.value(half) == pytest.approx(0.5 * half @ K @ half + b @ half + 0.25)
        assert len(p.meta["_values"]) <= canonical.VALUE_MEMO_SIZE
    finally:
        canonical.DEAR_READ_ENTRIES = old


def test_values_from_fields_match_a_fresh_read() -> None:
    rng = np.random.default_rng(3)
    K = rng.normal(size=(40, 40))
    K = np.triu(K, 1) + np.triu(K, 1).T
    p = CanonicalProblem(K, rng.normal(size=40), -1.5)
    s = np.where(rng.random(40) < 0.5, -1, 1).astype(np.int8)
    assert p.value_from_fields(s, p.local_fields(s)) == pytest.approx(p.value(s), rel=1e-12)


@pytest.mark.parametrize("n", [8, 1500])
def test_min_cut_check_counts_negative_couplings_as_numpy_does(n: int) -> None:
    rng = np.random.default_rng(4)
    K = np.abs(rng.normal(size=(n, n)))
    K[0, 1] = K[1, 0] = -0.5
    K = np.triu(K, 1) + np.triu(K, 1).T
    p = CanonicalProblem(K, np.zeros(n))
    full = mincut.negative_couplings(p)
    assert full == (int(np.count_nonzero(np.triu(K, 1) < 0)), int(np.count_nonzero(np.triu(K, 1))), True)
    early = mincut.negative_couplings(p, stop_early=True)
    assert 1 <= early[0] <= full[0]
    verdict = mincut.check(p)
    assert isinstance(verdict, str) and "not all ferromagnetic" in verdict
    assert mincut.check(CanonicalProblem(np.abs(K), np.zeros(n))) is True


def test_auto_gives_a_patience_to_a_primary_followed_by_an_improver() -> None:
    """The runner passes PRIMARY_PATIENCE to a primary that declares the option when an improver follows."""
    from spinward.core import Capabilities
    from spinward.core.plan import PRIMARY_PATIENCE

    seen: dict[str, object] = {}

    def primary(problem, ctx):  # noqa: ANN001, ANN202
        seen["patience"] = ctx.option("patience", None)
        return Solution(sigma=np.ones(problem.n, dtype=np.int8))

    def improver(problem, ctx):  # noqa: ANN001, ANN202
        seen["improver_start"] = ctx.option("initial", None) is not None
        return Solution(sigma=np.asarray(ctx.option("initial", None), dtype=np.int8))

    reg = Registry()
    reg.add_solver(SolverSpec(name="first", run=primary, options={"patience": None}, fit=lambda p: 2.0))
    reg.add_solver(SolverSpec(name="second", run=improver, fit=lambda p: 1.0, options={"initial": None},
                              capabilities=Capabilities(warm_start=True)))
    J = np.triu(np.random.default_rng(5).normal(size=(30, 30)), 1)
    spinward.solve(spinward.Ising(J), registry=reg, time_limit=2.0, seed=0, bound=False)
    assert seen == {"patience": PRIMARY_PATIENCE, "improver_start": True}


def test_annealing_with_patience_ends_on_its_own_before_the_limit() -> None:
    """A 10-spin problem settles within a few schedules: with patience the run ends by itself
    (status feasible) long before the 20 s limit; the state equals the brute-force optimum."""
    rng = np.random.default_rng(6)
    J = np.triu(rng.normal(size=(10, 10)), 1)
    r = spinward.solve(spinward.Ising(J), method="anneal", time_limit=20.0, seed=0, patience=3, bound=False)
    assert r.status == "feasible" and r.wall_time < 20.0
    best = min(-(np.array(s) @ J @ np.array(s)) for s in itertools.product((-1, 1), repeat=10))
    assert r.objective == pytest.approx(best)


def test_iamp_takes_small_field_problems_through_the_ghost_spin() -> None:
    """Below 50 spins the fields' law says nothing and its Parisi solve would cost seconds: a ghost spin."""
    rng = np.random.default_rng(7)
    J = np.triu(rng.normal(size=(12, 12)), 1)
    r = spinward.solve(spinward.Ising(J, rng.normal(size=12)), method="iamp", seed=0, bound=False)
    assert r.info["fields"]["mode"] == "ghost"
