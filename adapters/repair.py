"""Repair a state against a form's constraints: nearest feasible state first, then feasible-space local search.

Works on the form's base problem (the canonical form without penalties: maximise
C(σ) = ½σᵀKσ + bᵀσ + k₀) and on the constraints as a system low ≤ A x ≤ high over the
indicators x = (1 + tσ)/2 (t = +1 when σ = +1 is the counted value, else −1).

1. **To feasibility**: while a constraint is violated, flip the variable of the most violated
   one that most reduces the total violation Σ_c dist(A_c x, [low_c, high_c]) / step_c, breaking
   ties by the objective.  For count constraints on disjoint sets (exactly-k, one-of, balance)
   each flip removes one unit, so the state reached is a nearest feasible one (fewest flips).
   When no flip reduces the violation (a general sum that flips cannot reach), there is no repair.
2. **Local search**: first-improvement passes over moves that keep every constraint satisfied:
   single flips (free variables, or counts with room in their range) and swaps (flip i and j
   together, j sharing a constraint with i and holding the other value), until no move gains.

Constraint rows and columns are walked through their index arrays directly (one vectorised
gather per move), so a move costs O(entries it touches), not O(constraints × variables).
"""

from __future__ import annotations

from typing import Any, Callable

import numpy as np

from spinward.core.canonical import CanonicalProblem, is_sparse

from .constraints import Constraint

#: a gain below this share of the largest coefficient (times n) counts as zero, so float noise cannot cycle
GAIN_RTOL = 1e-12


