"""The core's front door: validate → profile → plan → run → result, on one clock set at the call.

The face (``spinward.solve``) turns the caller's object into a
:class:`~spinward.core.model.ProblemForm` and hands it here with a registry.  The same
path serves "auto" and a forced method; see :mod:`.plan` for how the time is shared.
"""

from __future__ import annotations

import math
import time
from collections.abc import Mapping
from typing import Any, cast

import numpy as np
from pydantic import Field

from .canonical import CanonicalProblem
from .context import SolveContext, interrupt_guard, make_seed
from .errors import InputError, InternalError
from .model import ProblemForm
from .options import SolverOptions, read_options
from .plan import Part, Step, reserve_seconds
from .pool import Pool
from .profile import profile_of
from .proof import coefficient_mass, proves_optimal
from .reduce import Fixing, fix_spins
from .registry import Bound, Registry, SolverSpec, callable_spec
from .result import Answer, Result, jsonable, relative_gap
from .run import Runner

#: tolerance when comparing the caller's objective with the canonical one (relative to the coupling mass)
CONSISTENCY_RTOL = 1e-9


class CommonOptions(SolverOptions):
    """Options of ``solve`` itself, whatever the method."""

    bound: bool = Field(True, description="compute a bound on the optimum (and the gap)")
    bound_share: float = Field(0.1, ge=0.0, le=0.5, description="share of the time limit the bounds may use")
    explain: bool = Field(False, description="put the profile, every solver's verdict and the choice in info")
    initial: Any = Field(None, description="a start state in your terms (dict by label, array, or a Result)")
    fix: Any = Field(None, description="{label: value}: variables held at a value (the problem is reduced exactly)")
    solutions: int = Field(1, ge=1, le=10_000, description="how many distinct good states to return")
    min_distance: int = Field(0, ge=0, description="least number of differing variables between returned states")
    candidates: tuple[str, ...] | None = Field(None, description='"auto" only: choose among these solvers')
    solver_options: dict[str, dict[str, Any]] = Field(
        default_factory=dict, description='"auto" only: {solver: {option: value}} for the solvers it runs')


COMMON = set(CommonOptions.model_fields)


def check_time_limit(time_limit: Any) -> float | None:
    if time_limit is None:
        return None
    if isinstance(time_limit, bool) or not isinstance(time_limit, (int, float)) or not math.isfinite(time_limit) \
            or time_limit <= 0:
        raise InputError(f"time_limit must be a positive number of seconds or None, got {time_limit!r}")
    return float(time_limit)


def resolve_method(method: Any, registry: Registry) -> SolverSpec | None:
    """The spec a caller asked for (None for "auto"): a spec, a callable, or a registered name."""
    if isinstance(method, SolverSpec):
        return method
    if isinstance(method, str):
        return None if method == "auto" else registry.get(method)
    if callable(method):
        return callable_spec(method)
    raise InputError(f"method must be a solver name, 'auto', a SolverSpec or a callable, got {method!r}")


def check_options(method: Any, options: Mapping[str, Any], registry: Registry) -> tuple[CommonOptions, dict]:
    """Validate every option of a call before any work: (common options, {solver: its options}).

    Raises UnknownMethodError for an unknown solver and InputError for an unknown option, a
    wrong type or an out-of-range value, naming it.
    """
    spec = resolve_method(method, registry)
    own = {k: v for k, v in options.items() if k not in COMMON}
    common = CommonOptions(**read_options("solve", CommonOptions, {k: v for k, v in options.items() if k in COMMON}))
    if spec is None:
        if own:
            name = next(iter(own))
            raise InputError(f"'auto' takes no solver option such as {name!r} directly: pass "
                             f"solver_options={{'SOLVER': {{{name!r}: ...}}}}, or name the method")
        per_solver = {}
        for name, given in common.solver_options.items():
            per_solver[registry.get(name).name] = registry.get(name).read_options(given)
        for name in common.candidates or ():
            registry.get(name)
        return common, per_solver
    if common.solver_options or common.candidates:
        raise InputError("solver_options and candidates are options of 'auto'; with a named method, pass its "
                         "options directly")
    return common, {spec.name: spec.read_options(own)}


