"""Solver and bound specs, and the pluggy-backed registry that collects them.

Core knows no solver by name: the face hands the registry a list of built-in
plugin modules, and entry points add third-party ones.
"""

from __future__ import annotations

import importlib
import inspect
import os
import re
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any, Callable, Iterable, Mapping, Sequence

import numpy as np
import pluggy
from pydantic import BaseModel

from .canonical import CanonicalProblem
from .context import SolveContext
from .errors import PluginError, UnknownMethodError
from .hookspec import AUTOLOAD_ENV, ENTRY_POINT_GROUP, PROJECT, SolverHooks
from .options import AnyOptions, model_from_mapping, read_options

_NAME = re.compile(r"[A-Za-z][A-Za-z0-9_.\-]*")


@dataclass(frozen=True)
class Capabilities:
    """What a solver declares about itself, once; dispatch reads only this and ``check``."""

    exact: bool = False          # proves optimality when it finishes
    fields: bool = True          # handles b ≠ 0 (else the core adds a ghost spin)
    dense: bool = True           # accepts dense K
    sparse: bool = True          # accepts sparse K efficiently
    operator: bool = False       # accepts a matrix-free LinearOperator K
    stochastic: bool = True      # result depends on the seed
    max_n: int | None = None     # hard size limit
    warm_start: bool = False     # accepts option "initial" (canonical ±1 start state) to improve on
    several: bool = False        # can give several distinct good states (``solutions=k``): it reads ctx.solutions
    assumptions: tuple[str, ...] = ()  # plain-words conditions for its guarantees


@dataclass(frozen=True)
class Solution:
    """What a solver returns: canonical spins and what it can prove about them.

    ``bound`` is an upper bound on the canonical maximum, if the solver has one.
    ``status`` may be left None: the core derives it from the clock and flags.
    """

    sigma: np.ndarray
    exact: bool = False
    status: str | None = None
    bound: float | None = None
    info: Mapping[str, Any] = field(default_factory=dict)


@dataclass(frozen=True)
class Advice:
    """A plain-words note from a solver about how this problem meets its assumptions.

    ``text`` is complete in canonical terms.  When ``topic`` names something a problem form
    can say in its own terms ("mean-part", "ghost-spin"; see ``ProblemForm.phrase``), the
    front door puts the form's sentence first, with ``values`` (canonical units).
    """

    text: str
    topic: str | None = None
    values: Mapping[str, float] = field(default_factory=dict)
    lead: str = ""               # what ``topic`` is, in canonical terms (used when the form has no words of its own)

    def worded(self, phrase: str | None) -> str:
        """The message, opened by the form's own words for the topic when it has some."""
        opening = phrase or self.lead
        return f"{opening}. {self.text}" if opening else self.text


RunFn = Callable[[CanonicalProblem, SolveContext], Solution]
CheckFn = Callable[[CanonicalProblem], "bool | str"]
FitFn = Callable[..., float]
AdviseFn = Callable[[CanonicalProblem, Any], "list[Advice]"]
PredictFn = Callable[[CanonicalProblem, Any], "dict[str, Any] | None"]
CostFn = Callable[[CanonicalProblem], float]


