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

DENSE_FILL = 0.25          # at least this share of pairs coupled counts as dense
TREEWIDTH_MAX_NODES = 1000   # the min-degree heuristic costs up to ~1 s at 2000 nodes
LANCZOS_STEPS = 16
SPECTRAL_SUBSET = 1500
SAMPLE = 20_000            # entries sampled for dense kurtosis and the frustration pre-check
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
    kurtosis: float              # of the non-zero couplings (3 for Gaussian, 1 for ±1)
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
    pairs = n * (n - 1) // 2
    fast = _dense_structure(problem) if problem.kind == "dense" and n > 64 else None
    if fast is not None:
        stats, vals = _dense_stats(problem, pairs)
        components, frustration_free = fast
        degeneracy, treewidth = None, None
    else:
        rows, cols, vals = _upper_entries(problem)
        stats = _coupling_stats(vals, pairs)
        components, frustration_free = _signed_structure(n, rows, cols, vals)
        degeneracy, treewidth = _treewidth(n, rows, cols, budget, stats["density"])
    spectral = _mean_field_spectrum(problem, stats) if stats["density"] >= DENSE_FILL and n >= 50 else {}
    score, reasons = _mean_field_score(n, stats, spectral, problem)
    stats_fields: dict[str, Any] = stats
    return Profile(n=n, couplings=len(vals), components=components, kind=problem.kind,
                   ferromagnetic=bool(np.all(vals >= 0)), frustration_free=frustration_free,
                   degeneracy=degeneracy, treewidth=treewidth, has_fields=problem.has_fields,
                   field_ratio=_field_ratio(problem, vals), mean_field_score=score, mean_field_reasons=reasons,
                   top_eigenvalues=spectral.get("top", ()), mean_outlier=spectral.get("outlier", 0.0),
                   seconds=time.perf_counter() - t0, **stats_fields)


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


def _coupling_stats(vals: np.ndarray, pairs: int) -> dict[str, float]:
    if pairs == 0 or vals.size == 0:
        return dict(density=0.0, mean=0.0, std=0.0, nonzero_mean=0.0, nonzero_std=0.0, kurtosis=0.0, max_abs=0.0)
    total, total2 = float(vals.sum()), float((vals ** 2).sum())
    mean = total / pairs
    var = max(total2 / pairs - mean ** 2, 0.0)
    nz_mean = float(vals.mean())
    centred = vals - nz_mean
    nz_var = float((centred ** 2).mean())
    kurt = float((centred ** 4).mean() / nz_var ** 2) if nz_var > 0 else 0.0
    return dict(density=vals.size / pairs, mean=mean, std=math.sqrt(var), nonzero_mean=nz_mean,
                nonzero_std=math.sqrt(nz_var), kurtosis=kurt, max_abs=float(np.abs(vals).max()))


def _field_ratio(problem: CanonicalProblem, vals: np.ndarray) -> float:
    if not problem.has_fields:
        return 0.0
    rms_b = float(np.sqrt(np.mean(problem.b ** 2)))
    row_norm = math.sqrt(2.0 * float((vals ** 2).sum()) / max(problem.n, 1))
    return rms_b / row_norm if row_norm > 0 else math.inf


def _dense_structure(problem: CanonicalProblem) -> tuple[int, bool] | None:
    """For a dense K whose first row has no zero: one component; balanced iff sign(K) = ττᵀ with τ = sign(K₀·).

    A random sample of entries is tried first: one frustrated entry settles it.
    """
    K = np.asarray(problem.K)
    n = K.shape[0]
    first = K[0, 1:]
    if np.any(first == 0):
        return _dense_with_zeros(K)
    tau = np.concatenate([[1.0], np.sign(first)])
    rng = np.random.default_rng(0)
    i, j = rng.integers(0, n, size=(2, SAMPLE))
    off = i != j
    if np.any(K[i[off], j[off]] * tau[i[off]] * tau[j[off]] <= 0):
        return 1, False
    for start in range(0, n, 256):  # row blocks keep temporaries small
        block = K[start:start + 256] * tau[start:start + 256, None] * tau[None, :]
        block[np.arange(block.shape[0]), np.arange(start, start + block.shape[0])] = 1.0
        if np.any(block <= 0):
            return 1, False
    return 1, True


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


