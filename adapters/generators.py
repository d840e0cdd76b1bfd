"""Random instance families for benchmarks, each reproducible from a seed.

Every generator takes its size first, keyword-only options after, and a
``seed`` (int or numpy Generator); the same seed gives the same instance.  They
return the caller-level forms, so each instance carries its own convention:

- :class:`~spinward.adapters.ising.Ising` minimises E(s) = −Σ_{i<j} J_ij s_i s_j − Σ h_i s_i + c.
  Its canonical form (maximised) is C(σ) = −E(σ) = Σ_{i<j} J_ij σ_i σ_j for the
  field-free families here, so the Sherrington–Kirkpatrick per-spin energy of a
  state is e = C / n^{3/2} = −E / n^{3/2} (→ 0.7632 at the optimum as n → ∞).
- :class:`~spinward.adapters.graph.MaxCut` maximises the weight of cut edges;
  nodes are the integers 0..n−1 and each edge carries ``weight``.
- :class:`~spinward.adapters.qubo.QUBO` minimises xᵀQx + offset.

``FAMILIES`` names every generator for suite files; :func:`known_optimum`
gives the optimum where a family knows it by construction (the planted one).
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any, Literal

import networkx as nx
import numpy as np
import scipy.sparse as sp

from spinward.core.errors import InputError

from .files import read_problem
from .graph import MaxCut
from .ising import Ising
from .qubo import QUBO

Seed = int | np.random.Generator | None
Weights = Literal["unit", "pm1", "gaussian"]


def _rng(seed: Seed) -> np.random.Generator:
    if isinstance(seed, np.random.Generator):
        return seed
    if seed is not None and (isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0):
        raise InputError(f"seed must be a non-negative int or a numpy Generator, got {seed!r}")
    return np.random.default_rng(seed)


def _check_size(value: Any, name: str, least: int) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < least:
        raise InputError(f"{name} must be an integer ≥ {least}, got {value!r}")
    return int(value)


def _draw(rng: np.random.Generator, kind: str, size: int) -> np.ndarray:
    """``size`` couplings: "gaussian" N(0, 1), "pm1" uniform ±1, "unit" all 1."""
    if kind == "gaussian":
        return rng.standard_normal(size)
    if kind == "pm1":
        return rng.choice(np.array([-1.0, 1.0]), size=size)
    if kind == "unit":
        return np.ones(size)
    raise InputError(f"couplings/weights must be 'gaussian', 'pm1' or 'unit', got {kind!r}")


def sk(n: int, *, couplings: Literal["gaussian", "pm1"] = "gaussian", seed: Seed = None) -> Ising:
    """Sherrington–Kirkpatrick model: J_ij i.i.d. N(0, 1) or ±1 for i < j, no field, no 1/√n.

    Returned as an upper-triangular Ising J (pair coefficient J_ij, i < j), so
    E(s) = −Σ_{i<j} J_ij s_i s_j and the canonical C = Σ_{i<j} J_ij σ_i σ_j;
    the per-spin energy is e = C / n^{3/2}.
    """
    n = _check_size(n, "n", 2)
    if couplings not in ("gaussian", "pm1"):
        raise InputError(f"SK couplings must be 'gaussian' or 'pm1', got {couplings!r}")
    rng = _rng(seed)
    iu = np.triu_indices(n, 1)
    J = np.zeros((n, n))
    J[iu] = _draw(rng, couplings, len(iu[0]))
    return Ising(J)


def _graph_from_edges(n: int, u: np.ndarray, v: np.ndarray, w: np.ndarray) -> nx.Graph:
    G = nx.Graph()
    G.add_nodes_from(range(n))
    G.add_weighted_edges_from(zip(u.tolist(), v.tolist(), w.tolist()))
    return G


def _weighted(n: int, G: nx.Graph, weights: str, rng: np.random.Generator) -> MaxCut:
    """MaxCut on G's edges (sorted, so the weights do not depend on set order) with weights drawn from ``rng``."""
    edges = np.array(sorted(tuple(sorted(e)) for e in G.edges()), dtype=np.int64).reshape(-1, 2)
    return MaxCut(_graph_from_edges(n, edges[:, 0], edges[:, 1], _draw(rng, weights, len(edges))))