@dataclass(frozen=True)
class SolverSpec:
    """A registered solver: its name, entry point, capabilities, options and hooks.

    ``options`` is a :class:`~spinward.core.options.SolverOptions` subclass (or, for a third
    party, a ``{name: default}`` mapping); ``spec.options`` then reads as the mapping of
    defaults and ``spec.options_model`` as the model.  Optional hooks:

    - ``check(problem)``: True, or a reason in plain words why it cannot run (cheap: no search);
    - ``fit(profile[, budget])``: how well it suits the problem ("auto" takes the highest score;
      ``budget`` is the part's seconds, or None without a time limit);
    - ``advise(problem, profile)``: :class:`Advice` when the problem breaks its assumptions;
    - ``predict(problem, profile)``: a prediction, ``{"canonical": {"optimum": value, ...}, ...}``: the
      values under "canonical" are in canonical units (the result shows them in the caller's), the other
      entries (a source, a note) are kept as they are;
    - ``cost(problem)``: predicted seconds of a run without a time limit (deterministic; used to
      size the bounds' share).

    ``first_reads`` is how many full reads of K the solver needs before it holds a first state
    (fields, a sweep, the closing climb).  Under a time limit, the runner skips it when its
    budget holds fewer reads than that, as the profile timed them: on a big memory-mapped K a
    read takes a third of a second, and a solver started anyway could not stop in time.  A
    solver whose first state costs more than reads (products with a wide factor, say) gives
    ``first_seconds(problem, read_seconds)`` instead.
    """

    name: str
    run: RunFn
    capabilities: Capabilities = Capabilities()
    summary: str = ""
    options: Any = field(default_factory=dict)
    check: CheckFn | None = None
    fit: FitFn | None = None
    advise: AdviseFn | None = None
    predict: PredictFn | None = None
    cost: CostFn | None = None
    first_reads: float = 3.0
    first_seconds: Callable[[CanonicalProblem, float], float] | None = None
    options_model: Any = field(init=False, repr=False, compare=False, default=None)  # set from ``options``

    def __post_init__(self) -> None:
        if not isinstance(self.name, str) or not _NAME.fullmatch(self.name):
            raise PluginError(f"solver name must be an identifier-like string, got {self.name!r}")
        if not callable(self.run):
            raise PluginError(f"solver {self.name!r}: run must be callable, got {self.run!r}")
        model = self.options
        if isinstance(model, Mapping):
            model = model_from_mapping(self.name, model)
        elif not (isinstance(model, type) and issubclass(model, BaseModel)):
            raise PluginError(f"solver {self.name!r}: options must be a SolverOptions model or a mapping of "
                              f"defaults, got {model!r}")
        object.__setattr__(self, "options_model", model)
        defaults = {} if model is AnyOptions else {k: f.default for k, f in model.model_fields.items()}
        object.__setattr__(self, "options", MappingProxyType(defaults))

    def read_options(self, given: Mapping[str, Any]) -> dict[str, Any]:
        """``given`` checked against this solver's options, completed with the defaults."""
        return read_options(self.name, self.options_model, given)

    def can_run(self, problem: CanonicalProblem) -> "bool | str":
        """True, or a reason in plain words why this solver cannot run on ``problem``."""
        caps = self.capabilities
        if caps.max_n is not None and problem.n > caps.max_n:
            return f"n = {problem.n} exceeds its limit of {caps.max_n} variables"
        if problem.kind == "operator" and not caps.operator:
            return "it needs explicit couplings, not a LinearOperator"
        if problem.kind == "dense" and not caps.dense:
            return "it does not take dense couplings"
        if self.check is not None:
            verdict = self.check(problem)
            if verdict is not True:
                return str(verdict) if verdict else "its own check declined the problem"
        return True

    def score(self, profile: Any, budget: float | None = None) -> float:
        """``fit(profile, budget)`` (or ``fit(profile)`` for a one-argument fit); 0 without a fit."""
        if self.fit is None:
            return 0.0
        if _arity(self.fit) >= 2:
            return float(self.fit(profile, budget))
        return float(self.fit(profile))


def _arity(fn: Callable[..., Any]) -> int:
    try:
        params = inspect.signature(fn).parameters.values()
    except (TypeError, ValueError):
        return 1
    return sum(p.kind in (p.POSITIONAL_ONLY, p.POSITIONAL_OR_KEYWORD) for p in params)


@dataclass(frozen=True)
class Bound:
    """An upper bound on the canonical maximum; ``certified`` only when proved."""

    value: float
    certified: bool
    method: str
    info: Mapping[str, Any] = field(default_factory=dict)


@dataclass(frozen=True)
class BoundSpec:
    """A bound provider: ``compute(problem, ctx) -> Bound | None``.

    ``cost(problem)`` predicts its seconds (deterministic, from the size); the plan runs a
    provider only when that fits its share.  Without a time limit the provider reads its
    allowance from ``ctx.option("budget", None)`` (seconds of predicted cost) and must decide
    what to compute from it, never from the clock, so that the same seed gives the same bound.
    """

    name: str
    compute: Callable[[CanonicalProblem, SolveContext], "Bound | None"]
    summary: str = ""
    check: CheckFn | None = None
    priority: int = 0  # providers run in descending priority while time remains
    cost: CostFn | None = None

    def applies(self, problem: CanonicalProblem) -> "bool | str":
        return True if self.check is None else self.check(problem)


