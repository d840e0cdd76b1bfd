"""Simulated annealing ("anneal"): brute-force optima, values recomputed, seeds repeat, clock honoured, SK energy.

Everything runs at the canonical level: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀.
"""

from __future__ import annotations

import time

import numpy as np
import pytest
import scipy.sparse as sp

from spinward.core import CanonicalProblem, InputError, SolveContext
from tests.references import brute_max, heuristic_misses, own_value, random_instance
from spinward.plugins import annealing


def solve(K, b, k0, seed=0, time_limit=None, **options):
    problem = CanonicalProblem(K, np.asarray(b, dtype=np.float64), k0)
    ctx = SolveContext(rng=np.random.default_rng(seed), time_limit=time_limit, options=options)
    return annealing.SPEC.run(problem, ctx), ctx


@pytest.mark.parametrize("options", [
    {}, {"rule": "heat-bath"}, {"schedule": "geometric", "sweeps": 300}, {"precision": "float64"},
])
@pytest.mark.parametrize("sparse", [False, True])
def test_small_instances_reach_the_brute_force_optimum(options, sparse):
    # reference: brute force over all states (tests/references.py)
    assert heuristic_misses(solve, options, sparse=sparse, seed=7) <= 1  # "with high probability", not always


def test_reported_state_is_valid_and_its_value_recomputed():
    rng = np.random.default_rng(11)
    K, b, k0 = random_instance(rng, 60)
    sol, ctx = solve(K, b, k0, seed=3)
    assert sol.sigma.dtype == np.int8 and set(np.unique(sol.sigma)) <= {-1, 1}
    assert ctx.best_value == pytest.approx(own_value(K, b, k0, sol.sigma), abs=1e-9)
    assert sol.info["schedule_finished"] is True and sol.info["sweeps"] == 1000
    # a 1-flip local optimum: no single flip gains (the final clean-up)
    h = K @ sol.sigma + b
    assert np.all(-2.0 * sol.sigma * h <= 1e-9)


@pytest.mark.parametrize("sparse", [False, True])
def test_same_seed_same_answer(sparse):
    rng = np.random.default_rng(5)
    K, b, k0 = random_instance(rng, 200)
    K = sp.csr_array(K) if sparse else K
    first, _ = solve(K, b, k0, seed=42, sweeps=200, restarts=3)
    second, _ = solve(K, b, k0, seed=42, sweeps=200, restarts=3)
    assert np.array_equal(first.sigma, second.sigma)
    assert first.info == second.info


def test_time_limit_is_honoured_and_best_state_kept():
    rng = np.random.default_rng(2)
    n = 1500
    J = np.triu(rng.standard_normal((n, n)), 1)
    J = J + J.T
    t0 = time.perf_counter()
    sol, ctx = solve(J, np.zeros(n), 0.0, seed=1, time_limit=0.5, sweeps=10**6)
    elapsed = time.perf_counter() - t0
    assert elapsed < 5.0  # generous: a clock check, not a speed test
    assert sol.info["schedule_finished"] is False
    assert ctx.best_value == pytest.approx(own_value(J, np.zeros(n), 0.0, sol.sigma))


def test_options_are_checked():
    K, b, k0 = random_instance(np.random.default_rng(0), 5)
    for bad in ({"sweeps": 0}, {"schedule": "cosine"}, {"rule": "glauber-ish"}, {"beta_span": (2.0, 1.0)},
                {"precision": "float16"}):
        with pytest.raises(InputError):
            solve(K, b, k0, **bad)


def test_schedule_follows_the_coupling_scale():
    # Scaling K by 10 must scale β by 1/10: the dynamics, hence the answer, are unchanged.
    rng = np.random.default_rng(9)
    K, b, k0 = random_instance(rng, 80)
    small, _ = solve(K, b, k0, seed=4, sweeps=300)
    large, _ = solve(10.0 * K, 10.0 * b, k0, seed=4, sweeps=300)
    assert np.array_equal(small.sigma, large.sigma)
    assert large.info["beta_span"][0] == pytest.approx(small.info["beta_span"][0] / 10.0)