def solve_form(form: ProblemForm, *, registry: Registry, method: Any = "auto", time_limit: float | None = None,
               seed: int | np.random.Generator | None = None, **options: Any) -> Result:
    """Solve ``form`` with ``method``; see :func:`spinward.solve` for the public contract."""
    called = time.perf_counter()
    limit = check_time_limit(time_limit)
    common, per_solver = check_options(method, options, registry)
    spec = resolve_method(method, registry)
    seed_value, rng = make_seed(seed)
    root = SolveContext(rng=rng, seed=seed_value, time_limit=limit, start=called, solutions=common.solutions)
    problem = form.canonical()
    notes = list(getattr(form, "notes", ()))
    fixing = _fixing(form, problem, common.fix)
    initial = None if common.initial is None else form.state_from(common.initial, "initial")
    pool = Pool(common.solutions, common.min_distance) if common.solutions > 1 else None
    if pool is not None:
        root.listeners.append(pool.consider)
    if initial is not None:
        if fixing is not None:
            initial[fixing.fixed] = fixing.values
        root.offer(initial, problem.value(initial))
    work = problem if fixing is None else fixing.reduced
    state = _Solve(form, problem, work, registry, root, common, per_solver, spec, fixing, initial)
    with interrupt_guard(root):
        try:
            state.run()
        except KeyboardInterrupt:
            if root.best_sigma is None:
                raise
            root.interrupted = True
    return state.result(notes, pool)


def _fixing(form: ProblemForm, problem: CanonicalProblem, fix: Any) -> Fixing | None:
    if fix is None:
        return None
    if not isinstance(fix, Mapping):
        raise InputError(f"fix must be a dict {{label: value}}, got {fix!r:.80}")
    index = {label: k for k, label in enumerate(problem.labels[: form.caller_count()])}
    unknown = [label for label in fix if label not in index]
    if unknown:
        raise InputError(f"fix: unknown label {unknown[0]!r}; the problem's labels are like {problem.labels[:3]!r}")
    idx = np.array([index[label] for label in fix], dtype=np.int64)
    values = form._encode_checked(np.array(list(fix.values()), dtype=object), "fix") if len(fix) else \
        np.zeros(0, dtype=np.int8)
    return fix_spins(problem, idx, values)


