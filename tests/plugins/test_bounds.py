"""The spectral and SDP dual bounds hold on every instance (checked by brute force and milp).

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀; a bound is an upper bound on max C.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
import scipy.sparse as sp

from spinward.core import CanonicalProblem, SolveContext
from spinward.plugins.sdp import BOUNDS, bound_report
from spinward.plugins.sdp import eigen
from spinward.plugins.sdp.certificates import sdp_dual_bound, spectral_bound

TOL = 1e-9  # bounds are compared with exact optima up to this relative float noise


def all_spins(n: int) -> np.ndarray:
    """Every σ ∈ {±1}ⁿ as the columns of an n × 2ⁿ matrix."""
    return np.array(list(itertools.product((-1.0, 1.0), repeat=n))).T.reshape(n, 2 ** n)


def brute_max(K: np.ndarray, b: np.ndarray, k0: float) -> float:
    """max over all σ of ½σᵀKσ + bᵀσ + k₀, written plainly (vectorised over states)."""
    S = all_spins(b.shape[0])
    return float((0.5 * np.einsum("ij,ij->j", S, K @ S) + b @ S + k0).max())


def brute_qubo_min(Q: np.ndarray, c: float) -> float:
    """min over x ∈ {0,1}ⁿ of xᵀQx + c, straight from the QUBO definition."""
    X = (all_spins(Q.shape[0]) + 1.0) / 2.0
    return float((np.einsum("ij,ij->j", X, Q @ X) + c).min())


def qubo_to_canonical(Q: np.ndarray, c: float) -> CanonicalProblem:
    """max −(xᵀQx + c) with x = (1 + σ)/2, derived by hand: S = (Q + Qᵀ)/2,
    −f = −¼σᵀS_offσ − ½(S1)ᵀσ − ¼(1ᵀS1 + tr S) − c."""
    S = (Q + Q.T) / 2.0
    off = S - np.diag(np.diag(S))
    return CanonicalProblem(-0.5 * off, -0.5 * S.sum(axis=1), k0=-0.25 * (S.sum() + np.trace(S)) - c)


def random_symmetric(rng: np.random.Generator, n: int, density: float) -> np.ndarray:
    W = rng.normal(size=(n, n)) * (rng.random((n, n)) < density)
    W = np.triu(W, 1)
    return W + W.T


def random_instance(rng: np.random.Generator) -> tuple[str, CanonicalProblem, float]:
    """(form, canonical problem, exact maximum) of a random small instance of one of three forms."""
    n = int(rng.integers(1, 13))
    form = ("ising", "maxcut", "qubo")[int(rng.integers(3))]
    if form == "qubo":
        Q, c = rng.normal(size=(n, n)) * 2.0, float(rng.normal() * 5)
        return form, qubo_to_canonical(Q, c), -brute_qubo_min(Q, c)
    K = random_symmetric(rng, n, float(rng.uniform(0.2, 1.0)))
    if form == "maxcut":  # signed weights W: cut = Σ w(1 − σσ)/2, so K = −W/2, k₀ = Σ_{i<j} w/2
        W = K * rng.uniform(0.1, 3.0)
        K, b, k0 = -W / 2.0, np.zeros(n), float(W.sum() / 4.0)
    else:
        b = rng.normal(size=n) * rng.choice([0.0, 0.3, 3.0])
        k0 = float(rng.normal() * 10)
    if rng.random() < 0.3:
        K = sp.csr_array(K)
    return form, CanonicalProblem(K, b, k0=k0), brute_max(K if isinstance(K, np.ndarray) else K.toarray(), b, k0)


def check_bound(value: float, optimum: float, label: str) -> None:
    assert value >= optimum - TOL * max(1.0, abs(optimum)), f"{label}: bound {value} < optimum {optimum}"


@pytest.mark.parametrize("seed", [0, 1])
def test_bounds_hold_on_many_small_instances(seed: int) -> None:
    """1000 instances per seed (2000 in all): Ising with fields, signed MaxCut, QUBO; offsets."""
    rng = np.random.default_rng(seed)
    certified = 0
    for _ in range(1000):
        form, problem, opt = random_instance(rng)
        for fn in (spectral_bound, sdp_dual_bound):
            b = fn(problem, SolveContext(rng=rng))
            check_bound(b.value, opt, f"{form} n={problem.n} {b.method}")
            certified += b.certified
    assert certified == 2000  # every small instance is proved, none merely estimated


@pytest.mark.slow
def test_bounds_hold_on_many_more_instances() -> None:
    rng = np.random.default_rng(7)
    for _ in range(10000):
        form, problem, opt = random_instance(rng)
        for fn in (spectral_bound, sdp_dual_bound):
            check_bound(fn(problem, SolveContext(rng=rng)).value, opt, form)


def test_dual_bound_is_close_to_the_optimum_on_a_bipartite_graph() -> None:
    """A bipartite graph with positive weights: MaxCut = total weight (elementary), SDP is exact."""
    rng = np.random.default_rng(3)
    W = np.zeros((10, 10))
    W[:5, 5:] = rng.uniform(0.5, 2.0, size=(5, 5))
    W = W + W.T
    problem = CanonicalProblem(-W / 2.0, np.zeros(10), k0=W.sum() / 4.0)
    b = sdp_dual_bound(problem, SolveContext(rng=rng, options={"tol": 1e-12}))
    total = W.sum() / 2.0
    assert b.certified and total - 1e-9 <= b.value <= total * (1 + 1e-4)


def milp_maxcut(W: np.ndarray) -> float:
    """Exact MaxCut by the standard linearisation, solved by scipy.optimize.milp to zero gap."""
    from scipy.optimize import LinearConstraint, milp

    n = W.shape[0]
    edges = [(i, j) for i in range(n) for j in range(i + 1, n) if W[i, j] != 0]
    m = len(edges)
    c = np.concatenate([np.zeros(n), -np.array([W[i, j] for i, j in edges])])
    rows = []  # y_e ≤ x_i + x_j, y_e ≤ 2 − x_i − x_j, y_e ≥ x_i − x_j, y_e ≥ x_j − x_i
    lo, hi = [], []
    for e, (i, j) in enumerate(edges):
        for ci, cj, cy, low, up in ((-1, -1, 1, -np.inf, 0), (1, 1, 1, -np.inf, 2),
                                    (-1, 1, 1, 0, np.inf), (1, -1, 1, 0, np.inf)):
            r = np.zeros(n + m)
            r[i], r[j], r[n + e] = ci, cj, cy
            rows.append(r)
            lo.append(low)
            hi.append(up)
    res = milp(c, constraints=LinearConstraint(np.array(rows), lo, hi), integrality=np.ones(n + m),
               bounds=(0, 1), options={"mip_rel_gap": 0})
    assert res.success
    return -float(res.fun)


@pytest.mark.parametrize("seed", [11, 12])
def test_bounds_hold_against_milp_on_signed_maxcut(seed: int) -> None:
    rng = np.random.default_rng(seed)
    W = random_symmetric(rng, 16, 0.4)
    problem = CanonicalProblem(-W / 2.0, np.zeros(16), k0=W.sum() / 4.0)
    opt = milp_maxcut(W)
    assert math.isclose(opt, brute_max(problem.K, problem.b, problem.k0), rel_tol=1e-9, abs_tol=1e-9)
    for fn in (spectral_bound, sdp_dual_bound):
        check_bound(fn(problem, SolveContext(rng=rng)).value, opt, "milp")


def test_cholesky_proof_accepts_below_and_rejects_above_the_smallest_eigenvalue() -> None:
    """numpy's eigvalsh gives λ_min; a shift 1e-6 above it must fail, 1e-6 below must pass."""
    rng = np.random.default_rng(5)
    for n in (3, 40, 200):
        K = random_symmetric(rng, n, 0.7)
        y = rng.normal(size=n)
        lam = float(np.linalg.eigvalsh(np.diag(y) - K)[0])
        assert eigen.verified_min_eig(K, y, lam + 1e-6) is None
        lower = eigen.verified_min_eig(K, y, lam - 1e-6)
        assert lower is not None and lam - 2e-6 < lower <= lam - 1e-6


