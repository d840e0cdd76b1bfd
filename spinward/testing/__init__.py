"""Conformance checks for a solver plugin: ``check_solver(spec)``.

Run it in your plugin's tests::

    from spinward.testing import check_solver
    from my_plugin import SPEC

    def test_conforms():
        check_solver(SPEC)

It solves small QUBO, Ising and MaxCut problems whose optimum it finds by brute force
(every state, written plainly here), and checks: no error other than a declined problem;
the objective is recomputed correctly and never beats the optimum; a result marked exact
is optimal; a certified bound holds; the time limit is honoured; a stop request (as Ctrl-C
makes) returns the best state offered so far; the declared options are accepted with
their defaults and an unknown option is refused.  A solver that declines every problem
fails.  Failures are collected and raised together as one AssertionError.
"""

from __future__ import annotations

import itertools
import threading
import time
import warnings
from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np

import spinward
from spinward.core.registry import SolverSpec

#: how long past its limit a solve may return here (generous for shared CI machines)
TIME_SLACK = 0.5


@dataclass
class Report:
    """What :func:`check_solver` found: the checks that ran, and the failures."""

    solver: str
    ran: int = 0
    declined: int = 0
    failures: list[str] = field(default_factory=list)


def check_solver(spec: SolverSpec, *, seed: int = 0, time_limit: float = 0.3, cases: int = 10) -> Report:
    """Run every conformance check on ``spec``; raise AssertionError listing what failed."""
    report = Report(spec.name)
    rng = np.random.default_rng(seed)
    for k in range(cases):
        _check_small(spec, _small_case(k, rng), report)
    if report.ran == 0:
        report.failures.append(f"{spec.name!r} declined every problem it was given ({report.declined})")
    else:
        _check_time_limit(spec, time_limit, report)
        _check_stop(spec, report)
        _check_options(spec, report)
    if report.failures:
        raise AssertionError(f"solver {spec.name!r} fails {len(report.failures)} check(s):\n- "
                             + "\n- ".join(report.failures))
    return report


@dataclass
class _Case:
    form: Any
    objective: Callable[[dict], float]
    labels: list
    domain: tuple[int, int]
    sense: str

    def optimum(self) -> float:
        values = [self.objective(dict(zip(self.labels, v))) for v in itertools.product(self.domain,
                                                                                        repeat=len(self.labels))]
        return min(values) if self.sense == "min" else max(values)


def _small_case(k: int, rng: np.random.Generator) -> _Case:
    """Five kinds in turn: a QUBO, an Ising model, a MaxCut graph, a ferromagnet with fields, a weighted tree."""
    n = 5 + k
    kind = k % 5
    if kind == 0:
        Q = np.round(rng.normal(size=(n, n)), 2)
        return _Case(spinward.QUBO(Q), lambda a: float(np.array([a[i] for i in range(n)]) @ Q
                                                       @ np.array([a[i] for i in range(n)])),
                     list(range(n)), (0, 1), "min")
    if kind in (1, 3):
        J = np.triu(np.round(rng.normal(size=(n, n)), 2), 1)
        if kind == 3:  # J ≥ 0: ferromagnetic, for the minimum-cut solvers
            J = np.abs(J)
        h = np.round(rng.normal(size=n), 2)

        def energy(s: dict) -> float:
            x = np.array([s[i] for i in range(n)], dtype=float)
            return float(-x @ J @ x - h @ x)

        return _Case(spinward.Ising(J, h), energy, list(range(n)), (-1, 1), "min")
    import networkx as nx

    g = (nx.gnp_random_graph(n, 0.5, seed=int(rng.integers(1 << 30))) if kind == 2
         else nx.random_labeled_tree(n, seed=int(rng.integers(1 << 30))))  # a tree: no frustrated cycle
    for u, v in g.edges:
        g.edges[u, v]["weight"] = float(np.round(rng.normal(), 2))
    return _Case(spinward.MaxCut(g), lambda side: sum(d["weight"] for u, v, d in g.edges(data=True)
                                                      if side[u] != side[v]), list(g.nodes), (0, 1), "max")