def dense_gnp(n: int, p: float = 0.5, *, weights: Weights = "unit", seed: Seed = None) -> MaxCut:
    """MaxCut on G(n, p): each pair i < j is an edge with probability p (weights 1 by default)."""
    n = _check_size(n, "n", 2)
    if not 0 < p <= 1:
        raise InputError(f"p must lie in (0, 1], got {p!r}")
    rng = _rng(seed)
    u, v = np.triu_indices(n, 1)
    keep = rng.random(len(u)) < p
    u, v = u[keep], v[keep]
    return MaxCut(_graph_from_edges(n, u, v, _draw(rng, weights, len(u))))


def random_regular(n: int, d: int = 3, *, weights: Weights = "pm1", seed: Seed = None) -> MaxCut:
    """MaxCut on a uniform random d-regular graph with "pm1", "gaussian" or "unit" edge weights.

    The graph comes from networkx (pairing model) seeded from ``seed``; n·d must be even.
    """
    n = _check_size(n, "n", 2)
    d = _check_size(d, "d", 1)
    if d >= n or (n * d) % 2:
        raise InputError(f"a {d}-regular graph on {n} nodes needs d < n and n·d even")
    rng = _rng(seed)
    G = nx.random_regular_graph(d, n, seed=int(rng.integers(2**31)))
    return _weighted(n, G, weights, rng)


def sparse_er(n: int, c: float = 3.0, *, weights: Weights = "pm1", seed: Seed = None) -> MaxCut:
    """MaxCut on a sparse Erdős–Rényi graph G(n, c/(n−1)): average degree c, about c·n/2 edges."""
    n = _check_size(n, "n", 2)
    if not 0 < c < n - 1:
        raise InputError(f"average degree c must lie in (0, n−1), got {c!r}")
    rng = _rng(seed)
    G = nx.fast_gnp_random_graph(n, c / (n - 1), seed=int(rng.integers(2**31)))
    return _weighted(n, G, weights, rng)


def torus(L: int, *, dim: Literal[2, 3] = 2, couplings: Literal["pm1", "gaussian"] = "pm1",
          seed: Seed = None) -> Ising:
    """Edwards–Anderson spin glass on the periodic L^dim lattice (nearest neighbours, no field).

    Site (x, y[, z]) has index x·L^{dim−1} + y·L^{dim−2} (+ z); each site couples
    to its +1 neighbour along every axis (wrapping round), so there are dim·L^dim
    bonds and every site has 2·dim neighbours.  J is a sparse upper-triangular
    Ising matrix: E(s) = −Σ_bonds J_ij s_i s_j, J_ij ±1 or N(0, 1).  L ≥ 3 keeps bonds distinct.
    """
    L = _check_size(L, "L", 3)
    if dim not in (2, 3):
        raise InputError(f"dim must be 2 or 3, got {dim!r}")
    rng = _rng(seed)
    sites = np.arange(L**dim).reshape((L,) * dim)
    rows = np.concatenate([sites.ravel()] * dim)
    cols = np.concatenate([np.roll(sites, -1, axis=a).ravel() for a in range(dim)])
    w = _draw(rng, couplings, len(rows))
    lo, hi = np.minimum(rows, cols), np.maximum(rows, cols)
    J = sp.csr_array((w, (lo, hi)), shape=(L**dim, L**dim))
    return Ising(J)


def random_qubo(n: int, *, density: float = 1.0, scale: float = 1.0, offset: float | None = None,
                seed: Seed = None) -> QUBO:
    """Random QUBO: upper-triangular Q, each entry (diagonal included) present with probability
    ``density`` and then N(0, scale²); minimise xᵀQx + offset.

    ``offset=None`` draws it from N(0, n·scale²) so that tests see a non-zero constant.
    """
    n = _check_size(n, "n", 1)
    if not 0 < density <= 1:
        raise InputError(f"density must lie in (0, 1], got {density!r}")
    rng = _rng(seed)
    iu = np.triu_indices(n)
    keep = rng.random(len(iu[0])) < density
    Q = np.zeros((n, n))
    Q[iu[0][keep], iu[1][keep]] = scale * rng.standard_normal(int(keep.sum()))
    c = float(rng.normal(0.0, scale * np.sqrt(n))) if offset is None else float(offset)
    return QUBO(Q, offset=c)


