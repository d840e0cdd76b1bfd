"""Instance generators: reproducible from a seed, with the documented conventions and statistics.

Outside checks: moments and degree counts against the distributions the
docstrings state (tolerances of about 5 standard errors), lattice edges against
networkx's periodic grid, and the planted optimum against brute force written
here.
"""

from __future__ import annotations

import itertools

import networkx as nx
import numpy as np
import pytest
import scipy.sparse as sp

import spinward
from spinward.adapters import generators as gen
from spinward.core.errors import InputError


def canonical_arrays(form):
    c = spinward.canonical(form)
    K = c.K.toarray() if sp.issparse(c.K) else np.asarray(c.K)
    return K, c.b, c.k0, c.scale, c.shift


SMALL = {"sk": 14, "gnp": 14, "regular": 14, "sparse_er": 30, "torus": 4, "qubo": 9, "planted": 12}


@pytest.mark.parametrize("family", sorted(gen.FAMILIES))
def test_same_seed_same_instance_other_seed_other(family):
    size = SMALL[family]
    a, b, c = (canonical_arrays(gen.generate(family, size, seed=s)) for s in (7, 7, 8))
    for x, y in zip(a, b):
        np.testing.assert_array_equal(x, y)
    assert not np.array_equal(a[0], c[0]) or not np.array_equal(a[1], c[1])


def upper_couplings(form):
    """Pair coefficients J_ij, i < j, read back from the form's own pair matrix."""
    P = form.pairs.toarray() if sp.issparse(form.pairs) else np.asarray(form.pairs)
    return P[np.triu_indices(P.shape[0], 1)], P


@pytest.mark.parametrize("couplings", ["gaussian", "pm1"])
def test_sk_moments_and_convention(couplings):
    n = 300
    J, _ = upper_couplings(gen.sk(n, couplings=couplings, seed=3))
    m = len(J)
    assert abs(J.mean()) < 5 / np.sqrt(m)  # mean 0, variance 1
    assert abs(J.var() - 1) < 5 * np.sqrt(2 / m) * (1 if couplings == "gaussian" else 0.1) + 1e-12
    if couplings == "pm1":
        assert set(np.unique(J)) == {-1.0, 1.0}
    else:
        kurt = np.mean(J**4) / J.var() ** 2
        assert abs(kurt - 3) < 0.1  # Gaussian fourth moment 3σ⁴
    # canonical C(σ) = Σ_{i<j} J_ij σ_i σ_j (documented), computed here by a plain double loop on a corner
    small = gen.sk(9, couplings=couplings, seed=5)
    Js, _ = upper_couplings(small)
    sigma = np.array([1, -1, 1, 1, -1, -1, 1, -1, 1])
    plain = sum(Js[k] * sigma[i] * sigma[j] for k, (i, j) in enumerate(itertools.combinations(range(9), 2)))
    assert spinward.canonical(small).value(sigma) == pytest.approx(plain)
    assert small.evaluate(sigma) == pytest.approx(-plain)


def edges_weights(form):
    G = form.graph
    return G, np.array([d["weight"] for _, _, d in G.edges(data=True)])


def test_dense_gnp_edge_count_and_degrees():
    n, p = 200, 0.3
    G, w = edges_weights(gen.dense_gnp(n, p, seed=1))
    pairs = n * (n - 1) / 2
    assert abs(G.number_of_edges() - p * pairs) < 5 * np.sqrt(pairs * p * (1 - p))  # Binomial(pairs, p)
    degrees = np.array([d for _, d in G.degree()])
    assert abs(degrees.mean() - p * (n - 1)) < 1.0
    assert np.all(w == 1.0) and G.number_of_nodes() == n


@pytest.mark.parametrize("weights", ["pm1", "gaussian"])
def test_random_regular_degrees_and_weights(weights):
    n, d = 400, 3
    G, w = edges_weights(gen.random_regular(n, d, weights=weights, seed=2))
    assert all(deg == d for _, deg in G.degree()) and G.number_of_edges() == n * d // 2
    assert abs(w.mean()) < 5 / np.sqrt(len(w)) and abs(w.var() - 1) < 0.25
    if weights == "pm1":
        assert set(np.unique(w)) == {-1.0, 1.0}


def test_sparse_er_average_degree():
    n, c = 2000, 4.0
    G, w = edges_weights(gen.sparse_er(n, c, weights="gaussian", seed=4))
    pairs, p = n * (n - 1) / 2, c / (n - 1)
    assert abs(G.number_of_edges() - p * pairs) < 5 * np.sqrt(pairs * p)
    assert abs(2 * G.number_of_edges() / n - c) < 0.2
    assert abs(w.mean()) < 5 / np.sqrt(len(w))


