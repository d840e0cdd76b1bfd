"""A cheap structural profile of a canonical problem, for dispatch, diagnostics and explanations.

Cost: O(nnz) for the statistics and structure (a dense K is streamed in row blocks, or
sampled by rows when a time budget is given), plus a few Lanczos matvecs on a principal
block of the normalised couplings for dense inputs.  The treewidth heuristic runs only on
small sparse graphs (the tree-DP solver searches for an elimination order itself).

Conventions (docs/conventions.md, the mean-field scale): m and s are the mean and
standard deviation of the off-diagonal entries over all pairs, zeros included; the
profile reports the top Ritz values of A = (K − m(11ᵀ − I)) / (s√n) and the rank-one
mean's size m√n/s on the same scale.  What those numbers mean for a particular solver
is that solver's business (its ``fit`` and ``advise``), not the core's.
"""

from __future__ import annotations

import math
import time
from dataclasses import asdict, dataclass, field
from typing import Any

import numpy as np

from .canonical import CanonicalProblem, dense_matvec
from .spectrum import lanczos_ritz
from .statistics import FULL_PASS_ENTRIES, CouplingStats, coupling_stats

DENSE_FILL = 0.25          # at least this share of pairs coupled counts as dense
TREEWIDTH_MAX_NODES = 300  # the networkx min-degree treewidth heuristic runs only below this size
LANCZOS_STEPS = 16
SPECTRAL_SUBSET = 1500
SAMPLE = 20_000            # entries sampled for the frustration pre-check
READ_RATE = 2e8            # coupling entries a budgeted profile assumes it can read per second
MIN_SAMPLE_ENTRIES = 1 << 18
READ_PROBE_ENTRIES = 1 << 22  # entries of K multiplied to time one read of it
STRUCTURE_SECONDS = 4e-7   # per coupling, the components-and-balance pass (generous: a loaded machine)


@dataclass(frozen=True)
class Profile:
    """What dispatch and warnings need to know about one canonical problem."""

    n: int
    couplings: int
    density: float
    components: int | None       # None: not counted (a time limit too short for a pass over a huge K)
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
    frustration_free: bool | None  # a gauge makes every coupling ferromagnetic (None: not checked)
    degeneracy: int | None       # a lower bound on treewidth (the degeneracy, or ⌈m/n⌉ on large graphs)
    treewidth: int | None        # heuristic upper bound (None when not estimated)
    top_eigenvalues: tuple[float, ...] = ()   # of A (dense inputs only)
    mean_outlier: float = 0.0    # m√n/s: the rank-one part's eigenvalue on the A scale
    stats_exact: bool = True     # False: the moments come from a sample of rows
    read_seconds: float = 0.0    # one full read of K (a matvec), timed on the statistics' pass
    seconds: float = 0.0
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def dense(self) -> bool:
        return self.density >= DENSE_FILL

    def as_dict(self) -> dict[str, Any]:
        out = asdict(self)
        out["dense"] = self.dense
        return out


def profile_of(problem: CanonicalProblem, *, budget: float | None = None) -> Profile:
    """The problem's profile, computed once and cached on the problem.

    ``budget`` (seconds) caps how much of a large dense K is read for the statistics (a
    deterministic sample of rows); None reads up to ``FULL_PASS_ENTRIES`` entries.
    """
    cached = problem.meta.get("_profile")
    if cached is None:
        cached = _compute(problem, budget)
        problem.meta["_profile"] = cached
    return cached


def _compute(problem: CanonicalProblem, budget: float | None) -> Profile:
    t0 = time.perf_counter()
    n = problem.n
    if problem.kind == "operator":
        return _operator_profile(problem, t0)
    entries = FULL_PASS_ENTRIES if budget is None else int(min(FULL_PASS_ENTRIES, max(MIN_SAMPLE_ENTRIES,
                                                                                         budget * READ_RATE)))
    stats = coupling_stats(problem, max_entries=entries)
    assert stats is not None
    read_seconds = _read_seconds(problem, stats)
    fast = _dense_structure(problem) if problem.kind == "dense" and n > 64 else None
    if fast is not None:
        components, frustration_free, ferromagnetic = fast
        degeneracy, treewidth = None, None
    else:
        rows, cols, vals = _upper_entries(problem)
        known = problem.meta.get("_structure")  # a part of a profiled problem: its parent found these
        if known is not None:
            components, frustration_free = known
        elif budget is not None and STRUCTURE_SECONDS * rows.size > budget:
            components, frustration_free = None, None  # not within the profile's share of a short limit
        else:
            components, frustration_free, labels, frustrated = _signed_structure(n, rows, cols, vals)
            problem.meta["_component_labels"], problem.meta["_frustrated_spins"] = labels, frustrated
        ferromagnetic = bool(np.all(vals >= 0))
        degeneracy, treewidth = _treewidth(n, rows, cols, stats.density)
    spectral = _mean_field_spectrum(problem, stats) if stats.density >= DENSE_FILL and n >= 50 else {}
    kurt = math.nan if stats.excess_kurtosis is None else stats.excess_kurtosis
    return Profile(n=n, couplings=stats.couplings, density=stats.density, components=components, kind=problem.kind,
                   mean=stats.mean, std=stats.std, nonzero_mean=stats.nonzero_mean, nonzero_std=stats.nonzero_std,
                   excess_kurtosis=kurt, max_abs=stats.max_abs, ferromagnetic=ferromagnetic,
                   frustration_free=frustration_free, degeneracy=degeneracy, treewidth=treewidth,
                   has_fields=problem.has_fields, field_ratio=_field_ratio(problem, stats),
                   top_eigenvalues=spectral.get("top", ()), mean_outlier=spectral.get("outlier", 0.0),
                   stats_exact=stats.exact, read_seconds=read_seconds, seconds=time.perf_counter() - t0)


