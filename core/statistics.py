"""Moments of the off-diagonal couplings of K: one routine for the profile and for every solver.

Conventions (docs/conventions.md, the mean-field scale): ``mean`` and ``std`` are over all
n(n−1)/2 pairs, zeros included; ``nonzero_mean``, ``nonzero_std`` and ``excess_kurtosis``
are over the coupled pairs only (excess kurtosis 0 for Gaussian couplings, −2 for ±1).
A dense K is streamed in row blocks (no n² temporary, a memmap is never copied); above
``FULL_PASS_ENTRIES`` entries the profile reads evenly spaced rows only (``exact=False``),
a fixed choice that does not depend on the clock.  Results are cached on the problem.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .canonical import CanonicalProblem

#: a dense K with at most this many entries is always read whole
FULL_PASS_ENTRIES = 1 << 26
#: entries per streamed block of rows
BLOCK_ENTRIES = 1 << 22


@dataclass(frozen=True)
class CouplingStats:
    """Moments of K's off-diagonal entries (see the module docstring)."""

    n: int
    couplings: int               # coupled pairs i < j (estimated when not exact)
    mean: float
    std: float
    nonzero_mean: float
    nonzero_std: float
    excess_kurtosis: float | None
    max_abs: float
    exact: bool = True

    @property
    def pairs(self) -> int:
        return self.n * (self.n - 1) // 2

    @property
    def density(self) -> float:
        return self.couplings / self.pairs if self.pairs else 0.0

    @property
    def mean_strength(self) -> float:
        """|m|√n/s: the rank-one mean part's eigenvalue on the semicircle scale (the edge is 2 ↔ 1)."""
        return abs(self.mean) * math.sqrt(self.n) / self.std if self.std > 0 else math.inf


def coupling_stats(problem: CanonicalProblem, *, exact: bool = False,
                   max_entries: int = FULL_PASS_ENTRIES) -> CouplingStats | None:
    """The moments of ``problem``'s couplings; None for a matrix-free (LinearOperator) K.

    ``exact=True`` reads every entry of a large dense K; otherwise evenly spaced rows holding
    about ``max_entries`` entries may stand in for it (the result says ``exact=False``).
    """
    if problem.kind == "operator":
        return None
    key = "_stats_exact"
    if problem.meta.get(key) is not None:
        return problem.meta[key]
    if not exact and problem.meta.get("_stats") is not None:
        return problem.meta["_stats"]
    if problem.kind == "sparse":
        data = np.asarray(problem.K.data, dtype=np.float64)
        sums, rows_read = power_sums([data]), problem.n
    else:
        rows = _rows_to_read(problem.n, exact, max_entries)
        sums, rows_read = power_sums(_dense_blocks(problem.K, rows)), len(rows)
    stats = from_power_sums(problem.n, sums, rows_read)
    problem.meta["_stats_exact" if stats.exact else "_stats"] = stats
    return stats


def _rows_to_read(n: int, exact: bool, max_entries: int) -> np.ndarray:
    if exact or n * n <= max_entries:
        return np.arange(n)
    count = max(min(n, 64), max_entries // n)
    return np.unique(np.linspace(0, n - 1, count).astype(np.int64))


def _dense_blocks(K: object, rows: np.ndarray):  # type: ignore[no-untyped-def]
    n = rows.size and np.asarray(K[rows[:1]]).shape[1]  # type: ignore[index]
    step = max(1, BLOCK_ENTRIES // max(int(n), 1))
    contiguous = rows.size == int(n)
    for start in range(0, rows.size, step):
        pick = slice(start, start + step) if contiguous else rows[start:start + step]
        yield np.asarray(K[pick], dtype=np.float64)  # type: ignore[index]


def power_sums(blocks) -> tuple[float, float, float, float, int, float]:  # type: ignore[no-untyped-def]
    """(Σx, Σx², Σx³, Σx⁴, #non-zero, max|x|) over the blocks; zeros add nothing to a power sum."""
    s1 = s2 = s3 = s4 = 0.0
    nonzero, big = 0, 0.0
    for block in blocks:
        x = block.ravel()
        x2 = x * x  # one temporary; the sums of powers are dot products (BLAS, no further temporaries)
        s1 += float(x.sum())
        s2 += float(np.dot(x, x))
        s3 += float(np.dot(x2, x))
        s4 += float(np.dot(x2, x2))
        nonzero += int(np.count_nonzero(x))
        if x.size:
            big = max(big, float(np.sqrt(x2.max())))
    return s1, s2, s3, s4, nonzero, big


def from_power_sums(n: int, sums: tuple[float, float, float, float, int, float], rows_read: int) -> CouplingStats:
    """Moments from power sums over ``rows_read`` full rows (each entry of K counted, both triangles)."""
    s1, s2, s3, s4, nonzero, big = sums
    entries = rows_read * (n - 1)  # off-diagonal entries read; the diagonal of K is zero
    if entries <= 0:
        return CouplingStats(n, 0, 0.0, 0.0, 0.0, 0.0, None, 0.0, True)
    mean = s1 / entries
    std = math.sqrt(max(s2 / entries - mean * mean, 0.0))
    nz_mean = s1 / nonzero if nonzero else 0.0
    nz_var = max(s2 / nonzero - nz_mean ** 2, 0.0) if nonzero else 0.0
    kurt = None
    if nz_var > 0:
        m4 = s4 / nonzero - 4 * nz_mean * s3 / nonzero + 6 * nz_mean ** 2 * s2 / nonzero - 3 * nz_mean ** 4
        kurt = max(m4, 0.0) / nz_var ** 2 - 3.0
    couplings = int(round(nonzero / 2 * n / rows_read))
    return CouplingStats(n, couplings, mean, std, nz_mean, math.sqrt(nz_var), kurt, big, rows_read == n)