class _Solve:
    """One call's state between the steps (kept small: the steps live in :class:`Runner`)."""

    def __init__(self, form: ProblemForm, problem: CanonicalProblem, work: CanonicalProblem, registry: Registry,
                 root: SolveContext, common: CommonOptions, per_solver: dict, spec: SolverSpec | None,
                 fixing: Fixing | None, initial: np.ndarray | None) -> None:
        self.form, self.problem, self.work, self.registry = form, problem, work, registry
        self.root, self.common, self.per_solver, self.spec = root, common, per_solver, spec
        self.fixing, self.initial = fixing, initial
        self.ctx = root if fixing is None else root.child(embed=fixing.expand)
        self.runner: Runner | None = None
        self.parts: list[Part] = []
        self.bound: Bound | None = None
        self.steps: list[Step] = []
        self.advice: list[str] = []
        self.prediction: dict[str, Any] | None = None
        self.repaired_away = False  # the repair replaced the solvers' state by one of another value

    def run(self) -> None:
        work = self.work
        if work.n == 0:
            return
        runner = Runner(work, self.registry, self.ctx, bound=self.common.bound,
                        bound_share=self.common.bound_share, reserve=reserve_seconds(self.problem))
        self.runner = runner
        t0 = time.perf_counter()
        budget = None if self.ctx.time_limit is None else 0.05 * self.ctx.time_limit
        profile = profile_of(work, budget=budget)
        runner.steps.append(Step("profile", "profile", seconds=time.perf_counter() - t0, outcome="ended",
                                 budget=budget))
        runner.use_profile(profile)
        self.parts = runner.parts(self.spec, profile, self.common.candidates)
        for part in self.parts:
            part.options = dict(self.per_solver)
        self._advise(profile)
        start = None if self.initial is None else (self.initial if self.fixing is None else
                                                   self.initial[self.fixing.free])
        runner.run_parts(self.parts, start)
        self.bound = runner.run_bounds(self.parts)

    def _advise(self, profile: Any) -> None:
        """The primary's advice and prediction (the whole problem when it is one part)."""
        for part in self.parts:
            spec = part.candidates[0]
            prof = profile if len(self.parts) == 1 else profile_of(part.problem)
            if spec.advise is not None:
                for advice in spec.advise(part.problem, prof):
                    self.root.warn(advice.worded(self.form.phrase(advice.topic, dict(advice.values))
                                                 if advice.topic else None))
            if len(self.parts) == 1 and self.fixing is None and spec.predict is not None:
                found = spec.predict(part.problem, prof)
                if found:
                    self.prediction = caller_prediction(self.problem, found)

    # ---------------------------------------------------------------- the result
    def sigma(self) -> np.ndarray:
        """The best full state: the parts assembled, or the root's incumbent if better."""
        n = self.problem.n
        sigma = None
        if self.parts and all(p.sigma is not None for p in self.parts):
            work = np.ones(self.work.n, dtype=np.int8)
            for p in self.parts:
                work[p.idx] = p.sigma  # type: ignore[index,assignment]
            sigma = work if self.fixing is None else self.fixing.expand(work, 0.0)[0]
        elif self.work.n == 0:
            sigma = np.ones(n, dtype=np.int8) if self.fixing is None else self.fixing.expand(
                np.zeros(0, np.int8), 0.0)[0]
        best = self.root.best_sigma
        if sigma is None or (best is not None and not np.array_equal(best, sigma)
                             and self.root.best_value > self.problem.value(sigma)):
            sigma = best if best is not None else np.ones(n, dtype=np.int8)
        return sigma

    def result(self, notes: list[str], pool: Any) -> Result:
        sigma = self._repaired(self.sigma())
        steps = (self.runner.steps if self.runner else []) + self.steps
        return build_result(self, sigma, notes, steps, pool)

    def _repaired(self, sigma: np.ndarray) -> np.ndarray:
        """Constraints: a near-feasible state moved to a feasible one, and improved inside it."""
        form = self.form
        if form.constraint_report(form.decode(sigma)) is None or self.root.interrupted:
            return sigma
        step = Step("repair", "constraints")
        self.steps.append(step)
        if self.fixing is not None:
            step.outcome, step.note = "skipped", "fixed variables and constraints together: not repaired"
            return sigma
        t0 = time.perf_counter()
        before = self.problem.value(sigma)
        repaired = form.repair(sigma, self.root.should_stop)
        step.seconds, step.outcome = time.perf_counter() - t0, "ended"
        if repaired is None:
            step.note = "no constraint here can be repaired"
            return sigma
        repaired = np.asarray(repaired, dtype=np.int8)
        after = self.problem.value(repaired)
        violated = not all(c.get("satisfied") for c in form.constraint_report(form.decode(sigma)) or [])
        step.value = self.problem.to_objective(after)
        step.note = f"objective before {self.problem.to_objective(before):.12g}, after {step.value:.12g}"
        if violated or after >= before:
            # a proof (and a bound equal to it) was about the state the repair replaced
            self.repaired_away = after != before
            return repaired
        return sigma


def caller_prediction(problem: CanonicalProblem, found: dict[str, Any]) -> dict[str, Any]:
    """A solver's prediction in the caller's units and sign: its ``canonical`` values mapped, the rest kept."""
    values = {name: problem.to_objective(float(v)) for name, v in found.get("canonical", {}).items()}
    return {**{k: v for k, v in found.items() if k != "canonical"}, **values}


