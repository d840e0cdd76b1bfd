"""Exact solution of mid-size sparse problems by mixed-integer programming (solver "milp").

Canonical sense: maximise ½σᵀKσ + bᵀσ + k₀.  The standard linearisation (one variable per
coupling, plugins/milp/formulation.py), strengthened by odd-cycle inequalities found by
shortest paths (plugins/milp/cycles.py; option ``cycles=False`` leaves them out), goes to
scipy.optimize.milp (HiGHS) with a zero gap tolerance.  The result is exact when HiGHS's dual bound, widened by a safety margin, lies within
the spacing of the objective's values (integer or short binary-fraction data); otherwise the
widened bound comes back as a certified bound (plugins/milp/highs.py).

"auto" picks it (fit 70: below the structural exact solvers, tree DP included, above every
heuristic) only where measured runs prove optimality within seconds on 2 shared cores; see :func:`fit`.
"""

from __future__ import annotations

import math
from typing import Any

from pydantic import Field

from spinward.core import Capabilities, CanonicalProblem, Solution, SolveContext, SolverSpec, hookimpl
from spinward.core.options import SolverOptions

#: fit score where a quick proof is expected (treedp 80 and the other exact solvers rank above)
FIT = 70.0
#: the check declines cycle ranks beyond this: five times the measured reach, where a proof would take hours
MAX_CYCLE_RANK = 600
#: cycle rank (couplings − spins + components; fields add a ghost spin joined to every spin) up to
#: which "auto" picks milp: ±1-like weights, and continuous ones (kurtosis ≥ 2, e.g. Gaussian)
FIT_CYCLE_RANK = 110
FIT_CYCLE_RANK_CONTINUOUS = 160
#: excess kurtosis of the non-zero couplings above which weights count as continuous (±1: −2, uniform: −1.2)
CONTINUOUS_KURTOSIS = -1.5
#: a time limit must leave at least this multiple of the predicted proof time, or "auto" prefers a heuristic
BUDGET_FACTOR = 2.0


class MilpOptions(SolverOptions):
    """Options of the mixed-integer solver."""

    cycles: bool = Field(True, description="add odd-cycle inequalities (cutting planes) before branch and bound")


def run(problem: CanonicalProblem, ctx: SolveContext) -> Solution:
    from .highs import solve

    return solve(problem, ctx)


def check(problem: CanonicalProblem) -> bool | str:
    """Explicit problems of cycle rank at most ``MAX_CYCLE_RANK`` (see :func:`cycle_rank`).

    The rank comes from the (cached) profile: counting components of a dense K anew would
    cost a sparse copy of it (0.2 s at n = 2000, gigabytes at n = 8000)."""
    if problem.kind == "operator":
        return "it needs explicit couplings, not a LinearOperator"
    from spinward.core.profile import profile_of

    rank = cycle_rank(profile_of(problem))
    if rank > MAX_CYCLE_RANK:
        return (f"its coupling graph has {rank} independent cycles, beyond the {MAX_CYCLE_RANK} where a proof "
                f"by branch and bound is in reach (it proves up to about {FIT_CYCLE_RANK} in seconds)")
    return True


def _profile(problem: CanonicalProblem) -> Any:
    from spinward.core.profile import profile_of

    return profile_of(problem)


def cycle_rank(profile: Any) -> int:
    """Independent cycles of the coupling graph (with a ghost spin joined to every spin when there are fields)."""
    edges = profile.couplings + (profile.n if profile.has_fields else 0)
    nodes = profile.n + (1 if profile.has_fields else 0)
    components = profile.components or 1  # not counted (a short limit): 1 gives the smallest possible rank
    return int(edges - nodes + (1 if profile.has_fields else max(components, 1)))


def predicted_seconds(rank: int, continuous: bool) -> float:
    """Median proof time on 2 shared cores, fitted to the measurements quoted in :func:`fit`."""
    return 0.03 * math.exp(rank / 35) if continuous else 0.05 * math.exp(rank / 30)


def is_continuous(profile: Any) -> bool:
    kurtosis = getattr(profile, "excess_kurtosis", math.nan)
    return bool(kurtosis == kurtosis and kurtosis > CONTINUOUS_KURTOSIS)


def fit(profile: Any, budget: float | None = None) -> float:
    """``FIT`` where measured proofs take seconds, else 0; 0.5 when a time limit is too short for the proof.

    Measured (examples/benchmarks/milp.py, 2 shared cores under load 3–8, 3 instances per row):
    random 3-regular graphs prove in a median 1.4 s at n = 200 (cycle rank 101, ±1 weights) and
    12 s at n = 300 (rank 151); with Gaussian weights 0.4 s at n = 200 and 1.4 s at n = 300;
    4-regular ±1 at n = 100 (rank 101) 1.5 s (worst 33 s); 5-regular ±1 at n = 70 (rank 106)
    0.5 s.  Hence rank ≤ 110, or ≤ 160 for continuous weights (ties are rare, branching prunes).
    """
    if not hasattr(profile, "couplings"):
        return 0.0
    continuous = is_continuous(profile)
    rank = cycle_rank(profile)
    if rank > (FIT_CYCLE_RANK_CONTINUOUS if continuous else FIT_CYCLE_RANK):
        return 0.0
    if budget is not None and BUDGET_FACTOR * predicted_seconds(rank, continuous) > budget:
        return 0.5  # it would be stopped before its proof: a heuristic does better in that time
    return FIT


SPEC = SolverSpec(
    name="milp",
    run=run,
    check=check,
    fit=fit,
    capabilities=Capabilities(exact=True, fields=True, dense=True, sparse=True, operator=False, stochastic=False),
    summary="mixed-integer program of the standard linearisation, solved by HiGHS (scipy.optimize.milp)",
    options=MilpOptions,
    cost=lambda problem: min(predicted_seconds(cycle_rank(_profile(problem)), False), 600.0),
)


@hookimpl
def spinward_solvers() -> list[SolverSpec]:
    return [SPEC]
