"""The working copy of K shared by the annealing, tabu and IAMP solvers (plugins/common/couplings.py).

Outside check: energies recomputed plainly from the caller's K (tests/references.py own_value).
"""

from __future__ import annotations

import numpy as np
import pytest

from spinward.core import CanonicalProblem, InputError, SolveContext
from spinward.plugins.common import couplings
from tests.references import own_value


def _problem(n: int = 60) -> CanonicalProblem:
    rng = np.random.default_rng(3)
    J = np.triu(rng.standard_normal((n, n)), 1)
    return CanonicalProblem(J + J.T, np.zeros(n))


def test_small_dense_k_gets_a_float32_copy_and_precision_is_checked():
    problem = _problem()
    (K,) = couplings.working_couplings(problem, "auto")
    assert K.dtype == np.float32 and K.flags.c_contiguous
    np.testing.assert_allclose(K, problem.K, rtol=1e-6)
    assert couplings.working_couplings(problem, "float64")[0].dtype == np.float64
    with pytest.raises(InputError, match="precision"):
        couplings.working_couplings(problem, "half")


def test_k_above_the_copy_limit_is_used_as_given(monkeypatch):
    monkeypatch.setattr(couplings, "FLOAT32_COPY_LIMIT", 100)  # bytes: every K counts as large
    problem = _problem()
    (K,) = couplings.working_couplings(problem, "auto")
    assert K is problem.K
    # the solvers still run on the uncopied K, and their values are recomputed from it
    from spinward.plugins import annealing

    sol = annealing.run(problem, SolveContext(rng=np.random.default_rng(0), options={"sweeps": 200}))
    Kd = np.asarray(problem.K)
    assert problem.value(sol.sigma) == pytest.approx(own_value(Kd, np.zeros(60), 0.0, sol.sigma))
