"""Repair a state against a form's constraints: nearest feasible state first, then feasible-space local search.

Works on the form's base problem (the canonical form without penalties: maximise
C(σ) = ½σᵀKσ + bᵀσ + k₀) and on the constraints as a system low ≤ A x ≤ high over the
indicators x = (1 + tσ)/2 (t = +1 when σ = +1 is the counted value, else −1).

1. **To feasibility**: flip, one at a time, the variable of a violated constraint that most
   reduces the total violation Σ_c dist(A_c x, [low_c, high_c]) / step_c, breaking ties by the
   objective.  For count constraints on disjoint sets (exactly-k, one-of, balance) each flip removes
   one unit, so the state reached is a nearest feasible one (fewest flips).  When no flip reduces the
   violation (a general sum that flips cannot reach), there is no repair.
2. **Local search**: first-improvement passes over moves that keep every constraint satisfied:
   single flips (free variables, or counts with room in their range) and swaps (flip i and j
   together, j sharing a constraint with i and holding the other value), until no move gains.
"""

from __future__ import annotations

from typing import Any, Callable

import numpy as np

from spinward.core.canonical import CanonicalProblem, is_sparse

from .constraints import Constraint

#: a gain below this share of the largest coefficient (times n) counts as zero, so float noise cannot cycle
GAIN_RTOL = 1e-12


class FeasibleState:
    """Spins, local fields and constraint sums of one state, updated flip by flip."""

    def __init__(self, base: CanonicalProblem, constraints: list[Constraint], sigma: np.ndarray, t: float) -> None:
        import scipy.sparse as sp

        self.base, self.t = base, t
        rows = np.concatenate([np.full(len(c.index), k) for k, c in enumerate(constraints)])
        cols = np.concatenate([c.index for c in constraints])
        vals = np.concatenate([c.coefficients for c in constraints]).astype(np.float64)
        shape = (len(constraints), base.n)
        self.A_rows = sp.csr_array((vals, (rows, cols)), shape=shape)
        self.A_cols = sp.csc_array(self.A_rows)
        self.low = np.array([c.low for c in constraints], dtype=np.float64)
        self.high = np.array([c.high for c in constraints], dtype=np.float64)
        self.step = np.array([c.step for c in constraints], dtype=np.float64)
        self.slack = 1e-9 * np.maximum(1.0, np.asarray(abs(self.A_rows).sum(axis=1)).ravel())
        self.s = np.asarray(sigma, dtype=np.float64).copy()
        self.x = (1.0 + t * self.s) / 2.0
        self.sums = self.A_rows @ self.x
        self.h = base.local_fields(self.s)
        self.K = sp.csr_array(base.K) if is_sparse(base.K) else None
        big = max(base.max_abs_coupling(), float(np.abs(base.b).max()) if base.n else 0.0, 1e-300)
        self.tol = GAIN_RTOL * big * max(base.n, 1)

    def row(self, i: int) -> np.ndarray:
        """K_i· as a dense float64 vector."""
        if self.K is None:
            return np.asarray(self.base.K[i], dtype=np.float64)
        out = np.zeros(self.base.n)
        lo, hi = self.K.indptr[i], self.K.indptr[i + 1]
        out[self.K.indices[lo:hi]] = self.K.data[lo:hi]
        return out

    def flip(self, i: int, row: np.ndarray | None = None) -> None:
        old = self.s[i]
        self.h += (self.row(i) if row is None else row) * (-2.0 * old)
        d = 1.0 - 2.0 * self.x[i]
        lo, hi = self.A_cols.indptr[i], self.A_cols.indptr[i + 1]
        self.sums[self.A_cols.indices[lo:hi]] += self.A_cols.data[lo:hi] * d
        self.s[i], self.x[i] = -old, 1.0 - self.x[i]

    def gains(self, idx: np.ndarray) -> np.ndarray:
        """Change of C when each variable in ``idx`` flips alone."""
        return -2.0 * self.s[idx] * self.h[idx]

    def violation(self, sums: np.ndarray, rows: np.ndarray | slice = slice(None)) -> np.ndarray:
        """Σ over ``rows`` of dist(sum, [low, high]) / step, per column of ``sums``."""
        low, high = self.low[rows], self.high[rows]
        if sums.ndim == 2:
            low, high = low[:, None], high[:, None]
        step, slack = self.step[rows], self.slack[rows]
        if sums.ndim == 2:
            step, slack = step[:, None], slack[:, None]
        gap = np.maximum(np.maximum(low - sums, sums - high) - slack, 0.0) / step
        return gap.sum(axis=0)