def planted(n: int, *, m: int | None = None, seed: Seed = None) -> Ising:
    """Frustrated Ising model whose ground-state energy is known by construction: −n·m/2.

    Construction.  Draw a hidden state t ∈ {±1}ⁿ and m columns w_μ = t ∘ v_μ, each
    v_μ a random ±1 vector with exactly n/2 entries +1 (n even), so that
    t·w_μ = Σ v_μ = 0.  Let A = Σ_μ w_μ w_μᵀ (integer, positive semi-definite,
    diagonal m) and J_ij = −A_ij for i ≠ j.  Then
    E(s) = −Σ_{i<j} J_ij s_i s_j = ½ (sᵀAs − tr A) = ½ Σ_μ (w_μ·s)² − n·m/2 ≥ −n·m/2,
    with equality at s = ±t.  All entries are integers, so the optimum is exact.
    ``m`` defaults to ⌈n/4⌉ columns (fewer columns make it more frustrated).
    """
    n = _check_size(n, "n", 2)
    if n % 2:
        raise InputError(f"the planted family needs an even n (balanced columns), got {n}")
    m = _check_size(max(1, -(-n // 4)) if m is None else m, "m", 1)
    rng = _rng(seed)
    t = rng.choice(np.array([-1.0, 1.0]), size=n)
    base = np.repeat(np.array([1.0, -1.0]), n // 2)
    W = np.stack([t * rng.permutation(base) for _ in range(m)], axis=1)
    A = W @ W.T
    J = -np.triu(A, 1)
    return Ising(J)


def planted_optimum(n: int, *, m: int | None = None) -> float:
    """The ground-state energy of :func:`planted` (Ising, minimised): −n·m/2."""
    m = max(1, -(-n // 4)) if m is None else m
    return -0.5 * n * m


#: family name → (generator, name of its size argument) for suite files
FAMILIES: dict[str, tuple[Callable[..., Any], str]] = {
    "sk": (sk, "n"),
    "gnp": (dense_gnp, "n"),
    "regular": (random_regular, "n"),
    "sparse_er": (sparse_er, "n"),
    "torus": (torus, "L"),
    "qubo": (random_qubo, "n"),
    "planted": (planted, "n"),
}


def generate(family: str, size: int, *, seed: Seed = None, **params: Any) -> Any:
    """The instance of ``family`` at ``size`` (its first argument) drawn with ``seed``."""
    if family not in FAMILIES:
        raise InputError(f"unknown instance family {family!r}; choose one of {', '.join(sorted(FAMILIES))}")
    fn, _ = FAMILIES[family]
    try:
        return fn(size, seed=seed, **params)
    except TypeError as exc:
        raise InputError(f"family {family!r} got bad parameters {params!r}: {exc}") from None


def known_optimum(family: str, size: int, **params: Any) -> float | None:
    """The optimum in the form's own objective where the family knows it by construction, else None."""
    if family == "planted":
        return planted_optimum(size, m=params.get("m"))
    return None


def read_folder(folder: str | Path, *, pattern: str = "*", form: str | None = None) -> list[tuple[Path, Any]]:
    """Every file in ``folder`` matching ``pattern`` (sorted by name), read with ``read_problem``.

    ``form`` says how bare matrices (.mtx/.npy/.npz) are read, as in
    :func:`spinward.adapters.files.read_problem`.
    """
    root = Path(folder)
    if not root.is_dir():
        raise InputError(f"instance folder {str(root)!r} does not exist or is not a folder")
    paths = sorted(p for p in root.glob(pattern) if p.is_file())
    if not paths:
        raise InputError(f"no files match {pattern!r} in {str(root)!r}; check the folder and the pattern")
    return [(p, read_problem(p, form=form)) for p in paths]
