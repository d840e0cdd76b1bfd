"""The core's front door: run one solver on one problem form and build the result.

The face (``spinward.solve``) turns the caller's object into a
:class:`~spinward.core.model.ProblemForm` and hands it here with a registry.
"""

from __future__ import annotations

import math
import time
import warnings
from typing import Any, Callable, cast

import numpy as np

from .canonical import CanonicalProblem, drop_ghost_spin
from .context import SolveContext, interrupt_guard, make_seed
from .errors import InputError, OptionWarning, SolverUnsuitableError, SpinwardError
from .model import ProblemForm
from .proof import coefficient_mass, proves_optimal
from .registry import Bound, Registry, Solution, SolverSpec, callable_spec
from .result import Result, relative_gap

#: options every solver accepts, handled by the front door itself
COMMON_OPTIONS = {"bound": True, "bound_share": 0.1, "explain": False}
#: tolerance when comparing the caller's objective with the canonical one (relative to the coupling mass)
CONSISTENCY_RTOL = 1e-9


def check_time_limit(time_limit: Any) -> float | None:
    if time_limit is None:
        return None
    if isinstance(time_limit, bool) or not isinstance(time_limit, (int, float)) or not math.isfinite(time_limit) or time_limit <= 0:
        raise InputError(f"time_limit must be a positive number of seconds or None, got {time_limit!r}")
    return float(time_limit)


def pick_spec(method: str | Callable[..., Any] | SolverSpec, problem: CanonicalProblem,
              registry: Registry) -> SolverSpec:
    """Resolve ``method`` (not "auto") to a spec: a spec, a callable, or a registered name."""
    if isinstance(method, SolverSpec):
        return method
    if callable(method):
        return callable_spec(method)
    if not isinstance(method, str):
        raise InputError(f"method must be a solver name or a callable, got {method!r}")
    spec = registry.get(method)
    verdict = spec.can_run(problem)
    if verdict is not True:
        raise SolverUnsuitableError(f"method {method!r} cannot run on this problem: {verdict}")
    return spec


def split_options(spec: SolverSpec, options: dict[str, Any]) -> tuple[dict[str, Any], dict[str, Any]]:
    """Separate the solver's options from the common ones, warning about unknown names."""
    common = {k: options.get(k, v) for k, v in COMMON_OPTIONS.items()}
    accepted = set(spec.options)
    own = {k: v for k, v in options.items() if k not in COMMON_OPTIONS}
    if "*" not in accepted:
        unknown = sorted(set(own) - accepted)
        if unknown:
            warnings.warn(f"solver {spec.name!r} ignores unknown option(s) {', '.join(map(repr, unknown))}; "
                          f"it accepts: {', '.join(sorted(accepted)) or 'none'}", OptionWarning, stacklevel=4)
    return with_defaults(spec, own), common


def with_defaults(spec: SolverSpec, options: dict[str, Any]) -> dict[str, Any]:
    """The options ``spec`` accepts from ``options``, over its declared defaults."""
    accepted = set(spec.options)
    own = options if "*" in accepted else {k: v for k, v in options.items() if k in accepted}
    return {**{k: v for k, v in spec.options.items() if k != "*"}, **own}


def run_spec(spec: SolverSpec, problem: CanonicalProblem, ctx: SolveContext) -> Solution:
    """Run a spec, adding a ghost spin when it cannot take fields."""
    ghost = problem.has_fields and not spec.capabilities.fields
    target = problem.with_ghost_spin() if ghost else problem
    with interrupt_guard(ctx):
        try:
            sol = spec.run(target, ctx)
        except KeyboardInterrupt:
            if ctx.best_sigma is None:
                raise
            ctx.interrupted = True
            sol = Solution(sigma=ctx.best_sigma)
    sigma = _checked_spins(sol.sigma, target.n, spec.name)
    if ctx.best_sigma is not None and len(ctx.best_sigma) == target.n and ctx.best_value > target.value(sigma):
        sigma = ctx.best_sigma
    if ghost:
        sigma = drop_ghost_spin(sigma)
    return Solution(sigma=sigma, exact=sol.exact and not ctx.interrupted, status=sol.status,
                    bound=sol.bound, info=dict(sol.info))


