"""A plan: per connected component a primary method (with fallbacks), an optional improver, and bounds,
every step with its share of one deadline set at the call.

With a time limit L (seconds from the call): the profile may use ``PROFILE_SHARE``·L; the
bounds get ``bound_share``·L; the mapping back keeps a reserve predicted from the size;
the rest goes to the parts in proportion to their work (spins + couplings), handed out
part by part so that time a part leaves unused passes to the next ones.  Inside a part the
improver gets ``IMPROVER_SHARE`` of the part's time when there is one (none: measured, a primary
that fills its time beats any split, so the improver works in the time the primary leaves, and
after the primary's fixed work when there is no time limit).
Without a time limit every step does fixed work (the solvers' defaults), and the bounds
get an allowance of ``FREE_BOUND_SHARE`` of the primary's predicted cost, decided from the
problem's size alone, so that the same seed gives the same result.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .canonical import CanonicalProblem
from .dispatch import Ranking
from .registry import Bound, SolverSpec

#: the most parts a problem is split into; more components are solved together in the last part
MAX_PARTS = 16
#: components this small are not parts of their own: they are solved together (one profile, one plan)
SMALL_PART = 26
#: a component holding this share of the spins is not split off: the whole problem is one part
WHOLE_SHARE = 0.9
#: share of the time limit the profile may take
PROFILE_SHARE = 0.05
#: share of a part's time the improver gets (when the primary cannot itself start from a state)
IMPROVER_SHARE = 0.0   # measured in examples/benchmarks/portfolio.py: 10% cost 0.05–1% on every family
#: without a time limit, bounds may cost this share of the primary's predicted time (but at least the floor)
FREE_BOUND_SHARE = 0.15
FREE_BOUND_FLOOR = 0.1
#: a step given less than this is skipped (and the result says so)
MIN_STEP_SECONDS = 0.005
#: a heuristic primary always gets at least this long (inside the contract's slack): some state beats none
LAST_RESORT_SECONDS = 0.03
#: mapping back: seconds per stored coupling entry and per spin (measured on our 2-core machine, generous)
RESERVE_PER_ENTRY = 4e-9
RESERVE_PER_SPIN = 6e-7
RESERVE_FLOOR = 0.01
CLOSE_READS = 2.0  # reads of K a solver makes after the clock stops it, kept out of its budget
#: a primary that offers a ``patience`` option gets this value when an improver follows: after so many
#: runs in a row without a better state it ends, and the improver works from its state in the time left
PRIMARY_PATIENCE = 8
RESERVE_READS = 2.0


@dataclass
class Step:
    """One step of a plan and, once run, what it did (times in seconds; values in the caller's units)."""

    kind: str                       # "profile", "primary", "improve", "bound", "repair"
    name: str
    part: int | None = None
    budget: float | None = None     # seconds allowed; None: fixed work
    seconds: float = 0.0
    outcome: str = "planned"        # ended, stopped (by the clock), interrupted, declined, skipped, failed
    note: str = ""
    value: float | None = None

    def as_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"step": self.kind, "name": self.name, "outcome": self.outcome,
                               "seconds": round(self.seconds, 6)}
        if self.part is not None:
            out["part"] = self.part
        if self.budget is not None:
            out["budget"] = round(self.budget, 6)
        if self.value is not None:
            out["value"] = self.value
        if self.note:
            out["note"] = self.note
        return out


@dataclass
class Part:
    """One part of the problem (a union of connected components) and what the plan does with it."""

    index: int
    idx: np.ndarray
    problem: CanonicalProblem
    candidates: list[SolverSpec]
    improver: SolverSpec | None
    ranking: Ranking | None = None
    options: dict[str, dict[str, Any]] = field(default_factory=dict)
    sigma: np.ndarray | None = None
    exact: bool = False
    bound: Bound | None = None
    solver: str | None = None
    info: dict[str, Any] = field(default_factory=dict)

    @property
    def weight(self) -> float:
        return float(self.problem.n + stored_entries(self.problem))


def stored_entries(problem: CanonicalProblem) -> int:
    """Coupling entries a pass over K reads: n² for dense, nnz for sparse, n² for an operator's matvec."""
    if problem.kind == "sparse":
        return int(problem.K.nnz)
    return problem.n * problem.n


def reserve_seconds(problem: CanonicalProblem, read_seconds: float | None = None) -> float:
    """Time kept for the mapping back: decoding, the caller's objective, the consistency check.

    Before the profile, from the stored entries at a conservative rate; once the profile has
    timed one read of a dense K (``read_seconds``), two such reads.
    """
    per_entry = RESERVE_PER_ENTRY * stored_entries(problem) if read_seconds is None else RESERVE_READS * read_seconds
    return RESERVE_FLOOR + per_entry + RESERVE_PER_SPIN * problem.n


def part_share(parts: list[Part], k: int, seconds: float) -> float:
    """Part k's share of ``seconds`` left for parts k, k+1, ... (in proportion to work)."""
    rest = sum(p.weight for p in parts[k:])
    return seconds * parts[k].weight / rest if rest > 0 else seconds


def improver_share(part: Part) -> float:
    if part.improver is None or not part.candidates or part.candidates[0].capabilities.exact:
        return 0.0
    return IMPROVER_SHARE


def free_bound_allowance(primary: SolverSpec | None, problem: CanonicalProblem) -> float:
    """Seconds of predicted cost the bounds may use without a time limit (from the size alone)."""
    predicted = primary.cost(problem) if primary is not None and primary.cost is not None else None
    if predicted is None or not math.isfinite(predicted):
        predicted = generic_cost(problem)
    return max(FREE_BOUND_SHARE * predicted, FREE_BOUND_FLOOR)


def generic_cost(problem: CanonicalProblem) -> float:
    """A size-based guess of a heuristic's default run: a thousand passes over the couplings."""
    return 1000 * 2e-9 * (stored_entries(problem) + problem.n)
