"""When a certified bound proves optimality: an absolute rule by the data's resolution, never a relative one.

Outside references: scipy's s–t minimum cut through the `mincut` solver is checked elsewhere against
brute force; here the optimum of ferromagnetic instances comes from plain enumeration in this file
(n ≤ 12) or from `mincut` (n = 30), and the resolution facts are elementary binary arithmetic.
"""

from __future__ import annotations

import itertools
import warnings

import numpy as np
import pytest

import spinward
from spinward.adapters.validate import dyadic_resolution
from spinward.core.proof import float_tolerance, proves_optimal


@pytest.mark.parametrize("values, expected", [
    ([[1.0, -2.0], [3.0, 4.0]], 1.0),        # integers
    ([0.5, 1.25, -3.0], 0.25),               # quarters
    ([1e12, 3.0, 0.125], 0.125),             # a huge integer beside an eighth
    ([0.1, 1.0], None),                      # 0.1 is no short binary fraction
    ([0.0, 0.0], 1.0),                       # nothing but zeros
])
def test_dyadic_resolution(values, expected):
    assert dyadic_resolution(np.asarray(values)) == expected


def test_huge_couplings_with_unit_fields_make_no_false_proof():
    """J = 1e12 on every pair with random ±1 fields: a relative 1e-12 test would call every state optimal."""
    n = 30
    claims = 0
    for seed in range(4):
        h = np.random.default_rng(seed).choice([-1.0, 1.0], n)
        model = spinward.Ising(np.triu(np.full((n, n), 1e12), 1), h)
        best = spinward.solve(model, method="mincut").objective
        for method in ("local", "spectral"):
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                r = spinward.solve(model, method=method, seed=seed)
            if r.exact:
                claims += 1
                assert r.objective == best, (method, seed, r.objective, best)
    assert claims <= 8


def _brute_min(J, h):
    n = len(h)
    best = np.inf
    for bits in itertools.product((-1.0, 1.0), repeat=n):
        s = np.array(bits)
        best = min(best, -s @ np.triu(J, 1) @ s - h @ s)
    return best


def test_integer_data_is_proved_by_a_bound_within_one():
    rng = np.random.default_rng(3)
    J = np.triu(rng.integers(-3, 4, size=(10, 10)).astype(float), 1)
    h = rng.integers(-2, 3, size=10).astype(float)
    form = spinward.Ising(J, h)
    problem = form.canonical()
    opt = _brute_min(J, h)
    assert proves_optimal(form, problem, opt, opt - 0.9)["proved"]
    assert not proves_optimal(form, problem, opt + 1, opt - 0.5)["proved"]  # a state one unit worse
    assert proves_optimal(form, problem, opt, opt - 0.9)["rule"] == "resolution"


def test_float_data_needs_the_float_tolerance_and_a_visible_smallest_term():
    rng = np.random.default_rng(4)
    J = np.triu(rng.normal(size=(8, 8)), 1)
    h = 1e-3 * rng.normal(size=8)
    form = spinward.Ising(J, h)
    problem = form.canonical()
    tau = float_tolerance(problem)
    assert proves_optimal(form, problem, 1.0, 1.0 - tau / 2)["proved"]
    assert not proves_optimal(form, problem, 1.0, 1.0 - 3 * tau)["proved"]
    huge = spinward.Ising(1e12 * J, h)  # now τ dwarfs the fields: nothing within τ is a proof
    hp = huge.canonical()
    assert not proves_optimal(huge, hp, 5.0, 5.0 - float_tolerance(hp) / 2)["proved"]
