"""Choosing solvers for a problem: every spec's verdict with its reason, fit scores, and the ranking.

Core names no solver: each spec declares its capabilities, its ``check`` (True or a
reason) and its ``fit(profile, budget)`` score; "auto" ranks the runnable specs by
score.  The first is the primary; the others are fallbacks should it decline at run
time (an exact method whose search finds no way in); the best-scoring spec that can
start from a state (``Capabilities.warm_start``) and differs from the primary is the
improver.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from .canonical import CanonicalProblem
from .errors import SolverUnsuitableError
from .profile import Profile
from .registry import Registry, SolverSpec


@dataclass(frozen=True)
class Ranking:
    """The outcome of selection for one problem (or one part), with what is needed to explain it."""

    profile: Profile
    verdicts: dict[str, "bool | str"]
    scores: dict[str, float]
    ranked: tuple[SolverSpec, ...]        # runnable, best first
    improver: SolverSpec | None = None

    @property
    def primary(self) -> SolverSpec:
        return self.ranked[0]

    def explanation(self) -> dict[str, Any]:
        solvers = {name: ("would run" if v is True else f"would not: {v}") for name, v in self.verdicts.items()}
        return {"profile": self.profile.as_dict(), "solvers": solvers, "scores": self.scores,
                "choice": self.primary.name, "fallbacks": [s.name for s in self.ranked[1:]],
                "improver": self.improver.name if self.improver else None}


def rank(problem: CanonicalProblem, profile: Profile, registry: Registry, budget: float | None, *,
         only: tuple[str, ...] | None = None) -> Ranking:
    """Rank the runnable solvers for ``problem`` by fit (ties: alphabetical); ``only`` restricts the pool."""
    specs = registry.solvers()
    verdicts = {name: spec.can_run(problem) for name, spec in specs.items()}
    pool = [name for name, v in verdicts.items() if v is True and (only is None or name in only)]
    scores = {name: specs[name].score(profile, budget) for name in pool}
    ranked = sorted((name for name in pool if math.isfinite(scores[name])), key=lambda k: (-scores[k], k))
    if not ranked:
        reasons = "; ".join(f"{k}: {v}" for k, v in verdicts.items() if v is not True) or "none is registered"
        raise SolverUnsuitableError(f"no registered solver can run on this problem ({reasons})")
    chosen = tuple(specs[name] for name in ranked)
    improver = None
    if not chosen[0].capabilities.exact:
        warm = [s for s in chosen[1:] if s.capabilities.warm_start]
        improver = warm[0] if warm else None
    return Ranking(profile, verdicts, scores, chosen, improver)