def _checked_spins(sigma: Any, n: int, name: str) -> np.ndarray:
    s = np.asarray(sigma)
    if s.shape != (n,) or (n and not np.all(np.abs(s) == 1)):
        raise SpinwardError(f"solver {name!r} returned {s.shape} values; expected {n} spins of ±1")
    return s.astype(np.int8)


def derive_status(sol: Solution, ctx: SolveContext) -> str:
    if ctx.interrupted:
        return "interrupted"
    if sol.status in ("optimal", "feasible", "time-limit", "interrupted"):
        return sol.status
    if sol.exact:
        return "optimal"
    return "time-limit" if ctx.time_limit is not None and ctx.expired() else "feasible"


def bound_budget(ctx: SolveContext, share: float) -> float:
    """Seconds the bound providers may use: a share of the limit, or (no limit) as long as the solve took, ≥ 3 s."""
    if ctx.time_limit is not None:
        return max(share * ctx.time_limit, 0.05)
    return max(3.0, ctx.elapsed())


def attach_bound(problem: CanonicalProblem, registry: Registry, ctx: SolveContext, sol: Solution,
                 canonical_value: float, share: float) -> tuple[Bound | None, list[dict[str, Any]]]:
    """The tightest bound on the canonical maximum from the solver and the registered providers."""
    found: list[Bound] = []
    if sol.exact:
        found.append(Bound(canonical_value, True, "solver (proved optimal)"))
    elif sol.bound is not None:
        found.append(Bound(float(sol.bound), True, "solver"))
    log: list[dict[str, Any]] = []
    if not sol.exact:
        deadline = time.perf_counter() + bound_budget(ctx, share)
        for provider in registry.bounds():
            left = deadline - time.perf_counter()
            if left <= 0 or provider.applies(problem) is not True:
                continue
            b = _run_provider(provider, problem, left, log)
            if b is not None and math.isfinite(b.value):
                found.append(b)
    if not found:
        return None, log
    certified = [b for b in found if b.certified]
    return min(certified or found, key=lambda b: b.value), log


def _run_provider(provider: Any, problem: CanonicalProblem, seconds: float, log: list[dict[str, Any]]) -> Bound | None:
    sub = SolveContext(rng=np.random.default_rng(0), time_limit=seconds)
    t0 = time.perf_counter()
    try:
        b = provider.compute(problem, sub)
    except SpinwardError as exc:
        log.append({"provider": provider.name, "error": str(exc)})
        return None
    log.append({"provider": provider.name, "seconds": time.perf_counter() - t0,
                "value": None if b is None else problem.bound_to_objective(b.value),
                "certified": None if b is None else b.certified})
    return b


