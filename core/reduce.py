"""Fixed variables: an exact reduction of the canonical problem, and the map back.

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀.  With the spins F fixed to σ_F and
the rest R free,

    C(σ) = ½σ_RᵀK_RRσ_R + (b_R + K_RF σ_F)ᵀσ_R + (k₀ + ½σ_FᵀK_FFσ_F + b_Fᵀσ_F),

so the reduced problem has couplings K_RR, fields b_R + K_RFσ_F and offset k₀ + ½σ_FᵀK_FFσ_F
+ b_Fᵀσ_F: every state of the free spins has the same value in both.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from .canonical import CanonicalProblem
from .errors import InputError


@dataclass(frozen=True)
class Fixing:
    """Which canonical spins are fixed, to what, and the reduced problem over the others."""

    fixed: np.ndarray        # canonical indices, ascending
    values: np.ndarray       # their spins (int8 ±1)
    free: np.ndarray         # the other indices, ascending
    reduced: CanonicalProblem

    def expand(self, sigma: np.ndarray, value: float) -> tuple[np.ndarray, float]:
        """A reduced state → the full state (the value is the same by construction)."""
        full = np.empty(self.fixed.size + self.free.size, dtype=np.int8)
        full[self.fixed] = self.values
        full[self.free] = np.asarray(sigma, dtype=np.int8)
        return full, value


def fix_spins(problem: CanonicalProblem, fixed: np.ndarray, values: np.ndarray) -> Fixing:
    """The exact reduction of ``problem`` with ``fixed`` spins set to ``values`` (see the module docstring)."""
    if problem.kind == "operator":
        raise InputError("fix= needs explicit couplings; a LinearOperator cannot be restricted to the free spins")
    order = np.argsort(fixed)
    fixed, values = np.asarray(fixed, dtype=np.int64)[order], np.asarray(values, dtype=np.int8)[order]
    free = np.setdiff1d(np.arange(problem.n, dtype=np.int64), fixed)
    s_f = values.astype(np.float64)
    K_rr, K_rf, K_ff = _blocks(problem, free, fixed)
    b = np.asarray(problem.b, dtype=np.float64)
    fields = b[free] + (np.asarray(K_rf @ s_f, dtype=np.float64) if fixed.size else 0.0)
    constant = problem.k0 + 0.5 * float(s_f @ np.asarray(K_ff @ s_f, dtype=np.float64)) + float(b[fixed] @ s_f)
    reduced = CanonicalProblem(K_rr, np.asarray(fields, dtype=np.float64).reshape(free.size), constant,
                               tuple(problem.labels[int(i)] for i in free), scale=problem.scale,
                               shift=problem.shift, sense=problem.sense, form=problem.form)
    return Fixing(fixed, values, free, reduced)


def _blocks(problem: CanonicalProblem, free: np.ndarray, fixed: np.ndarray) -> tuple[Any, Any, Any]:
    if problem.kind == "sparse":
        import scipy.sparse as sp

        K = sp.csr_array(problem.K)
        rows = sp.csr_array(K[free])
        return sp.csr_array(rows[:, free]), sp.csr_array(rows[:, fixed]), sp.csr_array(K[fixed][:, fixed])
    K = np.asarray(problem.K)
    return K[np.ix_(free, free)], K[np.ix_(free, fixed)], K[np.ix_(fixed, fixed)]