def _read_seconds(problem: CanonicalProblem, stats: Any) -> float:
    """Seconds for one full read of K (a matvec): a dense K's leading rows (about ``READ_PROBE_ENTRIES``
    entries) multiplied as a solver would, the time scaled to all rows; a CSR K from its size."""
    if problem.kind != "dense":
        return (problem.n + 2 * stats.couplings) / (10 * READ_RATE)  # values and indices, in memory
    if problem.n == 0:
        return 0.0
    rows = max(1, min(problem.n, READ_PROBE_ENTRIES // problem.n))
    t0 = time.perf_counter()
    dense_matvec(problem.K[:rows], np.ones(problem.n))
    return (time.perf_counter() - t0) * problem.n / rows


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


def _signed_structure(n: int, rows: np.ndarray, cols: np.ndarray,
                      vals: np.ndarray) -> tuple[int, bool, np.ndarray, np.ndarray]:
    """(number of connected components, balanced?, each spin's component label, spins in a frustrated one).

    One call of scipy's connected components on the doubled graph: spin i becomes i⁺ and i⁻,
    a positive coupling joins i⁺–j⁺ and i⁻–j⁻, a negative one i⁺–j⁻ and i⁻–j⁺.  The signed
    graph is balanced (frustration-free) iff no i⁺ is joined to its i⁻; a component of the
    coupling graph is the pair of labels {label(i⁺), label(i⁻)} its spins share.
    """
    if n == 0:
        return 0, True, np.zeros(0, dtype=np.int64), np.zeros(0, dtype=bool)
    import scipy.sparse as sp
    from scipy.sparse.csgraph import connected_components

    positive = np.concatenate([vals > 0, vals > 0])
    both_r, both_c = np.concatenate([rows, cols]), np.concatenate([cols, rows])
    r = np.concatenate([both_r, both_r + n])
    c = np.concatenate([np.where(positive, both_c, both_c + n), np.where(positive, both_c + n, both_c)])
    doubled = sp.csr_array((np.ones(r.size, dtype=np.int8), (r, c)), shape=(2 * n, 2 * n))
    # a symmetric input, so "strong" components are the undirected ones, without scipy's transpose
    _, label = connected_components(doubled, directed=True, connection="strong")
    plus, minus = label[:n].astype(np.int64), label[n:].astype(np.int64)
    pair = np.minimum(plus, minus) * (2 * n) + np.maximum(plus, minus)
    _, components = np.unique(pair, return_inverse=True)
    frustrated = plus == minus
    return int(components.max()) + 1, bool(not np.any(frustrated)), components.astype(np.int64), frustrated


def _treewidth(n: int, rows: np.ndarray, cols: np.ndarray, density: float) -> tuple[int | None, int | None]:
    """(a lower bound, a heuristic upper bound) on treewidth; networkx runs on small graphs only."""
    if n == 0:
        return 0, 0
    if density >= DENSE_FILL and n > 64:
        return None, None
    average = -(-len(rows) // n)  # ⌈m/n⌉ ≤ degeneracy ≤ treewidth, free to compute
    if n > TREEWIDTH_MAX_NODES:
        return int(average), None
    import networkx as nx
    from networkx.algorithms.approximation import treewidth_min_degree

    g = nx.Graph()
    g.add_nodes_from(range(n))
    g.add_edges_from(zip(rows.tolist(), cols.tolist()))
    degeneracy = max(nx.core_number(g).values(), default=0)
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


def _operator_profile(problem: CanonicalProblem, t0: float) -> Profile:
    n = problem.n
    return Profile(n=n, couplings=n * (n - 1) // 2, density=1.0, components=1, kind="operator", mean=math.nan,
                   std=math.nan, nonzero_mean=math.nan, nonzero_std=math.nan, excess_kurtosis=math.nan, max_abs=math.nan,
                   field_ratio=0.0, has_fields=problem.has_fields, ferromagnetic=False, frustration_free=False,
                   degeneracy=None, treewidth=None, stats_exact=False,
                   notes=("matrix-free couplings: statistics not inspected",), seconds=time.perf_counter() - t0)