def to_feasible(state: FeasibleState) -> int | None:
    """Flip variables of violated constraints until none is violated; the flip count, or None when stuck."""
    flips = 0
    while True:
        current = float(state.violation(state.sums))
        if current <= 0:
            return flips
        bad = _violated(state)
        cand = np.unique(state.A_rows[bad].indices)
        d = 1.0 - 2.0 * state.x[cand]
        new = state.sums[:, None] + state.A_cols[:, cand].toarray() * d
        after = state.violation(new)
        order = np.lexsort((-state.gains(cand), after))
        best = int(order[0])
        if after[best] >= current - 1e-12:
            return None
        state.flip(int(cand[best]))
        flips += 1


def _violated(state: FeasibleState) -> np.ndarray:
    gap = np.maximum(state.low - state.sums, state.sums - state.high) - state.slack
    return np.flatnonzero(gap > 0)


def try_move(state: FeasibleState, i: int) -> bool:
    """Apply the best improving feasible move that flips ``i`` (alone or with a partner)."""
    lo, hi = state.A_cols.indptr[i], state.A_cols.indptr[i + 1]
    rows_i, coef_i = state.A_cols.indices[lo:hi], state.A_cols.data[lo:hi]
    di = 1.0 - 2.0 * state.x[i]
    gi = float(state.gains(np.array([i]))[0])
    if gi > state.tol and (not rows_i.size or state.violation(state.sums[rows_i] + coef_i * di, rows_i) <= 0):
        state.flip(i)
        return True
    if not rows_i.size:
        return False
    partners = np.unique(state.A_rows[rows_i].indices)
    partners = partners[(partners != i) & (state.x[partners] != state.x[i])]
    if not partners.size:
        return False
    row = state.row(i)
    gain = gi + state.gains(partners) + 4.0 * state.s[i] * state.s[partners] * row[partners]
    good = gain > state.tol
    if not np.any(good):
        return False
    partners, gain = partners[good], gain[good]
    sub = state.A_cols[:, np.concatenate([[i], partners])]
    rows = np.unique(sub.indices)
    dense = sub.toarray()[rows]
    new = state.sums[rows][:, None] + dense[:, :1] * di + dense[:, 1:] * (1.0 - 2.0 * state.x[partners])
    feasible = state.violation(new, rows) <= 0
    if not np.any(feasible):
        return False
    j = int(partners[feasible][np.argmax(gain[feasible])])
    state.flip(i, row)
    state.flip(j)
    return True


def improve(state: FeasibleState, should_stop: Callable[[], bool]) -> int:
    """First-improvement passes of feasible moves until a pass changes nothing; the number of moves."""
    moves, changed = 0, True
    while changed and not should_stop():
        changed = False
        for i in range(state.base.n):
            if i % 64 == 0 and should_stop():
                break
            if try_move(state, i):
                moves += 1
                changed = True
    return moves


def repair_state(base: CanonicalProblem, constraints: list[Constraint], sigma: np.ndarray, t: float,
                 should_stop: Callable[[], bool]) -> tuple[np.ndarray, dict[str, Any]] | None:
    """Base spins of a feasible state near ``sigma`` (its first ``base.n`` entries), improved; None if stuck."""
    state = FeasibleState(base, constraints, np.asarray(sigma)[: base.n], t)
    feasible_before = not _violated(state).size
    flips = to_feasible(state)
    if flips is None:
        return None
    moves = improve(state, should_stop)
    info = {"feasible_before": feasible_before, "flips_to_feasible": flips, "improving_moves": moves}
    return state.s.astype(np.int8), info
