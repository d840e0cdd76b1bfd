"""The contract between a caller's problem form and the core.

A form (QUBO, Ising, MaxCut, or a third party's) turns itself into a
:class:`~spinward.core.canonical.CanonicalProblem`, decodes canonical spins into
the caller's own domain, and evaluates its objective directly from the caller's
own input, never through the canonical form.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from typing import Any, Callable, ClassVar, Hashable

import numpy as np

from .canonical import CanonicalProblem, Sense


class ProblemForm(ABC):
    """A problem as the caller holds it; subclasses live in ``spinward.adapters``."""

    form: ClassVar[str] = "form"
    sense: ClassVar[Sense] = "min"
    #: the values a variable takes in the caller's domain, in the order (σ=+1, σ=−1)
    domain: ClassVar[tuple[int, int]] = (1, -1)

    @abstractmethod
    def canonical(self) -> CanonicalProblem:
        """The canonical problem with its affine map and labels (cached by implementations)."""

    @abstractmethod
    def evaluate(self, values: np.ndarray) -> float:
        """The caller's objective for ``values`` (caller domain, canonical index order)."""

    @property
    def labels(self) -> tuple[Hashable, ...]:
        return self.canonical().labels

    def decode(self, sigma: np.ndarray) -> np.ndarray:
        """Canonical spins → caller-domain values (int8), in canonical index order."""
        up, down = self.domain
        return np.where(np.asarray(sigma) > 0, up, down).astype(np.int8)

    def encode(self, values: np.ndarray) -> np.ndarray:
        """Caller-domain values → canonical spins (int8)."""
        up, _ = self.domain
        return np.where(np.asarray(values) == up, 1, -1).astype(np.int8)

    def resolution(self) -> float | None:
        """The objective's resolution: two states' objectives differ by 0 or by at least this much.

        None when unknown (the default).  Forms whose coefficients are short binary
        fractions (integers give 1.0) return the largest power of two dividing them all;
        a certified bound within it of the objective then proves optimality.
        """
        return None

    def state_from(self, state: Any, what: str = "initial") -> np.ndarray:
        """Canonical spins for a state given in the caller's terms.

        ``state`` is a dict keyed by every label, an array in the form's own values (0/1 for
        QUBO and MaxCut sides, ±1 for Ising) in label order, or a previous ``Result`` of this
        problem.  Anything else, a wrong length, an unknown label or a value outside the
        domain is an InputError naming what was expected.
        """
        from .errors import InputError

        labels = self.labels
        if hasattr(state, "assignment") and hasattr(state, "array"):
            state = state.assignment
        if isinstance(state, dict):
            known = set(labels)
            missing = [label for label in labels if label not in state][:1]
            extra = [key for key in state if key not in known][:1]
            if missing or extra:
                bad = f"no value for label {missing[0]!r}" if missing else f"unknown label {extra[0]!r}"
                raise InputError(f"{what}: {bad}; give a value for each of the {len(labels)} labels of this "
                                 f"{self.form} problem")
            values = np.array([state[label] for label in labels], dtype=object)
        else:
            given: np.ndarray | None
            try:
                given = np.asarray(state, dtype=object).reshape(-1) if not np.isscalar(state) else None
            except (TypeError, ValueError):
                given = None
            if given is None or np.asarray(state, dtype=object).ndim != 1 or given.size != len(labels):
                raise InputError(f"{what}: expected {len(labels)} values (one per variable, in label order) or a "
                                 f"dict keyed by label, got {state!r:.80}")
            values = given
        return self._encode_checked(values, what)

    def _encode_checked(self, values: np.ndarray, what: str) -> np.ndarray:
        from .errors import InputError

        up, down = self.domain
        for k, v in enumerate(values.tolist()):
            if isinstance(v, bool) or not isinstance(v, (int, float, np.integer, np.floating)) or v not in (up, down):
                low, high = sorted((up, down))
                raise InputError(f"{what}: value {v!r} for {self.labels[k]!r} is not one of {low} and {high} "
                                 f"(the values of a {self.form} variable)")
        return np.where(np.asarray(values.tolist(), dtype=np.float64) == up, 1, -1).astype(np.int8)

    def constraint_report(self, values: np.ndarray) -> list[dict[str, Any]] | None:
        """Each constraint's status for ``values`` (caller domain, canonical index order), in the caller's labels.

        Every entry holds at least ``{"name": str, "satisfied": bool}``.  None (the default)
        when the form carries no constraints; the front door then reports none.
        """
        return None

    def repair(self, sigma: np.ndarray, should_stop: Callable[[], bool]) -> np.ndarray | None:
        """A feasible canonical state near ``sigma``, improved by moves that keep it feasible.

        None (the default) when the form carries no constraints or none of them can be
        repaired; ``should_stop`` is polled in loops (time limit and Ctrl-C).  The front
        door keeps the repaired state when the state it had violates a constraint, or when
        the repaired one's canonical value is at least as good.
        """
        return None

    def phrase(self, topic: str, values: dict[str, float]) -> str | None:
        """This form's own words for something a solver reports in canonical terms, or None.

        Topics: "mean-part" (``values["mean"]``: the canonical couplings' mean over all pairs,
        ``values["scale"]``: the canonical scale), the rank-one part that a negative mean adds.
        """
        return None

    def caller_count(self) -> int:
        """How many leading canonical variables are the caller's own (the default: all of them).

        A form may add variables of its own after them (the slack of a count constraint); the
        result then shows the caller's variables only, and ``fix`` accepts only those.
        """
        return self.canonical().n

    def describe(self) -> dict[str, Any]:
        """A short summary for messages and reports."""
        c = self.canonical()
        return {"form": self.form, "sense": self.sense, "n": c.n}
