"""A cheap structural profile of a canonical problem, for dispatch, diagnostics and explanations.

Cost: O(nnz) for the statistics and structure, plus a few Lanczos matvecs for
the mean-field check on dense inputs; the treewidth heuristic runs only on
small sparse graphs and only when the degeneracy (a lower bound) is small.

Conventions (docs/conventions.md, the mean-field scale): m and s are the mean and
standard deviation of the off-diagonal entries over all pairs, zeros included;
A = (K − m(11ᵀ − I)) / (s√n) should have its spectrum in [−2, 2] when the
couplings are dense, mean-zero and i.i.d.-like.
"""

from __future__ import annotations

import math
import time
from dataclasses import asdict, dataclass, field
from typing import Any

import numpy as np

from .canonical import CanonicalProblem
from .spectrum import lanczos_ritz
from .statistics import CouplingStats, coupling_stats

DENSE_FILL = 0.25          # at least this share of pairs coupled counts as dense
TREEWIDTH_MAX_NODES = 1000   # the min-degree heuristic costs up to ~1 s at 2000 nodes
LANCZOS_STEPS = 16
SPECTRAL_SUBSET = 1500
SAMPLE = 20_000            # entries sampled for the frustration pre-check
HEAVY_TAIL_EXCESS_KURTOSIS = 3.0  # above this the couplings count as heavy-tailed (Gaussian 0, ±1 −2)
TREEWIDTH_GIVE_UP = 24     # degeneracy above this: treewidth is surely too large for tree DP
SEMICIRCLE_EDGE = 2.0


@dataclass(frozen=True)
class Profile:
    """What dispatch and warnings need to know about one canonical problem."""

    n: int
    couplings: int
    density: float
    components: int
    kind: str
    mean: float                  # over all pairs, zeros included
    std: float                   # over all pairs, zeros included
    nonzero_mean: float
    nonzero_std: float
    excess_kurtosis: float       # of the non-zero couplings (0 for Gaussian, −2 for ±1; nan when unknown)
    max_abs: float
    field_ratio: float           # rms(b) / rms row norm of K (0 without fields)
    has_fields: bool
    ferromagnetic: bool          # every K_ij ≥ 0 (canonical sign: favours alignment)
    frustration_free: bool       # a gauge makes every coupling ferromagnetic
    degeneracy: int | None       # a lower bound on treewidth (⌈m/n⌉ when that alone exceeds the DP limit)
    treewidth: int | None        # heuristic upper bound (None when not estimated)
    top_eigenvalues: tuple[float, ...] = ()   # of A (dense inputs only)
    mean_outlier: float = 0.0    # m√n/s: the rank-one part's eigenvalue on the A scale
    mean_field_score: float = 0.0
    mean_field_reasons: tuple[str, ...] = ()
    seconds: float = 0.0
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def dense(self) -> bool:
        return self.density >= DENSE_FILL

    @property
    def mean_field(self) -> bool:
        """Dense, i.i.d.-like couplings: the regime where the Parisi prediction applies."""
        return self.mean_field_score >= 0.5

    def as_dict(self) -> dict[str, Any]:
        out = asdict(self)
        out["dense"], out["mean_field"] = self.dense, self.mean_field
        return out


def profile_of(problem: CanonicalProblem, *, time_budget: float = 2.0) -> Profile:
    """The problem's profile, computed once and cached on the problem."""
    cached = problem.meta.get("_profile")
    if cached is None:
        cached = _compute(problem, time_budget)
        problem.meta["_profile"] = cached
    return cached


def _compute(problem: CanonicalProblem, budget: float) -> Profile:
    t0 = time.perf_counter()
    n = problem.n
    if problem.kind == "operator":
        return _operator_profile(problem, t0)
    stats = coupling_stats(problem)
    assert stats is not None
    fast = _dense_structure(problem) if problem.kind == "dense" and n > 64 else None
    if fast is not None:
        components, frustration_free, ferromagnetic = fast
        degeneracy, treewidth = None, None
    else:
        rows, cols, vals = _upper_entries(problem)
        components, frustration_free = _signed_structure(n, rows, cols, vals)
        ferromagnetic = bool(np.all(vals >= 0))
        degeneracy, treewidth = _treewidth(n, rows, cols, budget, stats.density)
    spectral = _mean_field_spectrum(problem, stats) if stats.density >= DENSE_FILL and n >= 50 else {}
    score, reasons = _mean_field_score(n, stats, spectral, problem)
    kurt = math.nan if stats.excess_kurtosis is None else stats.excess_kurtosis
    return Profile(n=n, couplings=stats.couplings, density=stats.density, components=components, kind=problem.kind,
                   mean=stats.mean, std=stats.std, nonzero_mean=stats.nonzero_mean, nonzero_std=stats.nonzero_std,
                   excess_kurtosis=kurt, max_abs=stats.max_abs, ferromagnetic=ferromagnetic,
                   frustration_free=frustration_free, degeneracy=degeneracy, treewidth=treewidth,
                   has_fields=problem.has_fields, field_ratio=_field_ratio(problem, stats),
                   mean_field_score=score, mean_field_reasons=reasons, top_eigenvalues=spectral.get("top", ()),
                   mean_outlier=spectral.get("outlier", 0.0), seconds=time.perf_counter() - t0)


