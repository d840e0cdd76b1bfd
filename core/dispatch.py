"""Choosing a solver for a problem: verdicts with reasons, fit scores, and the mean-field prediction.

Core names no solver: each spec declares its capabilities, its ``check`` (True
or a reason) and its ``fit(profile)`` score; "auto" takes the runnable spec
with the highest score.  Plugins rank themselves so that exact structural
solvers beat IAMP on dense mean-field inputs, which beats the sparse
portfolio (see each plugin's ``fit``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from .canonical import CanonicalProblem
from .errors import SolverUnsuitableError
from .profile import Profile, profile_of
from .registry import Registry, SolverSpec

#: the zero-temperature full-RSB Parisi value (Crisanti & Rizzo 2002; Oppermann, Schmidt & Sherrington 2007)
PARISI_GROUND_STATE = 0.7631667
#: finite-size coefficient in e_n ≈ P* − A n^{-2/3} (Boettcher 2005; A is quoted from memory, order 0.7)
FINITE_SIZE_A = 0.7


@dataclass(frozen=True)
class Choice:
    """The outcome of selection, with everything needed to explain it."""

    spec: SolverSpec
    profile: Profile
    verdicts: dict[str, "bool | str"]
    scores: dict[str, float]
    improver: SolverSpec | None = None
    prediction: dict[str, Any] | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)

    def explanation(self) -> dict[str, Any]:
        solvers = {name: ("would run" if v is True else f"would not: {v}") for name, v in self.verdicts.items()}
        return {"profile": self.profile.as_dict(), "solvers": solvers, "scores": self.scores,
                "choice": self.spec.name, "improver": self.improver.name if self.improver else None,
                "prediction": self.prediction, "notes": list(self.notes)}


def choose(problem: CanonicalProblem, registry: Registry, *, exclude: tuple[str, ...] = ()) -> Choice:
    """Profile the problem and pick the runnable solver with the highest fit score."""
    prof = profile_of(problem)
    verdicts = registry.verdicts(problem)
    specs = registry.solvers()
    scores = {name: specs[name].score(prof) for name, v in verdicts.items() if v is True}
    ranked = sorted((s, name) for name, s in scores.items() if math.isfinite(s) and name not in exclude)
    if not ranked:
        reasons = "; ".join(f"{k}: {v}" for k, v in verdicts.items())
        raise SolverUnsuitableError(f"no registered solver can run on this problem ({reasons})")
    best = max(ranked, key=lambda t: (t[0], _neg(t[1])))[1]
    spec = specs[best]
    return Choice(spec=spec, profile=prof, verdicts=verdicts, scores=scores,
                  improver=None if spec.capabilities.exact else _improver(specs, verdicts, prof, best),
                  prediction=mean_field_prediction(problem, prof))


def _neg(name: str) -> tuple[int, ...]:
    """Reverse-lexicographic key so that ties go to the alphabetically first name."""
    return tuple(-ord(c) for c in name)


def _improver(specs: Any, verdicts: dict[str, "bool | str"], prof: Profile, primary: str) -> SolverSpec | None:
    """The best-fitting runnable solver that can start from a given state (for the portfolio)."""
    pool = [s for name, s in specs.items() if name != primary and verdicts.get(name) is True
            and s.capabilities.warm_start]
    return max(pool, key=lambda s: (s.score(prof), _neg(s.name)), default=None)


def mean_field_prediction(problem: CanonicalProblem, prof: Profile) -> dict[str, Any] | None:
    """Parisi-based prediction of the optimum in the caller's units, when the mean-field checks pass.

    With m, s the mean and standard deviation over all pairs, K = m(11ᵀ − I) + s√n·A.
    The fluctuation part contributes s·n^{3/2}·P*; a negative mean favours balanced
    states and adds |m|·n/2; a positive mean (ferromagnetic bias) is not covered.
    """
    if not prof.mean_field or prof.has_fields or problem.kind == "operator" or prof.n < 50:
        return None
    m_part = abs(prof.mean) * prof.n / 2 if prof.mean <= 0 else None
    if m_part is None and prof.mean_outlier > 1.0:
        return None
    m_part = m_part or 0.0
    n, s = prof.n, prof.std
    asymptotic = problem.k0 + m_part + s * n ** 1.5 * PARISI_GROUND_STATE
    finite = problem.k0 + m_part + s * n ** 1.5 * (PARISI_GROUND_STATE - FINITE_SIZE_A * n ** (-2 / 3))
    return {"optimum": problem.to_objective(asymptotic),
            "finite_size_estimate": problem.to_objective(finite),
            "per_spin_parisi": PARISI_GROUND_STATE,
            "source": "Parisi formula, P* = 0.7631667 (Crisanti & Rizzo 2002); finite-size e_n ≈ P* − 0.7 n^(-2/3) "
                      "(Boettcher 2005, coefficient from memory): an estimate, not a bound",
            "balanced": prof.mean < 0}


def mean_part_warning(problem: CanonicalProblem, prof: Profile, prediction: dict[str, Any] | None) -> str | None:
    """In the caller's terms: a negative mean coupling is a rank-one part that favours balanced states.

    Emitted when a mean-field solver ran on a dense problem whose mean is visible
    above the semicircle (``mean_outlier > 1``); None otherwise.
    """
    if not (prof.dense and prof.mean < 0 and prof.mean_outlier > 1.0):
        return None
    caller_mean = abs(prof.mean * problem.scale)
    if problem.form == "maxcut":
        what = (f"the graph is dense and its edge weights average {2 * caller_mean:.4g} per pair of nodes: this "
                f"rank-one part favours balanced cuts (two sides of equal size)")
        goal = "cut"
    elif problem.form == "qubo":
        what = (f"the QUBO's off-diagonal entries have a positive mean ({4 * caller_mean:.4g} per pair, Q_ij + Q_ji): "
                f"this rank-one part favours assignments with about as many 1s as 0s")
        goal = "minimum"
    else:
        what = (f"the couplings have an antiferromagnetic mean ({-caller_mean:.4g} per pair): this rank-one part "
                f"favours states with zero magnetisation")
        goal = "minimum energy"
    text = (f"{what}. The solver centred the couplings (removed the mean) for message passing and cleaned up on the "
            f"full couplings, which keeps the state balanced.")
    if prediction:
        text += (f" Parisi-based prediction for the {goal}: ≈ {prediction['optimum']:.6g} "
                 f"(finite-size estimate {prediction['finite_size_estimate']:.6g}; an estimate, not a bound).")
    return text