def _dense_stats(problem: CanonicalProblem, pairs: int) -> tuple[dict[str, float], np.ndarray]:
    """Exact moments from full sums; the kurtosis and ferromagnetism from the full sign check and a sample."""
    K = np.asarray(problem.K, dtype=np.float64)
    n = K.shape[0]
    total, total2 = float(K.sum()) / 2, float(np.einsum("ij,ij->", K, K)) / 2
    nnz = int(np.count_nonzero(K)) // 2
    rng = np.random.default_rng(1)
    i, j = rng.integers(0, n, size=(2, SAMPLE))
    sample = K[i[i != j], j[i != j]]
    sample = sample[sample != 0]
    mean = total / pairs
    nz_mean = total / max(nnz, 1)
    nz_var = max(total2 / max(nnz, 1) - nz_mean ** 2, 0.0)
    centred = sample - nz_mean
    kurt = float((centred ** 4).mean() / nz_var ** 2) if nz_var > 0 and sample.size else 0.0
    stats: dict[str, Any] = dict(density=nnz / pairs, mean=mean, std=math.sqrt(max(total2 / pairs - mean ** 2, 0.0)),
                 nonzero_mean=nz_mean, nonzero_std=math.sqrt(nz_var), kurtosis=kurt, max_abs=max(float(K.max()), -float(K.min())))
    signs = np.array([float(K.min())])  # ferromagnetic iff the smallest entry is ≥ 0
    return stats, signs


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


def _mean_field_spectrum(problem: CanonicalProblem, stats: dict[str, float]) -> dict[str, Any]:
    """Top Ritz values of A = (K − m(11ᵀ − I))/(s√n) after a short Lanczos run, and the mean's outlier."""
    n, m, s = problem.n, stats["mean"], stats["std"]
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


def lanczos_ritz(matvec: Any, n: int, *, steps: int, seed: int = 0) -> np.ndarray:
    """Ritz values (descending) of a symmetric operator after ``steps`` Lanczos steps with full reorthogonalisation.

    The largest Ritz value is a lower estimate of the largest eigenvalue; an
    isolated outlier converges within a few steps, the semicircle edge slowly.
    """
    steps = min(steps, n)
    Q = np.zeros((steps, n))
    alpha, beta = np.zeros(steps), np.zeros(steps)
    q = np.random.default_rng(seed).normal(size=n)
    q /= np.linalg.norm(q)
    for k in range(steps):
        Q[k] = q
        w = matvec(q)
        alpha[k] = q @ w
        w -= Q[: k + 1].T @ (Q[: k + 1] @ w)
        beta[k] = np.linalg.norm(w)
        if beta[k] < 1e-12:
            steps = k + 1
            break
        q = w / beta[k]
    T = np.diag(alpha[:steps]) + np.diag(beta[: steps - 1], 1) + np.diag(beta[: steps - 1], -1)
    return np.sort(np.linalg.eigvalsh(T))[::-1]


def _mean_field_score(n: int, stats: dict[str, float], spectral: dict[str, Any],
                      problem: CanonicalProblem) -> tuple[float, tuple[str, ...]]:
    """1 for SK-like couplings, lower (with reasons) for each violated assumption."""
    reasons: list[str] = []
    score = 1.0
    if stats["density"] < DENSE_FILL:
        score *= 0.1
        reasons.append(f"sparse: only {100 * stats['density']:.2g}% of pairs are coupled")
    if stats["kurtosis"] > 6.0:
        score *= 0.3
        reasons.append(f"heavy-tailed couplings (kurtosis {stats['kurtosis']:.3g}; Gaussian is 3)")
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
                   std=math.nan, nonzero_mean=math.nan, nonzero_std=math.nan, kurtosis=math.nan, max_abs=math.nan,
                   field_ratio=0.0, has_fields=problem.has_fields, ferromagnetic=False, frustration_free=False,
                   degeneracy=None, treewidth=None, mean_field_score=0.5,
                   mean_field_reasons=("matrix-free couplings: statistics not inspected",),
                   seconds=time.perf_counter() - t0)