def _upper_entries(problem: CanonicalProblem) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(row, col, value) of the non-zero couplings with row < col."""
    if problem.kind == "sparse":
        import scipy.sparse as sp

        coo = sp.triu(sp.csr_array(problem.K), k=1).tocoo()
        keep = coo.data != 0
        return coo.row[keep].astype(np.int64), coo.col[keep].astype(np.int64), np.asarray(coo.data[keep], float)
    K = np.asarray(problem.K)
    r, c = np.nonzero(np.triu(K, 1))
    return r.astype(np.int64), c.astype(np.int64), K[r, c].astype(np.float64)


def _field_ratio(problem: CanonicalProblem, stats: CouplingStats) -> float:
    """rms(b) over the rms row norm of K, √(Σ_{j} K_ij²) averaged as a square over rows."""
    if not problem.has_fields:
        return 0.0
    rms_b = float(np.sqrt(np.mean(problem.b ** 2)))
    squares = stats.pairs * (stats.std ** 2 + stats.mean ** 2)  # Σ_{i<j} K_ij²
    row_norm = math.sqrt(2.0 * squares / max(problem.n, 1))
    return rms_b / row_norm if row_norm > 0 else math.inf


def _dense_structure(problem: CanonicalProblem) -> tuple[int, bool, bool] | None:
    """For a dense K whose first row has no zero: (1 component, balanced?, ferromagnetic?).

    Balanced iff sign(K) = ττᵀ with τ = sign(K₀·).  A random sample of entries is tried
    first: one frustrated entry settles it (and then K is not ferromagnetic either).
    """
    K = np.asarray(problem.K)
    n = K.shape[0]
    first = np.asarray(K[0, 1:])
    if np.any(first == 0):
        found = _dense_with_zeros(K)
        return None if found is None else (*found, False)
    tau = np.concatenate([[1.0], np.sign(first)])
    rng = np.random.default_rng(0)
    i, j = rng.integers(0, n, size=(2, SAMPLE))
    off = i != j
    if np.any(K[i[off], j[off]] * tau[i[off]] * tau[j[off]] <= 0):
        return 1, False, False
    for start in range(0, n, 256):  # row blocks keep temporaries small
        block = np.asarray(K[start:start + 256], dtype=np.float64) * tau[start:start + 256, None] * tau[None, :]
        block[np.arange(block.shape[0]), np.arange(start, start + block.shape[0])] = 1.0
        if np.any(block <= 0):
            return 1, False, False
    return 1, True, bool(np.all(tau > 0))


def _dense_with_zeros(K: np.ndarray) -> tuple[int, bool] | None:
    """Dense K with some zero couplings: connected by a breadth-first sweep over row blocks, and
    frustrated as soon as a sampled triangle has a negative sign product.  None (use the sparse
    path) when the graph is disconnected or no frustrated triangle turns up."""
    n = K.shape[0]
    seen = np.zeros(n, dtype=bool)
    seen[0] = True
    frontier = np.array([0])
    while frontier.size:
        reach = np.zeros(n, dtype=bool)
        for start in range(0, frontier.size, 256):
            reach |= np.any(K[frontier[start:start + 256]] != 0, axis=0)
        frontier = np.flatnonzero(reach & ~seen)
        seen[frontier] = True
    if not seen.all():
        return None
    i, j, k = np.random.default_rng(0).integers(0, n, size=(3, SAMPLE))
    product = K[i, j] * K[j, k] * K[k, i]
    distinct = (i != j) & (j != k) & (i != k)
    if np.any(distinct & (product < 0)):
        return 1, False
    return None


def _signed_structure(n: int, rows: np.ndarray, cols: np.ndarray, vals: np.ndarray) -> tuple[int, bool]:
    """Number of connected components, and whether the signed coupling graph is balanced."""
    if n == 0:
        return 0, True
    import scipy.sparse as sp
    from scipy.sparse.csgraph import breadth_first_order, connected_components

    sign = np.sign(vals)
    G = sp.coo_array((sign, (rows, cols)), shape=(n, n)).tocsr()
    G = sp.csr_array(G + G.T)
    count, label = connected_components(G, directed=False)
    # one breadth-first sweep from a virtual node n joined (sign +) to every component's first spin
    roots = np.unique(label, return_index=True)[1]
    link = sp.coo_array((np.ones(len(roots)), (np.full(len(roots), n), roots)), shape=(n + 1, n + 1))
    H = sp.csr_array(sp.block_diag([G, sp.csr_array((1, 1))]) + link + link.T)
    order, pred = breadth_first_order(H, n, directed=False, return_predecessors=True)
    tau = np.zeros(n + 1, dtype=np.int8)
    tau[n] = 1
    _propagate(H, order, pred, tau)
    tau = tau[:n]
    balanced = bool(np.all(tau[rows] * tau[cols] * sign > 0))
    return int(count), balanced


def _propagate(G: Any, order: np.ndarray, pred: np.ndarray, tau: np.ndarray) -> None:
    """τ_j = τ_parent · sign(K_parent,j) along the BFS tree, in BFS order."""
    if len(order) <= 1:
        return
    parents = pred[order[1:]]
    picked = G[parents, order[1:]]
    edge_sign = np.asarray(picked.toarray() if hasattr(picked, "toarray") else picked).ravel()
    step = np.where(edge_sign > 0, 1, -1).astype(np.int8)
    for j, p, s in zip(order[1:].tolist(), parents.tolist(), step.tolist()):
        tau[j] = tau[p] * s


def _treewidth(n: int, rows: np.ndarray, cols: np.ndarray, budget: float, density: float) -> tuple[int | None, int | None]:
    if n == 0:
        return 0, 0
    if density >= DENSE_FILL and n > 64:
        return None, None
    average = -(-len(rows) // n)  # ⌈m/n⌉ ≤ degeneracy ≤ treewidth, free to compute
    if average > TREEWIDTH_GIVE_UP:
        return int(average), None
    import networkx as nx

    g = nx.Graph()
    g.add_nodes_from(range(n))
    g.add_edges_from(zip(rows.tolist(), cols.tolist()))
    degeneracy = max(nx.core_number(g).values(), default=0)
    if degeneracy > TREEWIDTH_GIVE_UP or n > TREEWIDTH_MAX_NODES or budget <= 0:
        return int(degeneracy), None
    from networkx.algorithms.approximation import treewidth_min_degree

    width, _ = treewidth_min_degree(g)
    return int(degeneracy), int(width)


def _mean_field_spectrum(problem: CanonicalProblem, stats: CouplingStats) -> dict[str, Any]:
    """Top Ritz values of A = (K − m(11ᵀ − I))/(s√n) after a short Lanczos run, and the mean's outlier."""
    n, m, s = problem.n, stats.mean, stats.std
    if s == 0:
        return {}
    K: Any = problem.K
    size = n
    if n > SPECTRAL_SUBSET:  # a random principal block has the same semicircle law, at a fraction of the cost
        idx = np.sort(np.random.default_rng(2).choice(n, SPECTRAL_SUBSET, replace=False))
        K = problem.K[idx][:, idx] if problem.kind == "sparse" else np.asarray(problem.K)[np.ix_(idx, idx)]
        size = SPECTRAL_SUBSET
    scale = 1.0 / (s * math.sqrt(size))

    def matvec(x: np.ndarray) -> np.ndarray:
        return (np.asarray(K @ x, dtype=np.float64) - m * (x.sum() - x)) * scale

    ritz = lanczos_ritz(matvec, size, steps=LANCZOS_STEPS)
    return {"top": tuple(float(x) for x in ritz[:2]), "outlier": abs(m) * math.sqrt(n) / s,
            "subset": size}