def build_result(state: _Solve, sigma: np.ndarray, notes: list[str], steps: list[Step], pool: Any) -> Result:
    """Decode, recompute the caller's objective, attach bound, gap, status and the plan."""
    form, problem, root = state.form, state.problem, state.root
    values = form.decode(sigma)
    canonical_value = problem.value(sigma)
    report = form.constraint_report(values)
    if root.interrupted and report is None and problem.dear_to_read:
        # after Ctrl-C on a big dense K, one read less: the objective is the canonical value mapped
        # back (exact: a power-of-two scale and a shift), not recomputed from the input as well
        objective = problem.to_objective(canonical_value)
    else:
        objective = float(form.evaluate(values))
        _check_consistency(problem, objective, canonical_value)
    info: dict[str, Any] = {}
    parts = state.parts
    if len(parts) == 1:
        info.update(parts[0].info)
    exact = bool(parts) and all(p.exact for p in parts) and not root.interrupted and not state.repaired_away
    if problem.n == 0 or (state.work.n == 0 and not state.repaired_away):
        exact = True
    bound_value, kind = _bound(state, canonical_value, exact, info)
    gap = relative_gap(bound_value, objective)
    if not exact and kind == "certified" and bound_value is not None:
        proof = proves_optimal(form, problem, objective, bound_value)
        if proof["proved"]:
            exact, info["proof"] = True, proof
    info["plan"] = [s.as_dict() for s in steps]
    if len(parts) > 1:
        info["parts"] = [{"spins": int(len(p.idx)), "solver": p.solver, "exact": bool(p.exact)} for p in parts]
    if state.common.explain and parts and parts[0].ranking is not None:
        expl = [p.ranking.explanation() for p in parts if p.ranking is not None]
        info["explanation"] = expl[0] if len(expl) == 1 else {"parts": expl}
    if state.prediction:
        info["prediction"] = state.prediction
    info.update({k: v for k, v in form.describe().items() if k not in ("form", "sense", "n")})
    if state.fixing is not None:
        info["fixed"] = [[problem.labels[int(i)], int(v)] for i, v in zip(state.fixing.fixed,
                                                                             form.decode(state.fixing.values))]
    if root.trace:
        info["trace"] = [(t, problem.to_objective(v)) for t, v in root.trace]
    answers = _answers(form, problem, pool, sigma, objective)
    if answers:
        info["overlaps"] = pool.overlaps()
        info["solutions_origin"] = pool.origin(parts)
    solver = parts[0].solver if len(parts) == 1 else "auto"
    if state.spec is not None:
        solver = state.spec.name
    if problem.n == 0:
        solver = "empty"
    warnings = list(notes) + list(root.warnings)
    if report is not None and not all(c.get("satisfied") for c in report):
        warnings.append("the best state found violates a constraint: "
                        + "; ".join(str(c.get("name")) for c in report if not c.get("satisfied")))
    shown = form.caller_count()  # the caller's variables (a form's own slack variables are left out)
    plain = values[:shown].tolist()
    # Every field is built here from checked parts, so the model is constructed without re-validation:
    # validating a million-entry assignment would cost seconds of the caller's time limit.
    return Result.model_construct(
        form=form.form, assignment=dict(zip(problem.labels[:shown], plain)), array=tuple(plain), objective=objective,
        sense=form.sense, bound=bound_value, bound_kind=cast(Any, kind), gap=gap, exact=exact, solver=solver,
        status=cast(Any, _status(root, steps, exact)), wall_time=root.elapsed(), seed=root.seed,
        warnings=tuple(warnings), feasible=None if report is None else all(c.get("satisfied") for c in report),
        constraints=tuple(jsonable(c) for c in report or ()), solutions=tuple(answers), info=jsonable(info))


def _bound(state: _Solve, canonical_value: float, exact: bool, info: dict[str, Any]) -> tuple[float | None, str | None]:
    problem = state.problem
    if exact:
        return problem.to_objective(canonical_value), "certified"
    b = state.bound
    if b is None:
        return None, None
    info["bound_method"] = b.method
    # the reduced problem's values equal the full problem's (fixed part in its offset)
    return problem.bound_to_objective(max(b.value, canonical_value)), ("certified" if b.certified else "estimated")


def _status(root: SolveContext, steps: list[Step], exact: bool) -> str:
    if root.interrupted:
        return "interrupted"
    if exact:
        return "optimal"
    solving = [s for s in steps if s.kind in ("primary", "improve", "repair")]
    if any(s.outcome == "stopped" or (s.outcome == "skipped" and "left" in s.note) for s in solving):
        return "time-limit"
    return "feasible"


def _answers(form: ProblemForm, problem: CanonicalProblem, pool: Any, sigma: np.ndarray,
             objective: float) -> list[Answer]:
    if pool is None:
        return []
    pool.consider(sigma, problem.value(sigma))
    out = []
    shown = form.caller_count()
    for state, _ in pool.best():
        values = form.decode(state)
        out.append(Answer(assignment=dict(zip(problem.labels[:shown], values[:shown].tolist())),
                          objective=float(form.evaluate(values))))
    return out


def _check_consistency(problem: CanonicalProblem, objective: float, canonical_value: float) -> None:
    """The caller's objective must equal the canonical image; a mismatch is a bug, never silent."""
    via_canonical = problem.to_objective(canonical_value)
    mass = coefficient_mass(problem)
    if abs(objective - via_canonical) > CONSISTENCY_RTOL * max(mass, 1.0) + 1e-12:
        raise InternalError(f"the objective recomputed from the input ({objective!r}) differs from the canonical "
                            f"value ({via_canonical!r})")