@pytest.mark.parametrize("dim", [2, 3])
def test_torus_matches_networkx_periodic_grid(dim):
    L = 5
    form = gen.torus(L, dim=dim, couplings="gaussian", seed=6)
    _, P = upper_couplings(form)
    ours = {(int(i), int(j)) for i, j in zip(*np.nonzero(np.triu(P, 1)))}
    ref = nx.grid_graph(dim=[L] * dim, periodic=True)  # outside reference for the lattice
    index = {node: int(np.ravel_multi_index(node[::-1], (L,) * dim)) for node in ref.nodes}
    theirs = {tuple(sorted((index[u], index[v]))) for u, v in ref.edges}
    assert ours == theirs and len(ours) == dim * L**dim
    assert np.all((P != 0).sum(axis=1) == 2 * dim)


def test_torus_pm1_moments():
    J, _ = upper_couplings(gen.torus(20, dim=2, couplings="pm1", seed=9))
    J = J[J != 0]
    assert len(J) == 800 and set(np.unique(J)) == {-1.0, 1.0} and abs(J.mean()) < 5 / np.sqrt(800)


def test_random_qubo_density_offset_and_moments():
    n, density = 120, 0.25
    form = gen.random_qubo(n, density=density, scale=2.0, seed=10)
    Q = form.Q
    assert np.all(np.tril(Q, -1) == 0)
    entries = Q[np.triu_indices(n)]
    slots = len(entries)
    nz = entries[entries != 0]
    assert abs(len(nz) - density * slots) < 5 * np.sqrt(slots * density * (1 - density))
    assert abs(nz.std() - 2.0) < 0.15
    assert form.offset != 0.0
    x = np.ones(n)
    assert form.evaluate(x) == pytest.approx(Q.sum() + form.offset)
    assert gen.random_qubo(5, offset=3.5, seed=1).offset == 3.5


def brute_ising_energy(J_upper: np.ndarray) -> float:
    """min over s ∈ {±1}ⁿ of −Σ_{i<j} J_ij s_i s_j, by plain enumeration."""
    n = J_upper.shape[0]
    best = np.inf
    for bits in itertools.product((-1.0, 1.0), repeat=n):
        s = np.array(bits)
        best = min(best, -float(s @ np.triu(J_upper, 1) @ s))
    return best


@pytest.mark.parametrize("n,m,seed", [(8, 1, 0), (8, 2, 1), (10, 3, 2), (12, 3, 3), (12, 2, 4), (14, 4, 5)])
def test_planted_optimum_is_the_true_ground_state(n, m, seed):
    form = gen.planted(n, m=m, seed=seed)
    _, P = upper_couplings(form)
    assert brute_ising_energy(P) == pytest.approx(gen.planted_optimum(n, m=m), abs=1e-9)
    assert gen.known_optimum("planted", n, m=m) == -n * m / 2
    assert len(np.unique(P[np.triu_indices(n, 1)])) > 1  # not a plain ferromagnet


def test_planted_is_frustrated():
    """Some triangle has an odd number of antiferromagnetic bonds, so no gauge makes it a ferromagnet."""
    _, P = upper_couplings(gen.planted(12, m=2, seed=3))
    signs = [np.sign(P[i, j] * P[j, k] * P[i, k]) for i, j, k in itertools.combinations(range(12), 3)]
    assert min(signs) < 0


def test_bad_arguments_are_named():
    with pytest.raises(InputError, match="family"):
        gen.generate("nope", 10)
    with pytest.raises(InputError, match="even"):
        gen.planted(7)
    with pytest.raises(InputError, match="regular"):
        gen.random_regular(5, 3)
    with pytest.raises(InputError, match="couplings"):
        gen.sk(5, couplings="uniform")


def test_read_folder(tmp_path):
    for k in range(3):
        np.save(tmp_path / f"j{k}.npy", np.triu(np.random.default_rng(k).normal(size=(4, 4)), 1))
    (tmp_path / "notes.txt.bak").write_text("ignored")
    found = gen.read_folder(tmp_path, pattern="*.npy", form="ising")
    assert [p.name for p, _ in found] == ["j0.npy", "j1.npy", "j2.npy"]
    assert all(f.form == "ising" for _, f in found)
    with pytest.raises(InputError, match="no files"):
        gen.read_folder(tmp_path, pattern="*.mtx")
