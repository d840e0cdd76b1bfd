"""The SDP solver (mixing method), Goemans–Williamson rounding and spectral rounding.

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀.  MaxCut with weights W maps to
K = −W/2, b = 0, k₀ = W_total/2 (W_total = Σ_{i<j} wᵢⱼ), so C(σ) is the cut weight.
"""

from __future__ import annotations

import itertools
import math

import networkx as nx
import numpy as np
import pytest
import scipy.sparse as sp

from spinward.core import CanonicalProblem, SolveContext
from spinward.plugins import sdp, spectral
from spinward.plugins.sdp.certificates import sdp_dual_bound, spectral_bound
from spinward.plugins.sdp.mixing import solve_sdp
from spinward.plugins.sdp.rounding import hyperplane_round

GW_ALPHA = 0.878567  # Goemans & Williamson, J. ACM 42 (1995)


def maxcut_problem(W: np.ndarray) -> CanonicalProblem:
    return CanonicalProblem(-W / 2.0, np.zeros(W.shape[0]), k0=float(np.triu(W, 1).sum()) / 2.0)


def sk_problem(n: int, seed: int) -> CanonicalProblem:
    """SK normalisation: ½σᵀKσ = n^{-1/2} Σ_{i<j} Jᵢⱼσᵢσⱼ with Jᵢⱼ ~ N(0, 1)."""
    rng = np.random.default_rng(seed)
    J = np.triu(rng.standard_normal((n, n)), 1)
    return CanonicalProblem((J + J.T) / math.sqrt(n), np.zeros(n))


def test_five_cycle_sdp_value() -> None:
    """Goemans & Williamson (1995): the SDP value of C₅ is (25 + 5√5)/8 ≈ 4.52254."""
    W = nx.to_numpy_array(nx.cycle_graph(5))
    problem = maxcut_problem(W)
    expected = (25 + 5 * math.sqrt(5)) / 8
    factor = solve_sdp(problem, rng=np.random.default_rng(0), tol=1e-12)
    assert abs(factor.value - expected) < 1e-4
    dual = sdp_dual_bound(problem, SolveContext(rng=np.random.default_rng(0)))
    assert dual.certified and expected - 1e-9 <= dual.value < expected + 1e-4
    # the Delorme–Poljak-shifted eigenvalue bound cannot go below the SDP value (Poljak & Rendl 1995)
    assert spectral_bound(problem, SolveContext(rng=np.random.default_rng(0))).value >= expected - 1e-9


def test_solver_finds_the_five_cycle_cut() -> None:
    """MaxCut of an odd cycle C_n is n − 1 (elementary); the result is recomputed by networkx."""
    G = nx.cycle_graph(5)
    problem = maxcut_problem(nx.to_numpy_array(G))
    sol = sdp.SPEC.run(problem, SolveContext(rng=np.random.default_rng(1)))
    assert sol.sigma.dtype == np.int8 and set(np.unique(sol.sigma)) <= {-1, 1}
    side = {v for v in G if sol.sigma[v] > 0}
    assert nx.cut_size(G, side) == 4 == problem.value(sol.sigma)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_mean_hyperplane_rounding_beats_the_gw_ratio(seed: int) -> None:
    """E[cut] ≥ 0.878567·⟨SDP objective at V⟩ for non-negative weights (GW 1995, per-edge inequality)."""
    rng = np.random.default_rng(seed)
    G = nx.gnp_random_graph(40, 0.3, seed=seed)
    for u, v in G.edges:
        G[u][v]["weight"] = float(rng.uniform(0.1, 2.0))
    problem = maxcut_problem(nx.to_numpy_array(G))
    factor = solve_sdp(problem, rng=rng, tol=1e-9)
    r = hyperplane_round(problem, factor, rng=rng, count=4000, polish=1)
    stderr = r.raw_values.std() / math.sqrt(r.raw_values.size)
    assert r.raw_values.mean() + 3 * stderr >= GW_ALPHA * factor.value
    assert r.value >= r.raw_values.max() - 1e-9  # polishing never loses


