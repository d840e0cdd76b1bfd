"""The "auto" method: split into components, choose per part, run the primary, improve, bound.

Per part: the best-fitting runnable solver runs first; with a time limit, the
best-fitting warm-start solver (``Capabilities.warm_start``) then improves its
state for the remaining time.  Bounds of independent parts add up.
"""

from __future__ import annotations

import math
import time
import warnings
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .canonical import CanonicalProblem
from .context import SolveContext, interrupt_guard
from .decompose import assemble, connected_components, subproblem
from .dispatch import Choice, choose, mean_part_warning
from .errors import OptionWarning
from .frontdoor import attach_bound, run_spec, with_defaults
from .profile import profile_of
from .registry import MEAN_FIELD_ASSUMPTION, Bound, Registry, Solution, SolverSpec

MAX_PARTS = 64          # more components than this: the small ones are solved together
MIN_PART_SECONDS = 0.05


@dataclass
class PartOutcome:
    idx: np.ndarray
    choice: Choice
    solution: Solution
    bound: Bound | None
    steps: list[dict[str, Any]]


@dataclass
class Outcome:
    """What "auto" did, for the result and its explanation."""

    spec: SolverSpec
    solution: Solution
    bound: Bound | None
    parts: list[PartOutcome] = field(default_factory=list)

    def info(self, explain: bool) -> dict[str, Any]:
        out: dict[str, Any] = dict(self.solution.info)
        out["portfolio"] = [{"spins": int(len(p.idx)), "steps": p.steps, "exact": bool(p.solution.exact)}
                            for p in self.parts]
        if explain:
            expl = [p.choice.explanation() for p in self.parts]
            out["explanation"] = expl[0] if len(expl) == 1 else {"parts": expl}
        prediction = self.parts[0].choice.prediction if len(self.parts) == 1 else None
        if prediction:
            out["prediction"] = prediction
        return out


def solve_auto(problem: CanonicalProblem, registry: Registry, ctx: SolveContext, options: dict[str, Any], *,
               bound: bool, bound_share: float) -> Outcome:
    """Run "auto" on the whole problem; see the module docstring."""
    with interrupt_guard(ctx):
        parts = _parts(problem)
        outcomes = []
        for k, idx in enumerate(parts):
            sub = problem if len(parts) == 1 else subproblem(problem, idx)
            share = len(idx) / problem.n
            outcomes.append(_solve_part(sub, idx, registry, ctx, options, share, bound, bound_share, k == 0,
                                        len(parts) == 1))
    if len(outcomes) == 1:
        only = outcomes[0]
        return Outcome(spec=only.choice.spec, solution=only.solution, bound=only.bound, parts=outcomes)
    return _combine(problem, outcomes)


def _parts(problem: CanonicalProblem) -> list[np.ndarray]:
    """Components, with the smallest merged into one part when there are very many."""
    if profile_of(problem).components <= 1:
        return [np.arange(problem.n)]
    comps = sorted(connected_components(problem), key=len, reverse=True)
    if len(comps) > MAX_PARTS:
        rest = np.sort(np.concatenate(comps[MAX_PARTS - 1:]))
        comps = comps[: MAX_PARTS - 1] + [rest]
    return sorted(comps, key=lambda idx: int(idx[0]))