def gather(indptr: np.ndarray, items: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(owner, position): for every stored entry of the given rows (or columns), which item it belongs to
    (0..len(items)−1) and its position in the index/data arrays."""
    starts, ends = indptr[items], indptr[items + 1]
    lengths = ends - starts
    owner = np.repeat(np.arange(len(items)), lengths)
    offsets = np.arange(int(lengths.sum())) - np.repeat(np.cumsum(lengths) - lengths, lengths)
    return owner, np.repeat(starts, lengths) + offsets


class FeasibleState:
    """Spins, local fields and constraint sums of one state, updated flip by flip."""

    def __init__(self, base: CanonicalProblem, constraints: list[Constraint], sigma: np.ndarray, t: float) -> None:
        import scipy.sparse as sp

        self.base, self.t, self.n = base, t, base.n
        rows = np.concatenate([np.full(len(c.index), k) for k, c in enumerate(constraints)])
        cols = np.concatenate([c.index for c in constraints])
        vals = np.concatenate([c.coefficients for c in constraints]).astype(np.float64)
        by_row = sp.csr_array((vals, (rows, cols)), shape=(len(constraints), base.n))
        by_col = sp.csc_array(by_row)
        self.r_ptr, self.r_idx = by_row.indptr.astype(np.int64), by_row.indices.astype(np.int64)
        self.c_ptr, self.c_idx, self.c_val = (by_col.indptr.astype(np.int64), by_col.indices.astype(np.int64),
                                              by_col.data.astype(np.float64))
        self.low = np.array([c.low for c in constraints], dtype=np.float64)
        self.high = np.array([c.high for c in constraints], dtype=np.float64)
        self.step = np.array([c.step for c in constraints], dtype=np.float64)
        self.slack = 1e-9 * np.maximum(1.0, np.asarray(abs(by_row).sum(axis=1)).ravel())
        self.s = np.asarray(sigma, dtype=np.float64).copy()
        self.x = (1.0 + t * self.s) / 2.0
        self.sums = by_row @ self.x
        self.h = base.local_fields(self.s)
        self.K = None
        if is_sparse(base.K):
            self.K = sp.csr_array(base.K, dtype=np.float64)
            self.K.sort_indices()
        big = max(base.max_abs_coupling(), float(np.abs(base.b).max()) if base.n else 0.0, 1e-300)
        self.tol = GAIN_RTOL * big * max(base.n, 1)

    # --- couplings ---
    def couplings(self, i: int, js: np.ndarray) -> np.ndarray:
        """K_ij for each j in ``js``."""
        if self.K is None:
            return np.asarray(self.base.K[i, js], dtype=np.float64)
        lo, hi = self.K.indptr[i], self.K.indptr[i + 1]
        cols, data = self.K.indices[lo:hi], self.K.data[lo:hi]
        if not len(cols):
            return np.zeros(len(js))
        pos = np.minimum(np.searchsorted(cols, js), len(cols) - 1)
        return np.where(cols[pos] == js, data[pos], 0.0)

    def flip(self, i: int) -> None:
        old = self.s[i]
        if self.K is None:
            self.h += np.asarray(self.base.K[i], dtype=np.float64) * (-2.0 * old)
        else:
            lo, hi = self.K.indptr[i], self.K.indptr[i + 1]
            self.h[self.K.indices[lo:hi]] += self.K.data[lo:hi] * (-2.0 * old)
        lo, hi = self.c_ptr[i], self.c_ptr[i + 1]
        self.sums[self.c_idx[lo:hi]] += self.c_val[lo:hi] * (1.0 - 2.0 * self.x[i])
        self.s[i], self.x[i] = -old, 1.0 - self.x[i]

    def gains(self, idx: np.ndarray) -> np.ndarray:
        """Change of C when each variable in ``idx`` flips alone."""
        return -2.0 * self.s[idx] * self.h[idx]

    # --- constraints ---
    def distance(self, sums: np.ndarray, rows: np.ndarray) -> np.ndarray:
        """dist(sum, [low, high]) / step of each entry (row ``rows[k]`` holding ``sums[k]``)."""
        gap = np.maximum(self.low[rows] - sums, sums - self.high[rows]) - self.slack[rows]
        return np.maximum(gap, 0.0) / self.step[rows]

    def violated(self) -> np.ndarray:
        rows = np.arange(len(self.sums))
        return rows[self.distance(self.sums, rows) > 0]

    def entries(self, columns: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(owner, row, coefficient) of every constraint entry of the given columns."""
        owner, pos = gather(self.c_ptr, columns)
        return owner, self.c_idx[pos], self.c_val[pos]

    def members(self, rows: np.ndarray) -> np.ndarray:
        """The distinct variables of the given constraint rows."""
        if len(rows) == 1:  # a row lists each variable once
            return self.r_idx[self.r_ptr[rows[0]]:self.r_ptr[rows[0] + 1]]
        _, pos = gather(self.r_ptr, rows)
        return np.unique(self.r_idx[pos])


def to_feasible(state: FeasibleState) -> int | None:
    """Flip variables of violated constraints (the most violated first) until none is; the flip count, or None
    when no flip of any violated constraint reduces the total violation."""
    flips = 0
    while True:
        bad = state.violated()
        if not bad.size:
            return flips
        for row in bad[np.argsort(-state.distance(state.sums[bad], bad), kind="stable")]:
            flip = _best_reducing_flip(state, int(row))
            if flip is not None:
                state.flip(flip)
                flips += 1
                break
        else:
            return None


def _best_reducing_flip(state: FeasibleState, row: int) -> int | None:
    """The variable of constraint ``row`` whose flip most reduces the total violation (ties: the objective)."""
    cand = state.members(np.array([row]))
    owner, rows, coef = state.entries(cand)
    d = (1.0 - 2.0 * state.x[cand])[owner]
    change = state.distance(state.sums[rows] + coef * d, rows) - state.distance(state.sums[rows], rows)
    delta = np.bincount(owner, weights=change, minlength=len(cand))
    best = int(np.lexsort((-state.gains(cand), delta))[0])
    return int(cand[best]) if delta[best] < -1e-12 else None


def try_move(state: FeasibleState, i: int) -> bool:
    """Apply the best improving feasible move that flips ``i`` (alone or with a partner)."""
    lo, hi = state.c_ptr[i], state.c_ptr[i + 1]
    rows_i, coef_i = state.c_idx[lo:hi], state.c_val[lo:hi]
    di = 1.0 - 2.0 * state.x[i]
    alone = state.sums[rows_i] + coef_i * di
    alone_bad = state.distance(alone, rows_i) > 0
    gi = float(state.gains(np.array([i]))[0])
    if gi > state.tol and not alone_bad.any():
        state.flip(i)
        return True
    if not rows_i.size:
        return False
    partners = state.members(rows_i)
    partners = partners[(partners != i) & (state.x[partners] != state.x[i])]
    if not partners.size:
        return False
    gain = gi + state.gains(partners) + 4.0 * state.s[i] * state.s[partners] * state.couplings(i, partners)
    keep = gain > state.tol
    if not keep.any():
        return False
    partners, gain = partners[keep], gain[keep]
    return _swap(state, i, di, rows_i, coef_i, alone_bad, partners, gain)


def _swap(state: FeasibleState, i: int, di: float, rows_i: np.ndarray, coef_i: np.ndarray, alone_bad: np.ndarray,
          partners: np.ndarray, gain: np.ndarray) -> bool:
    """Flip i and the best partner j whose joint move keeps every constraint satisfied."""
    shift = np.zeros(len(state.sums))
    shift[rows_i] = coef_i * di
    must = np.zeros(len(state.sums), dtype=bool)
    must[rows_i[alone_bad]] = True  # rows that i alone breaks: j must put them right
    owner, rows, coef = state.entries(partners)
    new = state.sums[rows] + shift[rows] + coef * (1.0 - 2.0 * state.x[partners])[owner]
    broken = np.bincount(owner, weights=state.distance(new, rows) > 0, minlength=len(partners))
    mended = np.bincount(owner, weights=must[rows], minlength=len(partners))
    feasible = (broken == 0) & (mended == int(must.sum()))
    if not feasible.any():
        return False
    j = int(partners[feasible][np.argmax(gain[feasible])])
    state.flip(i)
    state.flip(j)
    return True


def improve(state: FeasibleState, should_stop: Callable[[], bool]) -> int:
    """First-improvement passes of feasible moves until a pass changes nothing; the number of moves."""
    moves, changed = 0, True
    while changed and not should_stop():
        changed = False
        for i in range(state.n):
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
    feasible_before = not state.violated().size
    flips = to_feasible(state)
    if flips is None:
        return None
    moves = improve(state, should_stop)
    info = {"feasible_before": feasible_before, "flips_to_feasible": flips, "improving_moves": moves}
    return state.s.astype(np.int8), info
