"""Multi-start greedy single-flip local search (a fast, general heuristic).

Canonical sense: maximise ½σᵀKσ + bᵀσ + k₀.  Each start is a uniform random
state climbed to a 1-flip local optimum; starts repeat until ``restarts`` are
done or the time limit passes, and the best state is returned.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from pydantic import Field

from spinward.core.options import SolverOptions
from spinward.core import Capabilities, CanonicalProblem, Solution, SolveContext, SolverSpec, hookimpl

from .common.flips import local_search, random_spins

DEFAULT_RESTARTS = 16


class LocalOptions(SolverOptions):
    """Options of multi-start local search."""

    restarts: int | None = Field(None, ge=1, le=10**9, description="random starts (default 16; with a time limit, until "
                                                          "the clock stops)")
    initial: Any = Field(None, description="canonical ±1 state for the first climb")


def run(problem: CanonicalProblem, ctx: SolveContext) -> Solution:
    """Random restarts until ``restarts`` (default 16; unlimited with a time limit) or the clock stops.

    With ``initial`` (a canonical ±1 state) the first climb starts there.
    """
    restarts = ctx.option("restarts", None)
    if restarts is None:
        restarts = max(DEFAULT_RESTARTS, ctx.solutions) if ctx.time_limit is None else 10**9
    done = 0
    initial = ctx.option("initial", None)
    while done < max(int(restarts), 1):
        start = random_spins(problem.n, ctx.rng) if initial is None or done else np.asarray(initial, dtype=np.int8)
        sigma, value = local_search(problem, start, should_stop=ctx.should_stop)
        ctx.offer(sigma, value)
        done += 1
        if ctx.should_stop():
            break
    assert ctx.best_sigma is not None
    clock = ctx.time_limit is not None and done < restarts  # the clock, not the count of starts, ended it
    return Solution(sigma=ctx.best_sigma, status="time-limit" if clock else None, info={"restarts": done})


def fit(problem: CanonicalProblem) -> float:
    """A modest, always-available fallback."""
    return 1.0


def cost(problem: CanonicalProblem) -> float:
    """Predicted seconds of the default 16 climbs (about ten passes over K each)."""
    from spinward.core.plan import stored_entries

    return DEFAULT_RESTARTS * 10 * 3e-9 * (stored_entries(problem) + problem.n)

SPEC = SolverSpec(
    name="local",
    run=run,
    capabilities=Capabilities(operator=False, warm_start=True, several=True),
    summary="multi-start greedy single-flip local search",
    options=LocalOptions,
    fit=fit,
    cost=cost,
)


@hookimpl
def spinward_solvers() -> list[SolverSpec]:
    return [SPEC]