def _solve_part(sub: CanonicalProblem, idx: np.ndarray, registry: Registry, ctx: SolveContext,
                options: dict[str, Any], share: float, bound: bool, bound_share: float, first: bool,
                whole: bool) -> PartOutcome:
    choice = choose(sub, registry)
    if first:
        _warn_unknown(options, choice)
    budget = None if ctx.time_limit is None else max(ctx.time_limit * share * (1 - bound_share * bound),
                                                      MIN_PART_SECONDS)
    part_end = None if budget is None else ctx.elapsed() + budget
    sol, steps = _run_step(choice.spec, sub, ctx, options, part_end, None, whole)
    improver = choice.improver
    if improver is not None and part_end is not None and not sol.exact and not ctx.interrupted \
            and part_end - ctx.elapsed() > MIN_PART_SECONDS:
        better, more = _run_step(improver, sub, ctx, options, part_end, sol.sigma, whole)
        steps += more
        if sub.value(better.sigma) > sub.value(sol.sigma):
            sol = Solution(sigma=better.sigma, exact=False, bound=sol.bound, info=sol.info)
    if MEAN_FIELD_ASSUMPTION in choice.spec.capabilities.assumptions:
        message = mean_part_warning(sub, choice.profile, choice.prediction)
        if message:
            ctx.warn(message)
    part_bound = None
    if bound and not ctx.interrupted:
        part_bound, log = attach_bound(sub, registry, ctx, sol, sub.value(sol.sigma), bound_share * share)
        if log:
            steps.append({"bounds": log})
    return PartOutcome(idx=idx, choice=choice, solution=sol, bound=part_bound, steps=steps)


def _run_step(spec: SolverSpec, sub: CanonicalProblem, ctx: SolveContext, options: dict[str, Any],
              part_end: float | None, initial: np.ndarray | None,
              whole: bool) -> tuple[Solution, list[dict[str, Any]]]:
    """One solver run on the parent's clock; the parent's interrupt flag follows it.

    ``whole`` says the part is the whole problem, so its trace is the parent's trace.
    """
    own = with_defaults(spec, options)
    if initial is not None:
        own["initial"] = initial
    step = SolveContext(rng=ctx.rng, seed=ctx.seed, time_limit=part_end, options=own, start=ctx.start)
    step.interrupted = ctx.interrupted
    t0 = time.perf_counter()
    sol = run_spec(spec, sub, step)
    ctx.interrupted = ctx.interrupted or step.interrupted
    for message in step.warnings:
        if message not in ctx.warnings:
            ctx.warnings.append(message)
    if whole:
        ctx.trace.extend(step.trace)
    value = sub.value(sol.sigma)
    return sol, [{"solver": spec.name, "seconds": time.perf_counter() - t0,
                  "objective": sub.to_objective(value), "exact": bool(sol.exact)}]


def _combine(problem: CanonicalProblem, parts: list[PartOutcome]) -> Outcome:
    sigma = assemble(problem.n, [p.idx for p in parts], [p.solution.sigma for p in parts])
    exact = all(p.solution.exact for p in parts)
    bounds = [p.bound for p in parts]
    total = None
    if all(b is not None for b in bounds):
        value = math.fsum(b.value for b in bounds)  # type: ignore[union-attr]
        total = Bound(value, all(b.certified for b in bounds), "sum over components")  # type: ignore[union-attr]
    spec = SolverSpec(name="auto", run=lambda p, c: Solution(sigma=sigma), summary="per-component portfolio")
    return Outcome(spec=spec, solution=Solution(sigma=sigma, exact=exact), bound=total, parts=parts)


def _warn_unknown(options: dict[str, Any], choice: Choice) -> None:
    accepted = set(choice.spec.options) | (set(choice.improver.options) if choice.improver else set())
    unknown = sorted(set(options) - accepted - {"initial"})
    if unknown and "*" not in accepted:
        warnings.warn(f"auto chose {choice.spec.name!r}, which ignores option(s) {', '.join(map(repr, unknown))}",
                      OptionWarning, stacklevel=5)


def forced_method_warnings(problem: CanonicalProblem, spec: SolverSpec, choice: Choice, form: str) -> list[str]:
    """Plain-words warnings when a caller forces a solver whose assumptions this problem breaks."""
    prof = choice.profile
    if MEAN_FIELD_ASSUMPTION not in spec.capabilities.assumptions or prof.mean_field:
        return []
    reasons = "; ".join(prof.mean_field_reasons) or "the couplings are not mean-field"
    better = choice.spec.name if choice.spec.name != spec.name else None
    tail = f" For this {form} problem 'auto' would choose {better!r}." if better else ""
    return [f"{spec.name!r} assumes {MEAN_FIELD_ASSUMPTION}, which this problem does not meet "
            f"({reasons}); its guarantee does not hold here.{tail}"]