def test_sk_spectral_bound_and_mean_rounding_per_spin() -> None:
    """SK n = 1000: λ_max(J/√n) → 2, so the plain spectral bound per spin is ≈ 1 (Füredi & Komlós);
    mean hyperplane rounding per spin ≈ 2/π (from memory; finite-size tolerance 0.04)."""
    n = 1000
    problem = sk_problem(n, seed=4)
    plain = spectral_bound(problem, SolveContext(rng=np.random.default_rng(0), options={"dp_steps": -1}))
    assert plain.certified and abs(plain.value / n - 1.0) < 0.03
    sol = sdp.SPEC.run(problem, SolveContext(rng=np.random.default_rng(0), options={"hyperplanes": 256,
                                                                                     "polish": 4, "tol": 1e-5}))
    assert abs(sol.info["mean_rounding"] / n - 2 / math.pi) < 0.04
    # the (approximate) SDP value lies below the spectral bound and above the best rounding
    assert problem.value(sol.sigma) <= sol.info["sdp_value"] <= plain.value


def brute_max(problem: CanonicalProblem) -> float:
    K = problem.dense_K()
    S = np.array(list(itertools.product((-1.0, 1.0), repeat=problem.n))).T
    return float((0.5 * np.einsum("ij,ij->j", S, K @ S) + problem.b @ S + problem.k0).max())


@pytest.mark.parametrize("seed", range(6))
def test_solver_with_fields_is_near_optimal_on_small_instances(seed: int) -> None:
    """Brute force optimum; SDP + rounding + flips should reach it on tiny instances."""
    rng = np.random.default_rng(seed)
    n = 10
    K = np.triu(rng.normal(size=(n, n)), 1)
    K = K + K.T
    problem = CanonicalProblem(K, rng.normal(size=n), k0=2.5)
    sol = sdp.SPEC.run(problem, SolveContext(rng=rng))
    opt = brute_max(problem)
    assert problem.value(sol.sigma) >= opt - 1e-9 - 0.05 * abs(opt)
    assert sol.info["sdp_value"] >= opt - 1e-6  # the relaxation (solved) lies above every state


def test_sparse_and_dense_paths_agree() -> None:
    rng = np.random.default_rng(3)
    G = nx.random_regular_graph(3, 60, seed=3)
    W = nx.to_numpy_array(G) * rng.choice([-1.0, 1.0], size=(60, 60))
    W = np.triu(W, 1)
    W = W + W.T
    b = rng.normal(size=60) * 0.5
    dense = CanonicalProblem(-W / 2.0, b)
    sparse = CanonicalProblem(sp.csr_array(-W / 2.0), b)
    fd = solve_sdp(dense, rng=np.random.default_rng(0), tol=1e-10)
    fs = solve_sdp(sparse, rng=np.random.default_rng(0), tol=1e-10)
    assert fd.lifted and fs.lifted
    assert abs(fd.value - fs.value) <= 1e-5 * abs(fd.value)
    bd = sdp_dual_bound(sparse, SolveContext(rng=rng))
    assert bd.certified and fs.value - 1e-9 <= bd.value <= fs.value * (1 + 1e-3)


def test_solver_honours_the_time_limit_and_offers_its_best() -> None:
    problem = sk_problem(600, seed=1)
    ctx = SolveContext(rng=np.random.default_rng(0), time_limit=0.05, options={"tol": 0.0})
    sol = sdp.SPEC.run(problem, ctx)
    assert ctx.best_sigma is not None and ctx.best_value == pytest.approx(problem.value(sol.sigma))
    assert not sol.info["converged"]


def test_spectral_rounding_solves_a_ferromagnet() -> None:
    """All couplings positive, no fields: the optimum is all spins equal (elementary)."""
    rng = np.random.default_rng(2)
    K = np.triu(rng.uniform(0.1, 1.0, size=(30, 30)), 1)
    problem = CanonicalProblem(K + K.T, np.zeros(30))
    sol = spectral.SPEC.run(problem, SolveContext(rng=rng))
    assert abs(int(sol.sigma.sum())) == 30


def test_spectral_rounding_is_a_local_optimum_with_fields() -> None:
    rng = np.random.default_rng(4)
    K = np.triu(rng.normal(size=(50, 50)), 1)
    problem = CanonicalProblem(sp.csr_array(K + K.T), rng.normal(size=50))
    sol = spectral.SPEC.run(problem, SolveContext(rng=rng))
    h = problem.local_fields(sol.sigma)
    assert np.all(sol.sigma * h >= -1e-9)  # no single flip gains (flip i changes C by −2σᵢhᵢ)
    assert problem.value(sol.sigma) >= sol.info["raw_value"] - 1e-9