def test_large_instances_beyond_the_cholesky_limit_are_marked_estimated() -> None:
    rng = np.random.default_rng(6)
    K = random_symmetric(rng, 12, 0.5)
    problem = CanonicalProblem(sp.csr_array(K), rng.normal(size=12))
    opt = brute_max(K, problem.b, 0.0)
    for fn in (spectral_bound, sdp_dual_bound):
        b = fn(problem, SolveContext(rng=rng, options={"dense_limit": 4}))
        assert not b.certified and "Cholesky limit" in b.info["reason"]
        check_bound(b.value, opt, "estimated")


def test_spectral_bound_without_shift_is_the_largest_eigenvalue_and_shifts_only_help() -> None:
    """y = 0 gives ½nλ_max(K) + k₀ (numpy eigvalsh); the Delorme–Poljak steps never make it worse."""
    rng = np.random.default_rng(8)
    W = np.abs(random_symmetric(rng, 30, 0.3))
    problem = CanonicalProblem(-W / 2.0, np.zeros(30), k0=W.sum() / 4.0)
    plain = spectral_bound(problem, SolveContext(rng=rng, options={"dp_steps": -1}))
    lam = float(np.linalg.eigvalsh(problem.K)[-1])
    assert math.isclose(plain.value, 15.0 * lam + problem.k0, rel_tol=1e-9)
    shifted = spectral_bound(problem, SolveContext(rng=rng))
    assert shifted.value <= plain.value + 1e-9 and shifted.certified