def callable_spec(fn: Callable[..., Any]) -> SolverSpec:
    """Wrap a plain callable ``fn(problem, ctx) -> Solution | spins`` as an ad-hoc spec."""

    def run(problem: CanonicalProblem, ctx: SolveContext) -> Solution:
        out = fn(problem, ctx)
        return out if isinstance(out, Solution) else Solution(sigma=np.asarray(out))

    name = getattr(fn, "__name__", "callable").replace("<", "").replace(">", "") or "callable"
    return SolverSpec(name=name, run=run, summary="caller-supplied callable", options=AnyOptions)


class Registry:
    """Collects solver and bound specs from plugins through pluggy."""

    def __init__(self, builtin_modules: Sequence[str] = (), *, autoload: bool | None = None) -> None:
        self._pm = pluggy.PluginManager(PROJECT)
        self._pm.add_hookspecs(SolverHooks)
        self._cache: dict[str, SolverSpec] | None = None
        for module_name in builtin_modules:
            self.register(importlib.import_module(module_name), name=module_name)
        if autoload is None:
            autoload = not os.environ.get(AUTOLOAD_ENV)
        if autoload:
            self._pm.load_setuptools_entrypoints(ENTRY_POINT_GROUP)

    def register(self, plugin: object, name: str | None = None) -> None:
        """Register a plugin object or module carrying ``@hookimpl`` functions."""
        self._pm.register(plugin, name=name)
        self._cache = None

    def unregister(self, name: str) -> None:
        self._pm.unregister(name=name)
        self._cache = None

    def add_solver(self, spec: SolverSpec, *, name: str | None = None) -> None:
        """Register one spec programmatically (through the same hook)."""
        self.register(_SinglePlugin(solvers=[spec]), name=name or f"solver:{spec.name}")

    def add_bound(self, spec: BoundSpec) -> None:
        self.register(_SinglePlugin(bounds=[spec]), name=f"bound:{spec.name}")

    def solvers(self) -> Mapping[str, SolverSpec]:
        """All solver specs by name, in registration order."""
        if self._cache is None:
            specs: dict[str, SolverSpec] = {}
            for batch in reversed(self._pm.hook.spinward_solvers()):
                for spec in batch or ():
                    if not isinstance(spec, SolverSpec):
                        raise PluginError(f"a plugin returned {spec!r}, expected a SolverSpec")
                    if spec.name in specs:
                        raise PluginError(f"two plugins register a solver named {spec.name!r}")
                    specs[spec.name] = spec
            self._cache = specs
        return MappingProxyType(self._cache)

    def bounds(self) -> list[BoundSpec]:
        """All bound providers, highest priority first."""
        found = [b for batch in self._pm.hook.spinward_bounds() for b in (batch or ())]
        for b in found:
            if not isinstance(b, BoundSpec):
                raise PluginError(f"a plugin returned {b!r}, expected a BoundSpec")
        return sorted(found, key=lambda b: (-b.priority, b.name))

    def names(self) -> list[str]:
        return list(self.solvers())

    def get(self, name: str) -> SolverSpec:
        try:
            return self.solvers()[name]
        except KeyError:
            raise UnknownMethodError(
                f"unknown method {name!r}; available: {', '.join(['auto', *sorted(self.names())])}"
            ) from None

    def verdicts(self, problem: CanonicalProblem) -> dict[str, "bool | str"]:
        """Every solver's answer to ``can_run(problem)``."""
        return {name: spec.can_run(problem) for name, spec in self.solvers().items()}


class _SinglePlugin:
    """A tiny plugin object for programmatic registration."""

    def __init__(self, solvers: Iterable[SolverSpec] = (), bounds: Iterable[BoundSpec] = ()) -> None:
        self._solvers = list(solvers)
        self._bounds = list(bounds)

    @pluggy.HookimplMarker(PROJECT)
    def spinward_solvers(self) -> list[SolverSpec]:
        return self._solvers

    @pluggy.HookimplMarker(PROJECT)
    def spinward_bounds(self) -> list[BoundSpec]:
        return self._bounds