def _solve(spec: SolverSpec, form: Any, **kw: Any) -> Any:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return spinward.solve(form, method=spec, **kw)


def _check_small(spec: SolverSpec, case: _Case, report: Report) -> None:
    try:
        r = _solve(spec, case.form, seed=0)
    except spinward.SolverUnsuitableError:
        report.declined += 1
        return
    except Exception as exc:  # the point of the check: any other error is a failure
        report.failures.append(f"{type(exc).__name__} on a {case.form.form} problem: {exc}")
        return
    report.ran += 1
    opt = case.optimum()
    tol = 1e-9 * (1 + abs(opt))
    direct = case.objective(r.assignment)
    better = (lambda a, b: a < b - tol) if case.sense == "min" else (lambda a, b: a > b + tol)
    where = f"{case.form.form} n = {len(case.labels)}"
    if abs(r.objective - direct) > tol:
        report.failures.append(f"{where}: objective {r.objective} but the state's own value is {direct}")
    if better(r.objective, opt):
        report.failures.append(f"{where}: objective {r.objective} beats the brute-force optimum {opt}")
    if r.exact and abs(r.objective - opt) > tol:
        report.failures.append(f"{where}: marked exact, but {r.objective} is not the optimum {opt}")
    if r.bound is not None and r.bound_kind == "certified" and better(opt, r.bound):
        report.failures.append(f"{where}: certified bound {r.bound} is violated by the optimum {opt}")


def _check_time_limit(spec: SolverSpec, limit: float, report: Report) -> None:
    rng = np.random.default_rng(1)
    form = spinward.Ising(np.triu(rng.normal(size=(400, 400)), 1))
    t0 = time.perf_counter()
    try:
        _solve(spec, form, seed=0, time_limit=limit)
    except spinward.SolverUnsuitableError:
        return
    wall = time.perf_counter() - t0
    if wall > limit + max(0.05 * limit, 0.25) + TIME_SLACK:
        report.failures.append(f"time limit {limit} s: the solve returned after {wall:.2f} s")


def _check_stop(spec: SolverSpec, report: Report) -> None:
    """A stop request (what Ctrl-C does) must end the run with the best state offered so far."""
    rng = np.random.default_rng(2)
    problem = spinward.canonical(spinward.Ising(np.triu(rng.normal(size=(300, 300)), 1)))
    if spec.can_run(problem) is not True:
        return
    ctx = spinward.SolveContext(rng=np.random.default_rng(0), options=spec.read_options({}))
    timer = threading.Timer(0.2, lambda: setattr(ctx, "interrupted", True))
    timer.start()
    t0 = time.perf_counter()
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            sol = spec.run(problem, ctx)
    except spinward.SolverUnsuitableError:
        timer.cancel()
        return
    finally:
        timer.cancel()
    if time.perf_counter() - t0 > 0.2 + 0.5 + TIME_SLACK and ctx.interrupted:
        report.failures.append(f"a stop request was honoured only after {time.perf_counter() - t0:.2f} s")
    if ctx.best_sigma is not None and problem.value(np.asarray(sol.sigma)) < ctx.best_value - 1e-9 * (
            1 + abs(ctx.best_value)):
        report.failures.append("after a stop request it returned a state worse than one it had offered")


def _check_options(spec: SolverSpec, report: Report) -> None:
    defaults = {k: v for k, v in spec.options.items() if k != "initial"}
    try:
        spec.read_options(defaults)
    except spinward.InputError as exc:
        report.failures.append(f"its declared defaults are refused: {exc}")
    if spec.options_model.model_config.get("extra") == "forbid":
        try:
            spec.read_options({"no_such_option_for_the_check": 1})
            report.failures.append("an unknown option was accepted")
        except spinward.InputError:
            pass