def sk_energy_per_spin(n: int, seed: int, time_limit: float | None = None, **options) -> float:
    """e = H/n^{3/2} with H = Σ_{i<j} J_ij σ_i σ_j, J ~ N(0,1); canonical K = J, so C = H."""
    rng = np.random.default_rng(seed)
    J = np.triu(rng.standard_normal((n, n)), 1)
    J = J + J.T
    sol, _ = solve(J, np.zeros(n), 0.0, seed=seed, time_limit=time_limit, **options)
    return own_value(J, np.zeros(n), 0.0, sol.sigma) / n**1.5


def test_sk_1000_reaches_the_expected_energy():
    # Parisi ground state P* = 0.7632 with finite-size correction e_n ≈ P* − A n^{-2/3}, A ~ 0.7
    # (REFERENCES: Crisanti & Rizzo 2002; Boettcher 2005; both from memory): e_1000 ≈ 0.756.
    # 1000 sweeps of annealing should land within about 2% of that.
    e = sk_energy_per_spin(1000, seed=1)
    assert 0.74 <= e <= 0.7632 + 0.01


def test_time_limited_run_fits_its_schedules_to_the_clock():
    # No sweeps given: schedules are sized to the time left, so the answer is a cooled state
    # (same SK reference as above, from memory), not one cut off while hot.
    t0 = time.perf_counter()
    e = sk_energy_per_spin(1000, seed=3, time_limit=1.0)
    assert time.perf_counter() - t0 < 4.0  # generous: a clock check, not a speed test
    assert 0.74 <= e <= 0.7632 + 0.01


@pytest.mark.slow
def test_sk_2000_long_anneal_is_close_to_the_parisi_value():
    # Same references as above (from memory): e_2000 ≈ 0.7632 − 0.7·2000^{-2/3} ≈ 0.759.
    e = sk_energy_per_spin(2000, seed=2, sweeps=10000)
    assert 0.750 <= e <= 0.7632 + 0.005


def test_registers_through_the_hook_and_runs_with_declared_defaults():
    from spinward.core import Registry

    spec = Registry(["spinward.plugins.annealing"], autoload=False).get("anneal")
    K, b, k0 = random_instance(np.random.default_rng(8), 10)
    # the front door hands a solver every declared option, defaults included
    ctx = SolveContext(rng=np.random.default_rng(0), time_limit=0.3, options=dict(spec.options))
    sol = spec.run(CanonicalProblem(K, b, k0), ctx)
    assert own_value(K, b, k0, sol.sigma) == pytest.approx(brute_max(K, b, k0))


def test_time_limited_schedules_grow_then_fill_then_stop():
    # arithmetic of the documented rule, at 1 ms a sweep (90 % of the time left usable)
    assert annealing.next_schedule(4000, 1000, 1e-3, 100.0) == 4000        # fits, leaves room for more
    assert annealing.next_schedule(4000, 1000, 1e-3, 5.0) == 4500          # the rest could not be used: fill
    assert annealing.next_schedule(64000, 16000, 1e-3, 10.0) == 9000       # cut to fit, still ≥ half the longest
    assert annealing.next_schedule(64000, 32000, 1e-3, 10.0) == 0          # under half the longest: stop
    assert annealing.next_schedule(1000, 20, 1e-3, 0.01) == 0              # under the probe length: stop


def test_next_schedule_is_cut_to_the_time_left():
    # run time is proportional to length: at 1 ms a sweep, 0.5 s left (90 % usable) allows 450 sweeps
    assert annealing.next_length(1000, 1e-3, 0.5) == 450
    assert annealing.next_length(1000, 1e-6, 0.5) == 1000
    assert annealing.next_length(1000, None, 0.5) == 1000