def solve_form(form: ProblemForm, *, registry: Registry, method: Any = "auto", time_limit: float | None = None,
               seed: int | np.random.Generator | None = None, **options: Any) -> Result:
    """Solve ``form`` with ``method``; see :func:`spinward.solve` for the public contract."""
    limit = check_time_limit(time_limit)
    seed_value, rng = make_seed(seed)
    t0 = time.perf_counter()
    problem = form.canonical()
    notes = list(getattr(form, "notes", ()))
    if problem.n == 0:
        return _empty_result(form, seed_value, notes, time.perf_counter() - t0)
    ctx = SolveContext(rng=rng, seed=seed_value, time_limit=limit, start=t0)
    if isinstance(method, str) and method == "auto":
        from .portfolio import solve_auto

        common = {k: options.pop(k, v) for k, v in COMMON_OPTIONS.items()}
        outcome = solve_auto(problem, registry, ctx, options, bound=bool(common["bound"]),
                             bound_share=float(common["bound_share"]))
        return build_result(form, problem, outcome.spec, outcome.solution, ctx, notes, outcome.bound,
                            outcome.info(common["explain"]))
    spec = pick_spec(method, problem, registry)
    own, common = split_options(spec, options)
    ctx.options = own
    if limit is not None and common["bound"]:  # the bound's share comes out of the caller's limit
        ctx.time_limit = limit * (1 - float(common["bound_share"]))
    sol = run_spec(spec, problem, ctx)
    ctx.time_limit = limit
    bound: Any = None
    log: list[dict[str, Any]] = []
    if common["bound"] and not ctx.interrupted:
        bound, log = attach_bound(problem, registry, ctx, sol, problem.value(sol.sigma), float(common["bound_share"]))
    info = dict(sol.info)
    if log:
        info["bounds"] = log
    if common["explain"] or spec.capabilities.assumptions:
        from .dispatch import choose, mean_part_warning
        from .portfolio import forced_method_warnings
        from .registry import MEAN_FIELD_ASSUMPTION

        try:
            choice = choose(problem, registry)
        except SpinwardError:
            choice = None
        if choice is not None:
            for message in forced_method_warnings(problem, spec, choice, form.form):
                ctx.warn(message)
            mean_note = mean_part_warning(problem, choice.profile, choice.prediction) \
                if MEAN_FIELD_ASSUMPTION in spec.capabilities.assumptions else None
            if mean_note:
                ctx.warn(mean_note)
            if common["explain"]:
                info["explanation"] = choice.explanation()
    return build_result(form, problem, spec, sol, ctx, notes, bound, info)


def build_result(form: ProblemForm, problem: CanonicalProblem, spec: SolverSpec, sol: Solution, ctx: SolveContext,
                 notes: list[str], bound: Bound | None, info: dict[str, Any]) -> Result:
    """Decode, recompute the caller's objective, attach bound and gap."""
    values = form.decode(sol.sigma)
    objective = float(form.evaluate(values))
    canonical_value = problem.value(sol.sigma)
    _check_consistency(problem, objective, canonical_value, spec.name)
    bound_value, kind = None, None
    if bound is not None:
        bound_value = problem.bound_to_objective(max(bound.value, canonical_value))
        kind = "certified" if bound.certified else "estimated"
        info["bound_method"] = bound.method
    gap = relative_gap(bound_value, objective)
    exact = bool(sol.exact)
    if not exact and kind == "certified" and bound_value is not None:
        proof = proves_optimal(form, problem, objective, bound_value)
        exact = proof["proved"]
        if exact:
            info["proof"] = proof
    if ctx.trace:
        info.setdefault("trace", [(t, problem.to_objective(v)) for t, v in ctx.trace])
    status = derive_status(sol, ctx)
    if exact and status == "feasible":
        status = "optimal"
    return Result(form=form.form, assignment=dict(zip(problem.labels, values.tolist())),
                  array=tuple(values.tolist()), objective=objective, sense=form.sense, bound=bound_value,
                  bound_kind=cast(Any, kind), gap=gap, exact=exact, solver=spec.name, status=cast(Any, status),
                  wall_time=ctx.elapsed(), seed=ctx.seed, warnings=tuple(notes + ctx.warnings), info=info)


def _check_consistency(problem: CanonicalProblem, objective: float, canonical_value: float, name: str) -> None:
    """The caller's objective must equal the canonical image; a mismatch is a bug, never silent."""
    via_canonical = problem.to_objective(canonical_value)
    mass = coefficient_mass(problem)
    if abs(objective - via_canonical) > CONSISTENCY_RTOL * max(mass, 1.0) + 1e-12:
        raise SpinwardError(f"internal error after solver {name!r}: the objective recomputed from the input "
                            f"({objective!r}) differs from the canonical value ({via_canonical!r}); please report it")


def _empty_result(form: ProblemForm, seed: int | None, notes: list[str], elapsed: float) -> Result:
    objective = float(form.evaluate(np.zeros(0, dtype=np.int8)))
    return Result(form=form.form, assignment={}, array=(), objective=objective, sense=form.sense,
                  bound=objective, bound_kind="certified", gap=0.0, exact=True, solver="empty",
                  status="optimal", wall_time=elapsed, seed=seed, warnings=tuple(notes), info={})
