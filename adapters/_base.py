"""Shared plumbing of the three forms: canonical construction with exact rescaling, caching, constraints."""

from __future__ import annotations

import warnings
from typing import Any, Hashable

import numpy as np

from spinward.core.canonical import CanonicalProblem, Sense, is_sparse
from spinward.core.errors import InputWarning

from .constraints import Constraint
from .modelling import Modelling
from .validate import check_total, dyadic_resolution, power_of_two_scale


def build_canonical(P: Any, linear: np.ndarray, constant: float, *, sign: float, shift: float,
                    labels: tuple[Hashable, ...], form: str, sense: Sense) -> CanonicalProblem:
    """Canonical problem for ``objective = sign · (½σᵀPσ + linearᵀσ + constant) + shift``.

    P is symmetric with zero diagonal.  All coefficients are divided by one exact
    power of two when their magnitudes are extreme; ``scale`` carries it back.
    """
    big, mass = _max_abs_and_mass(P)
    lin_big = float(np.abs(linear).max()) if linear.size else 0.0
    check_total(mass + float(np.abs(linear).sum()) + abs(constant) + abs(shift), f"the {form} coefficients")
    t = power_of_two_scale(big, lin_big, constant)
    if t != 1.0:
        P = P / t
        linear = linear / t
        constant = constant / t
    # The pass above already read max|K| and Σ|K|: a big dense K (a memmap, say) costs a
    # tenth of a second or more per read, so the canonical problem keeps both (t is a power
    # of two: dividing is exact).
    meta: dict[Any, Any] = {"_max_abs": big / t}
    if not hasattr(P, "abs_sum"):
        meta["_abs_mass"] = mass / t / 2
    if t != 1.0:
        meta["rescaled_by"] = t
    return CanonicalProblem(K=P, b=np.asarray(linear, dtype=np.float64), k0=float(constant), labels=labels,
                            scale=sign * t, shift=float(shift), sense=sense, form=form, meta=meta)


def _max_abs_and_mass(P: Any) -> tuple[float, float]:
    """(max |P_ij|, Σ |P_ij|) in one read of P."""
    if hasattr(P, "abs_sum"):  # couplings held elsewhere in row blocks (adapters/distributed.py)
        return float(P.max_abs()), float(P.abs_sum())
    if is_sparse(P):
        return (float(abs(P).max()) if P.nnz else 0.0), float(abs(P).sum())
    big, mass = 0.0, 0.0
    for block in _row_blocks(P):
        if block.size:
            a = np.abs(block)
            big, mass = max(big, float(a.max())), mass + float(a.sum(dtype=np.float64))
    return big, mass


def _row_blocks(P: np.ndarray) -> Any:
    """Row blocks of a dense P of about TILE² entries each (no n² temporary; a memmap is read in place)."""
    from . import validate

    rows = max(1, validate.TILE ** 2 // max(P.shape[1], 1)) if P.ndim == 2 else max(P.shape[0], 1)
    for start in range(0, P.shape[0], rows):
        yield P[start:start + rows]


class CachedForm(Modelling):
    """A form that builds its canonical problem once, keeps repair notes, and takes constraints.

    Subclasses implement ``_build`` (the canonical problem without penalties), ``_objective`` (the
    caller's objective without penalties) and ``_coefficients``; adapters/modelling.py adds the
    constraint helpers, which extend the form in place and drop the cached canonical problem.
    """

    def __init__(self) -> None:
        self._canonical: CanonicalProblem | None = None
        self._base: CanonicalProblem | None = None
        self._constraints: list[Constraint] = []
        self.notes: list[str] = []

    def note(self, message: str) -> None:
        """Record a documented repair of the input, and warn about it."""
        self.notes.append(message)
        warnings.warn(message, InputWarning, stacklevel=4)

    def canonical(self) -> CanonicalProblem:
        if self._canonical is None:
            self._canonical = self._canonical_with_constraints()
        return self._canonical

    def base_canonical(self) -> CanonicalProblem:
        """The canonical problem without penalty terms (cached)."""
        if self._base is None:
            self._base = self._build()
        return self._base

    def _changed(self) -> None:
        self._canonical = None

    def _build(self) -> CanonicalProblem:  # pragma: no cover - abstract
        raise NotImplementedError

    def base_resolution(self) -> float | None:
        """The resolution of the objective without penalties, computed once from :meth:`_coefficients`."""
        if not hasattr(self, "_resolution"):
            self._resolution = dyadic_resolution(*self._coefficients())
        return self._resolution

    def _coefficients(self) -> tuple[Any, ...]:
        """Every number the caller's objective is built from (arrays or scalars)."""
        raise NotImplementedError

    def __repr__(self) -> str:
        c = self.canonical()
        extra = f", constraints={len(self._constraints)}" if self._constraints else ""
        return f"{type(self).__name__}(n={c.n}, couplings={c.n_couplings()}{extra})"
