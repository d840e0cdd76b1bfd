"""The plugin registry: specs, verdicts with reasons, names, options, callables."""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest

import spinward
from spinward.core import Capabilities, CanonicalProblem, Registry, Solution, SolverSpec, hookimpl


def _first_spin_up(problem, ctx):
    return Solution(sigma=np.ones(problem.n, dtype=np.int8))


def _spec(name="ones", **kw):
    return SolverSpec(name=name, run=_first_spin_up, **kw)


def test_unknown_method_lists_available_names():
    with pytest.raises(spinward.UnknownMethodError) as err:
        spinward.solve(nx.path_graph(3), method="no-such-solver")
    text = str(err.value)
    assert "no-such-solver" in text and "enumerate" in text and "local" in text and "auto" in text


@pytest.mark.parametrize("old", ["descent", "gauge"])
def test_former_names_have_no_alias(old):
    with pytest.raises(spinward.UnknownMethodError) as err:
        spinward.solve(nx.path_graph(3), method=old)
    text = str(err.value)
    assert f"unknown method {old!r}" in text
    assert all(name in text for name in ("iamp", "unfrustrated", "anneal", "tabu"))


def test_programmatic_registration_and_duplicate_names():
    reg = Registry(autoload=False)
    reg.add_solver(_spec())
    assert reg.names() == ["ones"]
    reg.add_solver(_spec(), name="again")
    with pytest.raises(spinward.PluginError, match="two plugins register a solver named 'ones'"):
        reg.solvers()


def test_hook_module_registration():
    class Plugin:
        @hookimpl
        def spinward_solvers(self):
            return [_spec("plugged")]

    reg = Registry(autoload=False)
    reg.register(Plugin())
    r = spinward.solve(nx.path_graph(4), method="plugged", registry=reg)
    assert r.solver == "plugged" and r.array == (0, 0, 0, 0) and r.objective == 0


def test_can_run_gives_reasons():
    p = CanonicalProblem(np.zeros((5, 5)), np.zeros(5))
    assert _spec(capabilities=Capabilities(max_n=3)).can_run(p) == "n = 5 exceeds its limit of 3 variables"
    assert _spec(check=lambda q: "needs a tree").can_run(p) == "needs a tree"
    assert _spec().can_run(p) is True


def test_callable_method_takes_any_option_and_a_typo_in_a_named_one_is_an_error():
    def all_down(problem, ctx):
        return -np.ones(problem.n)

    r = spinward.solve(nx.path_graph(3), method=all_down, frobnicate=3)
    assert r.solver == "all_down" and r.objective == 0
    with pytest.raises(spinward.InputError, match="local: unknown option 'frobnicate'.*Its options: restarts, initial"):
        spinward.solve(nx.path_graph(3), method="local", frobnicate=3)
    with pytest.raises(spinward.InputError, match="Did you mean 'tenure'"):
        spinward.solve(nx.path_graph(3), method="tabu", tenur=5)


@pytest.mark.parametrize("value", [2.7, "5", True, 0])
def test_wrong_type_or_range_names_the_option(value):
    with pytest.raises(spinward.InputError, match="tabu: option 'tenure'"):
        spinward.solve(nx.path_graph(3), method="tabu", tenure=value)


def test_auto_takes_solver_options_by_name():
    with pytest.raises(spinward.InputError, match="solver_options"):
        spinward.solve(nx.path_graph(30), sweeps=10)
    with pytest.raises(spinward.InputError, match="anneal: unknown option 'sweep'"):
        spinward.solve(nx.path_graph(30), solver_options={"anneal": {"sweep": 10}})
    with pytest.raises(spinward.UnknownMethodError):
        spinward.solve(nx.path_graph(30), solver_options={"no-such": {}})
    r = spinward.solve(nx.petersen_graph(), seed=0, solver_options={"anneal": {"sweeps": 300, "restarts": 4}},
                       candidates=("anneal",))
    assert r.solver == "anneal" and r.info["restarts"] == 4
    assert r.objective == 12  # Petersen graph MaxCut = 12 (graph-theory folklore, from memory)


def test_solver_returning_wrong_shape_is_caught():
    reg = Registry(autoload=False)
    reg.add_solver(SolverSpec(name="broken", run=lambda p, c: Solution(sigma=np.ones(p.n + 1))))
    with pytest.raises(spinward.InternalError, match="expected 3 spins"):
        spinward.solve(nx.path_graph(3), method="broken", registry=reg)


def test_fieldless_solver_gets_gauge_spin():
    seen = {}

    def run(problem, ctx):
        seen["n"], seen["fields"] = problem.n, problem.has_fields
        from spinward.plugins.enumeration import run as enum

        return enum(problem, ctx)

    reg = Registry(autoload=False)
    reg.add_solver(SolverSpec(name="nofields", run=run, capabilities=Capabilities(fields=False)))
    J = np.triu(np.random.default_rng(0).normal(size=(6, 6)), 1)
    h = np.random.default_rng(1).normal(size=6)
    r = spinward.solve(spinward.Ising(J, h), method="nofields", registry=reg)
    assert seen == {"n": 7, "fields": False}
    from tests.references import brute_ising_min

    assert r.objective == pytest.approx(brute_ising_min(J, h))


def test_bad_name_and_run_rejected():
    with pytest.raises(spinward.PluginError):
        SolverSpec(name="has space", run=_first_spin_up)
    with pytest.raises(spinward.PluginError):
        SolverSpec(name="x", run=None)
