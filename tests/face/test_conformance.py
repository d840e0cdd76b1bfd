"""Plugin conformance: the same properties for every registered solver, third-party ones included.

Outside reference: brute force over every assignment, computed from the caller's
own input in tests/conformance.py.  Properties: no exception other than the
project's own errors; labels round-trip; the objective equals its direct
recomputation; a certified bound holds; a result marked exact is optimal.
"""

from __future__ import annotations

import os

import pytest
from hypothesis import HealthCheck, given, settings

import spinward
from tests.conformance import any_case, check_result

EXAMPLES = int(os.environ.get("SPINWARD_FUZZ_EXAMPLES", "12"))
SOLVERS = spinward.solvers()


@pytest.mark.parametrize("name", SOLVERS)
@settings(max_examples=EXAMPLES, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(case=any_case)
def test_solver_conformance(name, case):
    try:
        r = spinward.solve(case.form, method=name, seed=0)
    except spinward.SolverUnsuitableError:
        return  # the solver declined with a reason: allowed
    assert r.solver == (name if case.labels else "empty")
    check_result(case, r)


@settings(max_examples=EXAMPLES * 3, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(case=any_case)
def test_auto_conformance(case):
    r = spinward.solve(case.form, seed=1)
    check_result(case, r)
    assert r.exact  # tiny problems are always solved exactly by "auto"


@pytest.mark.parametrize("name", SOLVERS)
def test_builtin_passes_the_public_conformance_check(name):
    """spinward.testing.check_solver: brute force (its own), bounds, the time limit, a stop request, options."""
    from spinward.testing import check_solver

    report = check_solver(spinward.default_registry().get(name))
    assert report.ran + report.declined == 10


def test_conformance_check_fails_a_solver_that_declines_everything():
    from spinward.testing import check_solver

    def never(problem, ctx):
        raise spinward.SolverUnsuitableError("this solver takes nothing")

    with pytest.raises(AssertionError, match="declined every problem"):
        check_solver(spinward.SolverSpec(name="never", run=never))


def test_conformance_check_catches_a_wrong_answer():
    import numpy as np

    from spinward.testing import check_solver

    def liar(problem, ctx):  # claims optimality for an arbitrary state
        return spinward.Solution(sigma=np.ones(problem.n, dtype=np.int8), exact=True)

    with pytest.raises(AssertionError, match="marked exact"):
        check_solver(spinward.SolverSpec(name="liar", run=liar))
