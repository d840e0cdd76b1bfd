"""Running a plan: profile, parts, primary (with fallbacks), improver, bounds, all on one clock.

Every step runs in a child of the call's context (:meth:`SolveContext.child`), so its
offers reach the root through the part's embedding and Ctrl-C in any step leaves the
best state of the whole solve.  A step that cannot fit its share is skipped and the
plan says so; an exact method that declines at run time hands its time to the next
candidate.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable
from typing import Any

import numpy as np

from .canonical import CanonicalProblem, drop_ghost_spin
from .context import SolveContext
from .decompose import connected_components, subproblem
from .dispatch import rank
from .errors import InternalError, SolverUnsuitableError, SpinwardError, SpinwardWarning
from .plan import (CLOSE_READS, LAST_RESORT_SECONDS, MAX_PARTS, MIN_STEP_SECONDS, PRIMARY_PATIENCE, SMALL_PART,
                   WHOLE_SHARE, Part, Step, free_bound_allowance, improver_share, part_share, reserve_seconds)
from .profile import Profile, profile_of
from .registry import Bound, BoundSpec, Registry, Solution, SolverSpec


class Runner:
    """Carries the clock and the step log of one solve through the plan."""

    def __init__(self, problem: CanonicalProblem, registry: Registry, ctx: SolveContext, *,
                 bound: bool, bound_share: float, reserve: float) -> None:
        self.problem, self.registry, self.ctx = problem, registry, ctx
        self.bound, self.bound_share, self.reserve = bound, bound_share, reserve
        self.steps: list[Step] = []
        self.limit = ctx.time_limit
        self.read_seconds = 0.0  # one full read of the whole K, as the profile timed it
        self.bounds_fit = True   # whether some bound provider's predicted cost fits the bounds' share

    # ---------------------------------------------------------------- time
    def left(self) -> float:
        return self.ctx.remaining()

    def bound_time(self) -> float:
        return self.bound_share * self.limit if (self.bound and self.limit is not None and self.bounds_fit) else 0.0

    def solve_time_left(self) -> float:
        """Seconds the parts may still use (inf without a limit)."""
        if self.limit is None:
            return math.inf
        return self.left() - self.reserve - (self.bound_time() if self.bound else 0.0)

    # ---------------------------------------------------------------- parts
    def parts(self, method: SolverSpec | None, profile: Profile, only: tuple[str, ...] | None) -> list[Part]:
        """The parts and their candidates: one part for a forced method, else the components."""
        problem = self.problem
        if method is not None:
            verdict = method.can_run(problem)
            if verdict is not True:
                raise SolverUnsuitableError(f"method {method.name!r} cannot run on this problem: {verdict}")
            return [Part(0, np.arange(problem.n), problem, [method], None)]
        pieces = self._pieces(profile)
        out = []
        frustrated = problem.meta.get("_frustrated_spins")
        labels = problem.meta.get("_component_labels")
        for k, idx in enumerate(pieces):
            sub = problem if len(pieces) == 1 else subproblem(problem, idx)
            if sub is not problem and frustrated is not None and labels is not None:
                # the whole problem's profile already knows each part's components and balance
                sub.meta["_structure"] = (int(np.unique(labels[idx]).size), not bool(np.any(frustrated[idx])))
            prof = profile if len(pieces) == 1 else profile_of(sub, budget=self._profile_budget())
            budget = None if self.limit is None else max(self.solve_time_left(), 0.0) * len(idx) / problem.n
            ranking = rank(sub, prof, self.registry, budget, only=only)
            improver = None if ranking.primary.capabilities.warm_start else ranking.improver
            out.append(Part(k, idx, sub, list(ranking.ranked), improver, ranking))
        return out

    def use_profile(self, profile: Profile) -> None:
        """Size the clock by what the profile measured: one read of K, and whether any bound fits."""
        self.read_seconds = profile.read_seconds
        if self.problem.kind == "dense":  # the mapping back reads K once for the caller's objective: as timed here
            self.reserve = reserve_seconds(self.problem, profile.read_seconds)
        if self.bound and self.limit is not None:  # no provider fits: its share goes to the solvers
            self.bounds_fit = self._some_bound_fits(self.bound_share * self.limit)

    def _some_bound_fits(self, seconds: float) -> bool:
        for provider in self.registry.bounds():
            if provider.applies(self.problem) is True and \
                    (provider.cost(self.problem) if provider.cost is not None else 0.0) <= seconds:
                return True
        return False

    def _pieces(self, profile: Profile) -> list[np.ndarray]:
        """Components, largest first up to ``MAX_PARTS``; small ones (≤ ``SMALL_PART`` spins) and the
        rest go together into one part (still a union of components, so still exact to split)."""
        if profile.components is None or profile.components <= 1:
            return [np.arange(self.problem.n)]
        comps = sorted(connected_components(self.problem), key=len, reverse=True)
        if len(comps[0]) >= WHOLE_SHARE * self.problem.n:  # one giant component: splitting would only copy it
            return [np.arange(self.problem.n)]
        large = [c for c in comps[: MAX_PARTS - 1] if len(c) > SMALL_PART]
        rest = comps[len(large):]
        pieces = large + ([np.sort(np.concatenate(rest))] if rest else [])
        return sorted(pieces, key=lambda idx: int(idx[0]))

    def _profile_budget(self) -> float | None:
        from .plan import PROFILE_SHARE

        return None if self.limit is None else PROFILE_SHARE * self.limit

    # ---------------------------------------------------------------- running
    def run_parts(self, parts: list[Part], initial: np.ndarray | None) -> None:
        totals = PartTotals(self.problem, parts)
        for k, part in enumerate(parts):
            if self.ctx.interrupted:
                self.steps.append(Step("primary", part.candidates[0].name, k, outcome="skipped",
                                       note="Ctrl-C before this part started"))
                continue
            embed = totals.embed(k) if len(parts) > 1 else None
            start = None if initial is None else initial[part.idx]
            seconds = None if self.limit is None else part_share(parts, k, max(self.solve_time_left(), 0.0))
            self.run_part(part, embed, start, seconds)
            totals.settle(k)

    def run_part(self, part: Part, embed: Any, initial: np.ndarray | None, seconds: float | None) -> None:
        end = None if seconds is None else time.perf_counter() + seconds
        improve = improver_share(part)
        for spec in part.candidates:
            budget = None if end is None else max(end - time.perf_counter(), 0.0) * (1 - improve)
            if budget is not None and budget < MIN_STEP_SECONDS and spec is not part.candidates[0]:
                break  # no time for a fallback either: the first candidate's skip says why
            if budget is not None and spec is part.candidates[0] and not spec.capabilities.exact:
                budget = max(budget, LAST_RESORT_SECONDS)  # a state from the solver beats all spins up
            sol = self.step("primary", spec, part, embed, initial, budget)
            if sol is not None:
                part.sigma, part.exact, part.solver = sol.sigma, sol.exact, spec.name
                part.info = dict(sol.info)
                if sol.bound is not None or sol.exact:
                    value = part.problem.value(sol.sigma)
                    part.bound = Bound(value if sol.exact or sol.bound is None else float(sol.bound), True,
                                       "solver (proved optimal)" if sol.exact else "solver")
                break
            if self.ctx.interrupted:
                break
        if part.sigma is None:
            mine = [s for s in self.steps if s.part == part.index and s.kind == "primary"]
            if mine and all(s.outcome == "declined" for s in mine):
                raise SolverUnsuitableError("; ".join(f"{s.name} declined: {s.note}" for s in mine))
            # no time for any candidate: keep the start, else all spins up (the status says time-limit)
            part.sigma = np.ones(part.problem.n, dtype=np.int8) if initial is None else np.asarray(initial, np.int8)
            part.solver = part.solver or part.candidates[0].name
            if not self.ctx.interrupted:
                self._warn_unsolved(part, initial is not None, mine)
        if part.improver is not None and not part.exact and not self.ctx.interrupted:
            budget = None if end is None else max(end - time.perf_counter(), 0.0)
            better = self.step("improve", part.improver, part, embed, part.sigma, budget)
            if better is not None and part.problem.value(better.sigma) > part.problem.value(part.sigma):
                part.sigma = better.sigma

    def _warn_unsolved(self, part: Part, started: bool, steps: list[Step]) -> None:
        where = "" if len(part.idx) == self.problem.n else f" on a part of {len(part.idx)} variables"
        why = next((s.note for s in steps if s.outcome == "skipped" and s.note), "")
        self.ctx.warn(f"the time limit left no time for any solver{where}, so the state returned there is "
                      f"{'the start given' if started else 'all spins +1'}, not a solution"
                      f"{f' ({steps[0].name}: {why})' if why else ''}; allow more time", SpinwardWarning)

    def step(self, kind: str, spec: SolverSpec, part: Part, embed: Any, initial: np.ndarray | None,
             budget: float | None) -> Solution | None:
        """Run one solver step in a child context; None when it was skipped or declined."""
        if budget is not None:
            floor = LAST_RESORT_SECONDS if budget >= LAST_RESORT_SECONDS and kind == "primary" else 0.0
            budget = max(budget - self._warm(spec, part.problem), floor)
        entry = Step(kind, spec.name, part.index, budget=budget)
        self.steps.append(entry)
        if budget is not None and budget < MIN_STEP_SECONDS:
            entry.outcome, entry.note = "skipped", f"only {budget:.3f} s were left for it"
            return None
        if budget is not None:
            read = self._read_seconds(part.problem)
            needed = spec.first_reads * read if spec.first_seconds is None else spec.first_seconds(part.problem, read)
            if needed > budget:
                entry.outcome = "skipped"
                entry.note = (f"its first state needs about {needed:.2g} s here, more than the {budget:.2g} s "
                              f"left for it")
                return None
            # a solver stopped by the clock still closes (its climb, its state's value): reads of K
            # that take a third of a second each on a big memory-mapped K come out of its budget
            budget -= min(CLOSE_READS * read, budget / 2)
        options = dict(part.options.get(spec.name, {}))
        if kind == "primary" and part.improver is not None and "patience" in spec.options \
                and "patience" not in options:
            # a primary that stops improving hands the rest of its time to the improver
            options["patience"] = PRIMARY_PATIENCE
        if initial is not None and spec.capabilities.warm_start:
            options["initial"] = np.asarray(initial, dtype=np.int8)
        child = self.ctx.child(budget, options=spec.read_options(options), embed=embed)
        t0 = time.perf_counter()
        try:
            sol = run_spec(spec, part.problem, child)
        except SolverUnsuitableError as exc:
            entry.outcome, entry.note = "declined", str(exc)
            return None
        finally:
            entry.seconds = time.perf_counter() - t0
        stopped = child.expired() or sol.status == "time-limit"  # the solver may say the clock ended it
        entry.outcome = "interrupted" if self.ctx.interrupted else ("stopped" if stopped else "ended")
        entry.value = self.problem.to_objective(part.problem.value(sol.sigma)) if len(part.idx) == self.problem.n \
            else None
        return sol

    def _read_seconds(self, problem: CanonicalProblem) -> float:
        """One read of ``problem``'s K (a part: its share of the whole K's entries)."""
        share = problem.n / max(self.problem.n, 1)
        return self.read_seconds * (share * share if problem.kind == "dense" else share)

    def _warm(self, spec: SolverSpec, problem: CanonicalProblem) -> float:
        """The first run of a solver on a kind of couplings in this process loads its compiled code
        (numba reads its cache: up to a second); do it on a 4-spin problem before sizing the step,
        so that a time limit holds from the first call.  Returns the seconds it took."""
        key = (spec.name, spec.run, problem.kind, str(getattr(problem.K, "dtype", "")), problem.has_fields)
        if key in _WARMED or problem.kind == "operator":
            return 0.0
        _WARMED.add(key)
        t0 = time.perf_counter()
        tiny = _tiny_like(problem)
        try:
            ctx = SolveContext(rng=np.random.default_rng(0), time_limit=0.05, options=spec.read_options({}))
            spec.run(tiny, ctx)
        except Exception:  # a warm-up only: the real step reports any error
            pass
        seconds = time.perf_counter() - t0
        self.steps.append(Step("warm-up", spec.name, seconds=seconds, outcome="ended",
                               note="first use in this process: compiled code loaded"))
        return seconds

    # ---------------------------------------------------------------- bounds
    def run_bounds(self, parts: list[Part]) -> Bound | None:
        """The tightest bound per part (solver's own, else the providers'), summed over parts."""
        if not self.bound:
            return _sum_bounds(parts)
        open_parts = [p for p in parts if not p.exact]
        providers = self.registry.bounds()
        for k, part in enumerate(open_parts):
            if self.ctx.interrupted:
                break
            if self.limit is None:
                allowance = free_bound_allowance(part.candidates[0] if part.candidates else None, part.problem)
                seconds: float | None = None
            else:
                share = max(self.left() - self.reserve, 0.0)
                seconds = share * part.weight / sum(p.weight for p in open_parts[k:])
                allowance = seconds
            found = self._bounds_of(part, providers, seconds, allowance)
            if found is not None and (part.bound is None or found.value < part.bound.value or
                                      (found.certified and not part.bound.certified)):
                part.bound = found if part.bound is None or not part.bound.certified or found.certified else part.bound
        return _sum_bounds(parts)

    def _bounds_of(self, part: Part, providers: list[BoundSpec], seconds: float | None,
                   allowance: float) -> Bound | None:
        found: list[Bound] = []
        end = None if seconds is None else time.perf_counter() + seconds
        spent = 0.0
        for provider in providers:
            verdict = provider.applies(part.problem)
            if verdict is not True:
                continue
            left = allowance - spent if end is None else end - time.perf_counter()
            cost = provider.cost(part.problem) if provider.cost is not None else 0.0
            entry = Step("bound", provider.name, part.index, budget=max(left, 0.0))
            self.steps.append(entry)
            if cost > left or left < MIN_STEP_SECONDS:
                entry.outcome = "skipped"
                entry.note = f"it needs about {cost:.3g} s, more than the {max(left, 0.0):.3g} s left for bounds"
                continue
            b = self._one_bound(provider, part.problem, entry, None if end is None else left, left)
            spent += cost
            if b is not None and math.isfinite(b.value):
                found.append(b)
        certified = [b for b in found if b.certified]
        return min(certified or found, key=lambda b: b.value) if found else None

    def _one_bound(self, provider: BoundSpec, problem: CanonicalProblem, entry: Step, seconds: float | None,
                   allowance: float) -> Bound | None:
        child = self.ctx.child(seconds, options={"budget": allowance}, rng=np.random.default_rng(0))
        t0 = time.perf_counter()
        try:
            b = provider.compute(problem, child)
        except SolverUnsuitableError as exc:
            entry.outcome, entry.note = "declined", str(exc)
            return None
        finally:
            entry.seconds = time.perf_counter() - t0
        if b is None:
            entry.outcome, entry.note = "skipped", "it did not fit its share of the time"
            return None
        entry.outcome = "stopped" if child.expired() else "ended"
        entry.value = self.problem.to_objective(b.value) if problem.n == self.problem.n else None
        entry.note = "certified" if b.certified else "estimated"
        return b


_WARMED: set[tuple[Any, ...]] = set()


def _tiny_like(problem: CanonicalProblem) -> CanonicalProblem:
    """A 4-spin frustrated problem stored like ``problem`` (dense with its dtype, or CSR), fields alike."""
    K = np.array([[0, 1, -1, 1], [1, 0, 1, -1], [-1, 1, 0, 1], [1, -1, 1, 0]], dtype=np.float64) * 0.5
    b = np.array([0.1, -0.2, 0.3, 0.05]) if problem.has_fields else np.zeros(4)
    if problem.kind == "sparse":
        import scipy.sparse as sp

        return CanonicalProblem(sp.csr_array(K), b)
    return CanonicalProblem(K.astype(problem.K.dtype), b)


class PartTotals:
    """The whole problem's incumbent assembled from the parts' best states (for offers and Ctrl-C)."""

    def __init__(self, problem: CanonicalProblem, parts: list[Part]) -> None:
        self.problem, self.parts = problem, parts
        self.sigma = np.ones(problem.n, dtype=np.int8)
        # one part: any offer is the whole incumbent (no read of a big K for all spins up)
        self.values = [-math.inf] if len(parts) == 1 else \
            [p.problem.value(np.ones(p.problem.n, dtype=np.int8)) for p in parts]

    def embed(self, k: int) -> Callable[[np.ndarray, float], tuple[np.ndarray, float] | None]:
        idx = self.parts[k].idx

        def lift(sigma: np.ndarray, value: float) -> tuple[np.ndarray, float] | None:
            if value <= self.values[k]:
                return None
            self.sigma[idx] = np.asarray(sigma, dtype=np.int8)
            self.values[k] = float(value)
            return self.sigma.copy(), math.fsum(self.values)

        return lift

    def settle(self, k: int) -> None:
        part = self.parts[k]
        if part.sigma is not None:
            self.sigma[part.idx] = part.sigma
            self.values[k] = part.problem.value(part.sigma)


def _sum_bounds(parts: list[Part]) -> Bound | None:
    bounds = [p.bound for p in parts]
    if any(b is None for b in bounds):
        return None
    if len(parts) == 1:
        return bounds[0]
    value = math.fsum(b.value for b in bounds)  # type: ignore[union-attr]
    return Bound(value, all(b.certified for b in bounds), "sum over components")  # type: ignore[union-attr]


def run_spec(spec: SolverSpec, problem: CanonicalProblem, ctx: SolveContext) -> Solution:
    """Run a spec in ``ctx``, lifting to a ghost spin when it cannot take fields; checks its answer."""
    ghost = problem.has_fields and not spec.capabilities.fields
    target = problem.with_ghost_spin() if ghost else problem
    run_ctx = ctx.child(options=ctx.options, embed=_drop_ghost) if ghost else ctx
    try:
        sol = spec.run(target, run_ctx)
    except KeyboardInterrupt:
        if run_ctx.best_sigma is None:
            raise
        ctx.interrupted = True
        sol = Solution(sigma=run_ctx.best_sigma)
    except SpinwardError:
        raise
    except (MemoryError, RecursionError):
        raise
    except Exception as exc:
        raise InternalError(f"solver {spec.name!r} failed: {type(exc).__name__}: {exc}") from exc
    sigma = _checked_spins(sol.sigma, target.n, spec.name)
    if run_ctx.best_sigma is not None and len(run_ctx.best_sigma) == target.n \
            and run_ctx.best_value > target.value(sigma):
        sigma = run_ctx.best_sigma
    if ghost:
        sigma = drop_ghost_spin(sigma)
    return Solution(sigma=sigma, exact=sol.exact and not ctx.interrupted, status=sol.status,
                    bound=sol.bound, info=dict(sol.info))


def _drop_ghost(sigma: np.ndarray, value: float) -> tuple[np.ndarray, float]:
    return drop_ghost_spin(sigma), value


def _checked_spins(sigma: Any, n: int, name: str) -> np.ndarray:
    s = np.asarray(sigma)
    if s.shape != (n,) or (n and not np.all(np.abs(s) == 1)):
        raise InternalError(f"solver {name!r} returned {s.shape} values; expected {n} spins of ±1")
    return s.astype(np.int8)
