"""What the mean-field theory predicts for a problem, and how well IAMP suits it (used by "auto").

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀.  With m, s the mean and standard
deviation of the couplings over all pairs (docs/conventions.md, the mean-field scale),
K = m(11ᵀ − I) + s√n·A; on dense mean-zero i.i.d.-like couplings max ½σᵀAσ ≈ n·P*
(the Parisi value; Crisanti & Rizzo, Phys. Rev. E 65, 046137 (2002), from memory).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from spinward.core import CanonicalProblem
from spinward.core.statistics import CouplingStats

#: finite-size correction e_n ≈ P* − A·n^{−2/3}; A from memory (Boettcher 2005), an estimate
FINITE_SIZE_A = 0.7
FINITE_SIZE_SOURCE = ("e_n ≈ P* − A·n^(−2/3) with A ≈ 0.7 (from memory; Boettcher, Eur. Phys. J. B 46, 501 "
                      "(2005), arXiv:cond-mat/0407130): an estimate, not a bound")
#: below this size the n → ∞ prediction is not reported
MIN_PREDICTION_N = 100


def mean_part(mean: float, s: np.ndarray | int, n: int) -> float:
    """½m((Σσ)² − n): the rank-one mean's share of ½σᵀKσ (s is σ, or Σσ for a balanced state)."""
    total = float(np.sum(s, dtype=np.int64)) if isinstance(s, np.ndarray) else float(s)
    return 0.5 * mean * (total * total - n)


def fluctuation_e(problem: CanonicalProblem, sigma: np.ndarray, value: float, stats: CouplingStats) -> float:
    """e = (C − k₀ − bᵀσ − mean part) / (s·n^{3/2}): the energy per spin of docs/conventions.md."""
    n = problem.n
    rest = value - problem.k0 - float(problem.b @ sigma) - mean_part(stats.mean, sigma, n)
    return rest / (stats.std * n**1.5) if stats.std > 0 else float("nan")


def prediction(problem: CanonicalProblem, stats: CouplingStats, pstar: float, best: dict) -> dict[str, Any]:
    """The Parisi-based prediction in canonical units, and how close ``best`` came (its fraction of P*)."""
    n = problem.n
    fluct = stats.std * n**1.5
    offset = mean_part(stats.mean, n % 2, n) + problem.k0  # the mean's share for a balanced state, and k₀
    e_n = pstar - FINITE_SIZE_A * n ** (-2.0 / 3.0)
    e_best = fluctuation_e(problem, best["sigma"], best["value"], stats)
    return {"predicted_optimum": fluct * pstar + offset, "finite_size_estimate": fluct * e_n + offset,
            "finite_size_source": FINITE_SIZE_SOURCE, "fraction_of_prediction": e_best / pstar,
            "parisi_value": pstar}


def fit(profile: Any) -> float:
    """First choice on dense mean-field inputs (after exact structure); weak elsewhere.

    ``profile`` is the core's problem profile (spinward.core.profile.Profile).
    """
    kind = getattr(profile, "kind", None)
    n = getattr(profile, "n", 0)
    if kind == "operator" or (getattr(profile, "mean_field", False) and getattr(profile, "dense", False) and n >= 200):
        return 50.0
    if kind == "dense" and n >= 1000:
        return 3.0
    return 0.2
