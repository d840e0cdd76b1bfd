"""The demo's scenario: a balanced two-band split, against scipy.optimize.milp with the balance as a linear constraint."""

from __future__ import annotations

import numpy as np
import pytest

from spinward.demo import run_demo, transmitter_graph
from tests.references import milp_maxcut


def test_demo_splits_12_and_12_and_proves_it():
    text = run_demo()
    assert "Band A (12 transmitters)" in text and "Band B (12 transmitters)" in text
    assert "Constraint '12 per band': satisfied" in text and "proved optimal" in text
    assert "best split is 10 + 14" in text  # the rule binds: without it the best split is unbalanced


@pytest.mark.slow
def test_demo_optimum_matches_milp_with_the_balance_as_a_linear_constraint():
    g = transmitter_graph()
    index = {u: k for k, u in enumerate(g.nodes)}
    edges = [(index[u], index[v], d["weight"]) for u, v, d in g.edges(data=True)]
    reference = milp_maxcut(24, edges, linear=[(np.ones(24), 12, 12)])  # reference: HiGHS, zero gap (about 8 s)
    assert f"removed by the split: {reference:.4f}" in run_demo()
