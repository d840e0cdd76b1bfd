"""What the mean-field theory predicts for a problem, and how well IAMP suits it (used by "auto").

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀.  With m, s the mean and standard
deviation of the couplings over all pairs (docs/conventions.md, the mean-field scale),
K = m(11ᵀ − I) + s√n·A; on dense mean-zero i.i.d.-like couplings max ½σᵀAσ ≈ n·P*
(the Parisi value; Crisanti & Rizzo, Phys. Rev. E 65, 046137 (2002), from memory).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from spinward.core import CanonicalProblem
from spinward.core.registry import Advice
from spinward.core.statistics import CouplingStats

#: the zero-temperature full-RSB Parisi value P* (Crisanti & Rizzo, Phys. Rev. E 65, 046137 (2002);
#: Oppermann, Schmidt & Sherrington, Phys. Rev. Lett. 98, 127201 (2007); from memory)
PARISI_GROUND_STATE = 0.7631667
PARISI_SOURCE = ("Parisi formula, P* = 0.7631667 (Crisanti & Rizzo 2002); finite-size e_n ≈ P* − 0.7 n^(-2/3) "
                 "(Boettcher 2005, coefficient from memory): an estimate, not a bound")
#: the semicircle's edge for the normalised couplings A (Wigner; Füredi & Komlós 1981)
SEMICIRCLE_EDGE = 2.0
#: above this excess kurtosis (Gaussian 0, ±1 −2) the couplings count as heavy-tailed
HEAVY_TAIL_EXCESS_KURTOSIS = 3.0
#: below this share of coupled pairs the problem is sparse (the profile's own threshold)
DENSE_FILL = 0.25
#: what IAMP's guarantee needs, in plain words
ASSUMPTION = "dense, mean-zero, i.i.d.-like couplings"

#: finite-size correction e_n ≈ P* − A·n^{−2/3}; A from memory (Boettcher 2005), an estimate
FINITE_SIZE_A = 0.7
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
    """How close ``best`` came to the Parisi value (its fraction of P*, the fluctuation part only).

    Unitless on purpose: the predicted optimum itself is the result's one prediction, in the caller's
    units and sign (``info["prediction"]``, from :func:`predict`).
    """
    e_best = fluctuation_e(problem, best["sigma"], best["value"], stats)
    return {"fraction_of_prediction": e_best / pstar, "parisi_value": pstar}


def suitability(profile: Any) -> tuple[float, list[str]]:
    """1 for SK-like couplings, lower (with reasons in plain words) for each broken assumption.

    ``profile`` is the core's problem profile (spinward.core.profile.Profile).
    """
    if profile.kind == "operator":
        return 0.5, ["matrix-free couplings: their statistics were not inspected"]
    reasons: list[str] = []
    score = 1.0
    if profile.density < DENSE_FILL:
        score *= 0.1
        reasons.append(f"sparse: only {100 * profile.density:.2g}% of pairs are coupled")
    kurt = profile.excess_kurtosis
    if kurt is not None and math.isfinite(kurt) and kurt > HEAVY_TAIL_EXCESS_KURTOSIS:
        score *= 0.3
        reasons.append(f"heavy-tailed couplings (excess kurtosis {kurt:.3g}; Gaussian is 0)")
    top = profile.top_eigenvalues
    if top and top[0] > SEMICIRCLE_EDGE * (1 + 2.0 * profile.n ** (-2 / 3)) + 0.05:
        score *= 0.4
        reasons.append(f"spectral outlier: top eigenvalue {top[0]:.3g} of the normalised couplings exceeds the "
                       f"semicircle edge 2 (low-rank structure)")
    if profile.mean_outlier > 1.0:
        reasons.append(f"non-zero mean coupling: a rank-one part of size {profile.mean_outlier:.3g} on the "
                       f"semicircle scale")
    if profile.n < 50:
        score *= 0.2
        reasons.append(f"small: n = {profile.n} (the prediction is asymptotic)")
    return score, reasons


def mean_field(profile: Any) -> bool:
    """Dense, i.i.d.-like couplings: the regime where the Parisi prediction applies."""
    return suitability(profile)[0] >= 0.5


def fit(profile: Any) -> float:
    """First choice on dense mean-field inputs (after exact structure); weak elsewhere."""
    n = profile.n
    if profile.kind == "operator" or (mean_field(profile) and profile.dense and n >= 200):
        return 50.0
    if profile.kind == "dense" and n >= 1000:
        return 3.0
    return 0.2


def predict(problem: CanonicalProblem, profile: Any) -> dict[str, Any] | None:
    """The Parisi-based prediction of the canonical optimum, when the mean-field checks pass.

    With m, s the mean and standard deviation over all pairs, K = m(11ᵀ − I) + s√n·A.
    The fluctuation part contributes s·n^{3/2}·P*; a negative mean favours balanced
    states and adds |m|·n/2; a positive mean (ferromagnetic bias) is not covered.
    """
    if not mean_field(profile) or profile.has_fields or profile.kind == "operator" or profile.n < 50:
        return None
    if profile.mean > 0 and profile.mean_outlier > 1.0:
        return None
    m_part = abs(profile.mean) * profile.n / 2 if profile.mean <= 0 else 0.0
    n, s = profile.n, profile.std
    e_n = PARISI_GROUND_STATE - FINITE_SIZE_A * n ** (-2 / 3)
    return {"canonical": {"optimum": problem.k0 + m_part + s * n ** 1.5 * PARISI_GROUND_STATE,
                          "finite_size_estimate": problem.k0 + m_part + s * n ** 1.5 * e_n},
            "per_spin_parisi": PARISI_GROUND_STATE, "source": PARISI_SOURCE, "balanced": profile.mean < 0}


def advise(problem: CanonicalProblem, profile: Any) -> list[Advice]:
    """Why IAMP's guarantee does not hold here, and what it did about a mean part, in plain words."""
    out: list[Advice] = []
    score, reasons = suitability(profile)
    if score < 0.5:
        why = "; ".join(reasons) or "the couplings are not mean-field"
        out.append(Advice(f"'iamp' assumes {ASSUMPTION}, which this problem does not meet ({why}); its guarantee "
                          f"does not hold here."))
    if profile.dense and profile.mean < 0 and profile.mean_outlier > 1.0:
        text = ("The solver centred the couplings (removed the mean) for message passing and cleaned up on the "
                "full couplings, which keeps the state balanced.")
        found = predict(problem, profile)
        if found:
            value = found["canonical"]
            text += (f" Parisi-based prediction: ≈ {problem.to_objective(value['optimum']):.6g} (finite-size "
                     f"estimate {problem.to_objective(value['finite_size_estimate']):.6g}; an estimate, not a bound).")
        out.append(Advice(text, topic="mean-part", values={"mean": profile.mean, "scale": problem.scale},
                          lead=f"the couplings have a negative mean ({profile.mean:.4g} per pair in canonical "
                               f"units): this rank-one part favours balanced states (as many spins up as down)"))
    return out