def test_bound_report_gives_both_bounds_in_the_callers_units() -> None:
    """A minimisation with objective = −C + 3: the report's objective bound is a lower bound."""
    rng = np.random.default_rng(9)
    K = random_symmetric(rng, 8, 0.8)
    b = rng.normal(size=8)
    problem = CanonicalProblem(K, b, k0=1.0, scale=-1.0, shift=3.0, sense="min")
    rows = bound_report(problem)
    assert [r["method"] for r in rows] == ["spectral", "sdp-dual"]
    best_objective = -brute_max(K, b, 1.0) + 3.0
    for r in rows:
        assert r["kind"] == "certified" and r["seconds"] >= 0.0
        assert math.isclose(r["objective_bound"], -r["canonical_bound"] + 3.0)
        assert r["objective_bound"] <= best_objective + 1e-9


def test_bound_providers_are_registered_with_spectral_first() -> None:
    from spinward.core import Registry

    reg = Registry(["spinward.plugins.sdp"], autoload=False)
    assert [b.name for b in reg.bounds()] == ["spectral", "sdp-dual"]
    assert {"sdp", "spectral"} <= set(reg.names())
    assert [b.name for b in BOUNDS] == ["spectral", "sdp-dual"]


def test_a_stray_diagonal_in_K_is_counted_not_ignored() -> None:
    """On ±1 states ½σᵀKσ includes ½ tr K; the bound must still hold (brute force with the diagonal)."""
    rng = np.random.default_rng(10)
    K = random_symmetric(rng, 9, 0.8) + np.diag(rng.normal(size=9) * 4.0)
    problem = CanonicalProblem(K, rng.normal(size=9), k0=-2.0)
    opt = brute_max(K, problem.b, -2.0)
    for fn in (spectral_bound, sdp_dual_bound):
        check_bound(fn(problem, SolveContext(rng=rng)).value, opt, "diagonal")
