"""The structural profile against outside facts (named beside each check) and networkx."""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest

import spinward
from spinward.core.profile import profile_of
from spinward.core.spectrum import lanczos_ritz
from spinward.plugins.iamp.prediction import mean_field, suitability


def _sk(n, rng, pm=False):
    J = np.triu(np.where(rng.random((n, n)) < 0.5, -1.0, 1.0) if pm else rng.normal(size=(n, n)), 1)
    return spinward.canonical(spinward.Ising(J))


def test_sk_gaussian_looks_mean_field(rng):
    p = profile_of(_sk(1200, rng))
    assert p.density == 1.0 and p.components == 1 and not p.ferromagnetic and not p.frustration_free
    assert abs(p.mean) < 0.01 and p.std == pytest.approx(1.0, abs=0.01)
    assert p.excess_kurtosis == pytest.approx(0.0, abs=0.3)  # Gaussian excess kurtosis 0 (handbook fact)
    # largest eigenvalue of J/√n → 2 (Wigner semicircle; Füredi & Komlós 1981); Lanczos estimate from below
    assert 1.8 < p.top_eigenvalues[0] < 2.1
    assert mean_field(p)  # the IAMP plugin's reading of the profile


def test_pm_one_couplings_have_excess_kurtosis_minus_two(rng):
    p = profile_of(_sk(600, rng, pm=True))
    assert p.excess_kurtosis == pytest.approx(-2.0, abs=0.05)  # ±1 entries: E x⁴ / (E x²)² − 3 = −2
    assert mean_field(p)  # the IAMP plugin's reading of the profile


def test_rank_one_outlier_is_flagged(rng):
    # spiked Wigner: strength θ > 1 pushes the top eigenvalue to θ + 1/θ (BBP transition; from memory)
    n, theta = 1000, 3.0
    A = rng.normal(size=(n, n)); A = np.triu(A, 1); A = A + A.T
    u = rng.normal(size=n); u /= np.linalg.norm(u)
    K = A + theta * np.sqrt(n) * np.outer(u, u)
    np.fill_diagonal(K, 0)
    p = profile_of(spinward.canonical(spinward.Ising(np.triu(K, 1))))
    assert p.top_eigenvalues[0] == pytest.approx(theta + 1 / theta, rel=0.08)
    assert not mean_field(p) and any("outlier" in r for r in suitability(p)[1])


def test_dense_unit_graph_reports_its_mean():
    g = nx.gnp_random_graph(400, 0.5, seed=2)
    p = profile_of(spinward.canonical(g))
    assert p.mean == pytest.approx(-0.25, abs=0.01)      # K = −w/2 with edge probability 1/2
    assert p.mean_outlier > 1 and any("mean" in r for r in suitability(p)[1])


def test_structure_flags(rng):
    g = nx.random_labeled_tree(300, seed=3)
    for u, v in g.edges:
        g.edges[u, v]["weight"] = float(rng.normal())
    p = profile_of(spinward.canonical(g))
    assert p.treewidth == 1 and p.frustration_free       # a tree has no cycle to frustrate
    two = nx.disjoint_union(nx.cycle_graph(5), nx.path_graph(4))
    assert profile_of(spinward.canonical(two)).components == nx.number_connected_components(two)
    J = np.triu(np.abs(rng.normal(size=(80, 80))), 1)
    gauge = np.where(rng.random(80) < 0.5, -1.0, 1.0)
    p = profile_of(spinward.canonical(spinward.Ising(J * np.outer(gauge, gauge))))
    assert p.frustration_free and not p.ferromagnetic
    assert profile_of(spinward.canonical(spinward.Ising(J))).ferromagnetic


def test_lanczos_matches_eigh(rng):
    A = rng.normal(size=(60, 60)); A = A + A.T
    ritz = lanczos_ritz(lambda x: A @ x, 60, steps=60)
    np.testing.assert_allclose(ritz[:3], np.sort(np.linalg.eigvalsh(A))[::-1][:3], rtol=1e-8)


def test_dense_with_zero_couplings(rng):
    g = nx.gnp_random_graph(300, 0.5, seed=6)
    p = profile_of(spinward.canonical(g))
    assert p.components == 1 and not p.frustration_free          # unit MaxCut: every triangle frustrated
    two = nx.disjoint_union(nx.gnp_random_graph(150, 0.6, seed=7), nx.gnp_random_graph(150, 0.6, seed=8))
    assert profile_of(spinward.canonical(two)).components == nx.number_connected_components(two)
    J = np.triu(np.abs(rng.normal(size=(200, 200))) * (rng.random((200, 200)) < 0.5), 1)
    p = profile_of(spinward.canonical(spinward.Ising(J)))
    assert p.frustration_free and p.ferromagnetic                 # all couplings ≥ 0: nothing to frustrate


@pytest.mark.parametrize("n", [60, 70, 300])
def test_dense_profile_matches_numpy_at_any_size(n):
    """The dense fast path (n > 64) once reported "1 couplings" and a wrong field ratio; numpy is the reference."""
    rng = np.random.default_rng(n)
    J = np.triu(rng.normal(size=(n, n)), 1)
    J[np.abs(J) < 0.3] = 0.0                       # some zero couplings, still dense
    h = 0.05 * rng.normal(size=n)
    problem = spinward.canonical(spinward.Ising(J, h))
    p = profile_of(problem)
    K = np.asarray(problem.K)
    upper = K[np.triu_indices(n, 1)]
    assert p.couplings == np.count_nonzero(upper)
    assert p.density == pytest.approx(np.count_nonzero(upper) / upper.size)
    assert p.mean == pytest.approx(upper.mean()) and p.std == pytest.approx(upper.std())
    row_norm = np.sqrt(np.mean(np.sum(K ** 2, axis=1)))
    assert p.field_ratio == pytest.approx(np.sqrt(np.mean(problem.b ** 2)) / row_norm)
    assert p.max_abs == pytest.approx(np.abs(upper).max())