def _mean_field_score(n: int, stats: CouplingStats, spectral: dict[str, Any],
                      problem: CanonicalProblem) -> tuple[float, tuple[str, ...]]:
    """1 for SK-like couplings, lower (with reasons) for each violated assumption."""
    reasons: list[str] = []
    score = 1.0
    if stats.density < DENSE_FILL:
        score *= 0.1
        reasons.append(f"sparse: only {100 * stats.density:.2g}% of pairs are coupled")
    if stats.excess_kurtosis is not None and stats.excess_kurtosis > HEAVY_TAIL_EXCESS_KURTOSIS:
        score *= 0.3
        reasons.append(f"heavy-tailed couplings (excess kurtosis {stats.excess_kurtosis:.3g}; Gaussian is 0)")
    top = spectral.get("top", ())
    if top and top[0] > SEMICIRCLE_EDGE * (1 + 2.0 * n ** (-2 / 3)) + 0.05:
        score *= 0.4
        reasons.append(f"spectral outlier: top eigenvalue {top[0]:.3g} of the normalised couplings exceeds the "
                       f"semicircle edge 2 (low-rank structure)")
    if spectral.get("outlier", 0.0) > 1.0:
        reasons.append(f"non-zero mean coupling: a rank-one part of size {spectral['outlier']:.3g} on the "
                       f"semicircle scale")
    if n < 50:
        score *= 0.2
        reasons.append(f"small: n = {n} (the prediction is asymptotic)")
    return score, tuple(reasons)


def _operator_profile(problem: CanonicalProblem, t0: float) -> Profile:
    n = problem.n
    return Profile(n=n, couplings=n * (n - 1) // 2, density=1.0, components=1, kind="operator", mean=math.nan,
                   std=math.nan, nonzero_mean=math.nan, nonzero_std=math.nan, excess_kurtosis=math.nan, max_abs=math.nan,
                   field_ratio=0.0, has_fields=problem.has_fields, ferromagnetic=False, frustration_free=False,
                   degeneracy=None, treewidth=None, mean_field_score=0.5,
                   mean_field_reasons=("matrix-free couplings: statistics not inspected",),
                   seconds=time.perf_counter() - t0)
