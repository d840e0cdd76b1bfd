"""Exact solvers for structured inputs: ferromagnets (min-cut), frustration-free couplings (unfrustrated)
and low treewidth (tree DP).

Canonical sense everywhere: maximise ½σᵀKσ + bᵀσ + k₀.  Each solver's ``check``
answers True or a reason in plain words, and ``exact`` is set on a result only
when the solver proved it optimal.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from pydantic import Field

from spinward.core import Capabilities, CanonicalProblem, Solution, SolveContext, SolverSpec, hookimpl
from spinward.core.options import SolverOptions


def _run_mincut(problem: CanonicalProblem, ctx: SolveContext) -> Solution:
    from . import mincut

    return mincut.solve_ferromagnet(problem, ctx)


def _run_unfrustrated(problem: CanonicalProblem, ctx: SolveContext) -> Solution:
    from . import unfrustrated

    return unfrustrated.solve_frustration_free(problem, ctx)


def _run_treedp(problem: CanonicalProblem, ctx: SolveContext) -> Solution:
    from . import treedp

    return treedp.solve_low_width(problem, ctx)


def _check_mincut(problem: CanonicalProblem) -> bool | str:
    from . import mincut

    return mincut.check(problem)


def _check_unfrustrated(problem: CanonicalProblem) -> bool | str:
    from . import unfrustrated

    return unfrustrated.check(problem)


def _check_treedp(problem: CanonicalProblem) -> bool | str:
    from . import treedp

    return treedp.check(problem)


def _fit(score: float) -> Callable[[Any], float]:
    """A constant score: exact solvers outrank heuristics wherever their check passes."""

    def fit(_: Any) -> float:
        return score

    return fit


class CutOptions(SolverOptions):
    """Options of the minimum-cut solvers."""

    max_levels: int = Field(12, ge=1, le=64, description="refinement levels of the exact integer max-flow")


class TreeOptions(SolverOptions):
    """Options of tree dynamic programming."""

    max_width: int = Field(20, ge=1, le=30, description="widest bag allowed (the DP keeps 2^width states per bag)")
    order_time: float = Field(2.0, gt=0.0, le=3600.0, description="seconds to search for an elimination order "
                                                        "(without a time limit; with one, a share of it)")
    max_memory_mb: int = Field(1024, ge=1, le=10**7, description="memory for the arg-max tables kept to read the optimum back")


# No ``assumptions``: each condition is enforced by the solver's check, which declines with its reason.
_EXACT: dict[str, Any] = dict(exact=True, fields=True, dense=True, sparse=True, operator=False, stochastic=False)

SPECS = [
    SolverSpec(
        name="mincut", run=_run_mincut, check=_check_mincut, fit=_fit(100.0),
        capabilities=Capabilities(**_EXACT),
        summary="exact s–t minimum cut for ferromagnetic / submodular problems with any fields",
        options=CutOptions,
    ),
    SolverSpec(
        name="unfrustrated", run=_run_unfrustrated, check=_check_unfrustrated, fit=_fit(90.0),
        capabilities=Capabilities(**_EXACT),
        summary="exact for couplings with no frustrated cycle: spin flips make them ferromagnetic (min-cut with fields)",
        options=CutOptions,
    ),
    SolverSpec(
        name="treedp", run=_run_treedp, check=_check_treedp, fit=_fit(80.0),
        capabilities=Capabilities(**_EXACT),
        summary="exact dynamic programming over a tree decomposition of low width",
        options=TreeOptions,
    ),
]


@hookimpl
def spinward_solvers() -> list[SolverSpec]:
    return list(SPECS)
