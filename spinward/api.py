"""The public front door: ``solve()`` and the default registry of solvers.

This face module is the only place that brings adapters, plugins and core together.
"""

from __future__ import annotations

import threading
from typing import Any, Callable

import numpy as np

from .adapters import as_form
from .core.canonical import CanonicalProblem
from .core.frontdoor import check_options as _check_options
from .core.frontdoor import solve_form
from .core.registry import BoundSpec, Registry, SolverSpec
from .core.result import Result

#: built-in plugins, registered through the same hook a third party uses
BUILTIN_PLUGINS: tuple[str, ...] = (
    "spinward.plugins.enumeration",
    "spinward.plugins.localsearch",
    "spinward.plugins.structure",
    "spinward.plugins.sdp",
    "spinward.plugins.annealing",
    "spinward.plugins.tabu",
    "spinward.plugins.iamp",
    "spinward.plugins.milp",
)

_lock = threading.Lock()
_registry: Registry | None = None


def default_registry() -> Registry:
    """The process-wide registry: built-ins plus entry-point plugins (created on first use)."""
    global _registry
    with _lock:
        if _registry is None:
            _registry = Registry(BUILTIN_PLUGINS)
        return _registry


def reset_registry() -> None:
    """Forget the process-wide registry (tests; re-reads entry points on next use)."""
    global _registry
    with _lock:
        _registry = None


def register(plugin: object, name: str | None = None) -> None:
    """Register a plugin object or module carrying ``@hookimpl`` functions."""
    default_registry().register(plugin, name=name)


def register_solver(spec: SolverSpec) -> None:
    """Register one solver spec programmatically."""
    default_registry().add_solver(spec)


def register_bound(spec: BoundSpec) -> None:
    default_registry().add_bound(spec)


def solvers() -> list[str]:
    """Names of the registered solvers."""
    return default_registry().names()


def solve(problem: Any, *, method: str | Callable[..., Any] | SolverSpec = "auto", time_limit: float | None = None,
          seed: int | np.random.Generator | None = None, registry: Registry | None = None, **options: Any) -> Result:
    """Solve a QUBO, Ising or MaxCut problem and return the answer in the caller's terms.

    Senses: QUBO and Ising minimise, MaxCut maximises (see ``Result.sense``).

    Parameters
    ----------
    problem
        ``QUBO``, ``Ising`` or ``MaxCut``; a networkx graph (MaxCut); a square
        array, sparse matrix or ``{(i, j): q}`` dict (QUBO).
    method
        A registered solver name, "auto" (choose by the problem), a SolverSpec,
        or a callable ``fn(canonical_problem, ctx) -> spins``.
    time_limit
        Wall-clock seconds; solvers return their best state when it passes.
    seed
        int or numpy Generator; None draws one and records it in the result.
    options
        Passed to the solver; an option it does not know is named in a warning.
        Common ones: ``bound=False`` skips the bound.

    Examples
    --------
    >>> import networkx as nx, spinward
    >>> spinward.solve(nx.petersen_graph()).objective
    12.0
    """
    form = as_form(problem)
    reg = registry or default_registry()
    return solve_form(form, registry=reg, method=method, time_limit=time_limit, seed=seed, **options)


def check_options(method: Any = "auto", options: dict[str, Any] | None = None, *,
                  registry: Registry | None = None) -> None:
    """Check a method and its options as ``solve`` would, without solving anything.

    Raises UnknownMethodError for an unknown solver name and InputError for an unknown
    option (with the solver's options listed and a close match suggested), a wrong type or
    an out-of-range value.  Benchmark suites call this when they are loaded.
    """
    _check_options(method, dict(options or {}), registry or default_registry())


def canonical(problem: Any) -> CanonicalProblem:
    """The canonical problem (maximise ½σᵀKσ + bᵀσ + k₀) behind any accepted input."""
    return as_form(problem).canonical()
