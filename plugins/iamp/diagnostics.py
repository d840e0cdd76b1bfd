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

import numpy as np

from spinward.core import CanonicalProblem
from spinward.core.spectrum import lanczos_ritz
from spinward.core.statistics import CouplingStats, coupling_stats

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
#: rows per block when a dense (possibly memory-mapped) K is streamed
BLOCK_ENTRIES = 1 << 22


def max_abs_sigmas(stats: CouplingStats) -> float | None:
    """The largest |entry| of K, in standard deviations from the mean (None without disorder)."""
    return (stats.max_abs + abs(stats.mean)) / stats.std if stats.std > 0 else None


def exact_stats(problem: CanonicalProblem) -> CouplingStats:
    """The core's coupling statistics, every entry read (IAMP's normalisation needs the exact m and s)."""
    stats = coupling_stats(problem, exact=True)
    assert stats is not None, "a LinearOperator K has no readable entries: use operator_stats"
    return stats


def operator_stats(matvec: Callable[[np.ndarray], np.ndarray], n: int, rng: np.random.Generator,
                   probes: int, std: float | None) -> tuple[CouplingStats, list[str]]:
    """Mean exactly from 1ᵀK1; s² from Hutchinson probes ‖Kg‖² (Rademacher g) unless given; and notes."""
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
    half = pairs // 2
    return CouplingStats(n, half, mean, float(std), mean, float(std), None, math.nan, exact=False), notes


def lanczos_extremes(matvec: Callable[[np.ndarray], np.ndarray], n: int, rng: np.random.Generator,
                     steps: int, should_stop: Callable[[], bool] | None = None) -> tuple[float, float]:
    """(λ_min, λ_max) Ritz estimates after ``steps`` Lanczos steps (the core's routine; ``should_stop``
    ends it early, with fewer steps' estimates).

    Ritz values lie inside the spectrum, so an estimate beyond 2 + margin proves an outlier.
    """
    ritz = lanczos_ritz(matvec, n, steps=max(2, steps), seed=int(rng.integers(0, 2**31 - 1)),
                        should_stop=should_stop)
    return float(ritz[-1]), float(ritz[0])


def findings(stats: CouplingStats, edges: tuple[float, float] | None, has_fields: bool,
             notes: list[str] | None = None) -> tuple[list[str], bool]:
    """Plain-words warnings, and whether the mean-field prediction applies (eligible)."""
    out: list[str] = list(notes or [])
    ok = stats.std > 0
    if stats.std == 0:
        out.append("all couplings are equal (no disorder): the mean-field analysis does not apply")
    if stats.exact and stats.density < MIN_DENSITY:
        ok = False
        out.append(f"only {100 * stats.density:.2g}% of the pairs are coupled: the graph is sparse, while IAMP "
                   f"and the Parisi prediction assume dense couplings; the result is a heuristic without guarantee")
    if stats.excess_kurtosis is not None and stats.excess_kurtosis > MAX_EXCESS_KURTOSIS:
        ok = False
        out.append(f"the couplings have heavy tails (excess kurtosis {stats.excess_kurtosis:.3g}; a Gaussian has 0): "
                   f"the mean-field guarantee needs light-tailed i.i.d.-like entries")
    elif (sigmas := max_abs_sigmas(stats)) is not None and sigmas > MAX_ENTRY_SIGMAS:
        out.append(f"one coupling is {sigmas:.3g} standard deviations from the mean: a few large "
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
