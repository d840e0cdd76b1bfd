"""Mean-field checks for the IAMP solver: is this instance like the SK class?

Convention (docs/conventions.md, the mean-field scale): over the n(n−1) off-diagonal entries of K,
zeros included, m is the mean and s the standard deviation; the solver works with
A = (K − m(11ᵀ − I)) / (s√n), whose spectrum fills [−2, 2] (semicircle) for dense i.i.d.-like
mean-zero couplings.  The checks here report density, mean, tails (excess kurtosis and the
largest entry) and the extreme eigenvalues of A against the edge 2, in plain words.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np

#: below this fraction of coupled pairs the instance is treated as sparse
MIN_DENSITY = 0.1
#: a Gaussian has excess kurtosis 0, ±1 couplings −2; above this the tails are heavy
MAX_EXCESS_KURTOSIS = 3.0
#: the largest |entry| of A·√n beyond this many standard deviations is flagged
MAX_ENTRY_SIGMAS = 12.0
#: a Lanczos estimate of λ_max(A) or −λ_min(A) beyond 2 + this is an outlier
EDGE_MARGIN = 0.25
#: the rank-one mean part m(11ᵀ−I) shows in the spectrum once |m|√n/s passes 1 (BBP threshold)
MEAN_THRESHOLD = 1.0
#: rows sampled (evenly) for the kurtosis and tail checks on dense inputs
TAIL_SAMPLE_ENTRIES = 1 << 20
#: rows per block when a dense (possibly memory-mapped) K is streamed
BLOCK_ENTRIES = 1 << 22


@dataclass
class CouplingStats:
    """Moments of the off-diagonal entries of K (zeros included), and what was exact."""

    n: int
    mean: float
    std: float
    density: float | None
    excess_kurtosis: float | None
    max_abs_sigmas: float | None
    exact: bool = True
    notes: list[str] = field(default_factory=list)

    @property
    def mean_strength(self) -> float:
        """|m|√n/s: the rank-one part's eigenvalue over the bulk's half-width (edge at 2 ↔ 1)."""
        return abs(self.mean) * math.sqrt(self.n) / self.std if self.std > 0 else math.inf


def row_blocks(n: int) -> range:
    """Starts of the row blocks used for every streamed pass over a dense K (same for all passes)."""
    return range(0, n, max(1, BLOCK_ENTRIES // max(n, 1)))


def _dense_sums(K: Any, n: int) -> tuple[float, float, int, float]:
    """(Σ K_ij, Σ K_ij², #nonzero, max|K_ij|) over all entries, streamed in float64 row blocks."""
    total = squares = 0.0
    nonzero = 0
    big = 0.0
    from . import _kernels as kern

    step = max(1, BLOCK_ENTRIES // max(n, 1))
    for r in row_blocks(n):
        block = np.asarray(K[r:r + step])
        if block.dtype not in (np.float32, np.float64):
            block = block.astype(np.float64)
        s1, s2, nz, mx = kern.moments(block)
        total += s1
        squares += s2
        nonzero += nz
        big = max(big, mx)
    return total, squares, nonzero, big


def _dense_kurtosis(K: Any, n: int, mean: float, std: float) -> float:
    """Excess kurtosis of the off-diagonal entries, from evenly spaced rows (cheap, deterministic)."""
    rows = max(1, min(n, TAIL_SAMPLE_ENTRIES // max(n, 1)))
    idx = np.unique(np.linspace(0, n - 1, rows).astype(np.int64))
    block = np.asarray(K[idx], dtype=np.float64)
    mask = np.ones(block.shape, dtype=bool)
    mask[np.arange(idx.size), idx] = False
    dev = (block[mask] - mean) / std
    return float(np.mean(dev**4) - 3.0)


def dense_stats(K: Any, n: int) -> CouplingStats:
    pairs = n * (n - 1)
    if pairs == 0:
        return CouplingStats(n, 0.0, 0.0, 0.0, None, None)
    total, squares, nonzero, big = _dense_sums(K, n)
    mean = total / pairs
    std = math.sqrt(max(squares / pairs - mean * mean, 0.0))
    kurt = _dense_kurtosis(K, n, mean, std) if std > 0 else None
    return CouplingStats(n, mean, std, nonzero / pairs, kurt, (big + abs(mean)) / std if std > 0 else None)


def sparse_stats(K: Any, n: int) -> CouplingStats:
    data = np.asarray(K.tocsr().data, dtype=np.float64)
    pairs = n * (n - 1)
    if pairs == 0:
        return CouplingStats(n, 0.0, 0.0, 0.0, None, None)
    mean = float(data.sum()) / pairs
    std = math.sqrt(max(float(data @ data) / pairs - mean * mean, 0.0))
    if std == 0:
        return CouplingStats(n, mean, 0.0, np.count_nonzero(data) / pairs, None, None)
    zeros = pairs - data.size
    fourth = (float(np.sum((data - mean) ** 4)) + zeros * mean**4) / pairs
    big = float(np.abs(data).max()) if data.size else 0.0
    return CouplingStats(n, mean, std, np.count_nonzero(data) / pairs, fourth / std**4 - 3.0, (big + abs(mean)) / std)


def operator_stats(matvec: Callable[[np.ndarray], np.ndarray], n: int, rng: np.random.Generator,
                   probes: int, std: float | None) -> CouplingStats:
    """Mean exactly from 1ᵀK1; s² from Hutchinson probes ‖Kg‖² (Rademacher g) unless given."""
    pairs = n * (n - 1)
    ones = np.ones(n)
    mean = float(ones @ matvec(ones)) / pairs
    notes = []
    if std is None:
        sq = 0.0
        for _ in range(probes):
            g = rng.choice([-1.0, 1.0], size=n)
            y = matvec(g)
            sq += float(y @ y)
        std = math.sqrt(max(sq / probes / pairs - mean * mean, 0.0))
        notes.append(f"the coupling scale s was estimated from {probes} random probes (a few per cent "
                     f"of error at n = {n}); pass coupling_std for an exact scale")
    return CouplingStats(n, mean, float(std), None, None, None, exact=False, notes=notes)


def lanczos_extremes(matvec: Callable[[np.ndarray], np.ndarray], n: int, rng: np.random.Generator,
                     steps: int) -> tuple[float, float]:
    """(λ_min, λ_max) Ritz estimates after ``steps`` Lanczos steps (full reorthogonalisation).

    Ritz values lie inside the spectrum, so an estimate beyond 2 + margin proves an outlier.
    """
    steps = max(2, min(steps, n))
    Q = np.zeros((steps, n))
    alpha = np.zeros(steps)
    beta = np.zeros(steps)
    q = rng.standard_normal(n)
    Q[0] = q / np.linalg.norm(q)
    used = steps
    for j in range(steps):
        w = matvec(Q[j])
        alpha[j] = Q[j] @ w
        w -= Q[: j + 1].T @ (Q[: j + 1] @ w)
        beta[j] = np.linalg.norm(w)
        if j + 1 == steps or beta[j] < 1e-10:
            used = j + 1
            break
        Q[j + 1] = w / beta[j]
    T = np.diag(alpha[:used]) + np.diag(beta[: used - 1], 1) + np.diag(beta[: used - 1], -1)
    ritz = np.linalg.eigvalsh(T)
    return float(ritz[0]), float(ritz[-1])


def findings(stats: CouplingStats, edges: tuple[float, float] | None, has_fields: bool) -> tuple[list[str], bool]:
    """Plain-words warnings, and whether the mean-field prediction applies (eligible)."""
    out: list[str] = list(stats.notes)
    ok = stats.std > 0
    if stats.std == 0:
        out.append("all couplings are equal (no disorder): the mean-field analysis does not apply")
    if stats.density is not None and stats.density < MIN_DENSITY:
        ok = False
        out.append(f"only {100 * stats.density:.2g}% of the pairs are coupled: the graph is sparse, while IAMP "
                   f"and the Parisi prediction assume dense couplings; the result is a heuristic without guarantee")
    if stats.excess_kurtosis is not None and stats.excess_kurtosis > MAX_EXCESS_KURTOSIS:
        ok = False
        out.append(f"the couplings have heavy tails (excess kurtosis {stats.excess_kurtosis:.3g}; a Gaussian has 0): "
                   f"the mean-field guarantee needs light-tailed i.i.d.-like entries")
    elif stats.max_abs_sigmas is not None and stats.max_abs_sigmas > MAX_ENTRY_SIGMAS:
        out.append(f"one coupling is {stats.max_abs_sigmas:.3g} standard deviations from the mean: a few large "
                   f"entries dominate, which the mean-field analysis does not cover")
    strength = stats.mean_strength if stats.std > 0 else 0.0
    if strength > MEAN_THRESHOLD:
        if stats.mean > 0:
            ok = False
            out.append(f"the couplings have a positive mean ({stats.mean:.3g}, {strength:.3g}× the threshold where it "
                       f"shows): aligned states are favoured and the spin-glass prediction does not apply")
        # a negative mean (balanced states favoured) is explained by the core in the caller's own terms
    if edges is not None:
        lo, hi = edges
        if hi > 2 + EDGE_MARGIN or -lo > 2 + EDGE_MARGIN:
            ok = False
            out.append(f"the normalised coupling matrix has eigenvalues outside the semicircle [−2, 2] (found "
                       f"{lo:.3g} and {hi:.3g}): a low-rank structure is present that IAMP does not exploit")
    if has_fields:
        ok = False
        out.append("the problem has fields: they were absorbed by one extra spin, so the IAMP guarantee and the "
                   "Parisi prediction no longer apply")
    return out, ok
