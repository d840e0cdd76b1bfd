"""The standard linearisation of a canonical problem as a mixed-integer linear program.

Canonical sense: maximise C(σ) = Σ_{i<j} K_ij σ_iσ_j + Σ_i b_iσ_i + k₀.  With σ_i = 2x_i − 1
(x binary) and, per coupling, z_ij = x_i XOR x_j (so σ_iσ_j = 1 − 2z_ij):

    C = A₀ − (Σ_{i<j} 2K_ij z_ij − Σ_i 2b_i x_i),   A₀ = Σ_{i<j} K_ij − Σ_i b_i + k₀,

and the program minimises the bracket.  Each z_ij is continuous in [0, 1] with only the two
inequalities its cost sign needs: z ≥ x_i − x_j and z ≥ x_j − x_i when K_ij > 0 (z is pushed
down), z ≤ x_i + x_j and z ≤ 2 − x_i − x_j when K_ij < 0 (z is pushed up); at an integral x
the optimal z is the XOR, so the program's optimum is max C.  Without fields C(σ) = C(−σ), and
the variable of highest degree is fixed to x = 1.

A dual bound L of the program gives max C ≤ A₀ − L.  L is a floating-point number from an LP
solver that works to feasibility tolerances (HiGHS: 10⁻⁷ primal and dual, 10⁻⁶ for
integrality), so the bound is widened by the safety margin

    μ = 10⁻⁶ · (Σ_j |c_j| + N),

ten times those tolerances per unit of cost mass and per variable (every variable is boxed in
[0, 1], so a reduced-cost error δ per variable moves an LP bound by at most δ·N).  The widened
bound is reported as certified; μ is a margin against the solver's stated tolerances, not a
machine-checked proof.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from spinward.core import CanonicalProblem

#: the safety margin's factor (see the module docstring)
MARGIN_RTOL = 1e-6


@dataclass
class Program:
    """minimise cᵀv subject to low ≤ A v ≤ high, 0 ≤ v ≤ upper; v = (x, z); the first n are integers."""

    c: np.ndarray
    A: Any
    low: np.ndarray
    high: np.ndarray
    upper: np.ndarray
    n: int
    offset: float          # A₀: max C = A₀ − min cᵀv
    fixed: int | None      # the variable fixed to x = 1 (no fields), or None
    edges: tuple[np.ndarray, np.ndarray, np.ndarray] = (np.zeros(0, np.int64),) * 3  # (u, v, column of z_uv)
    nodes: int = 0         # spins, plus the ghost spin (index n) when there are fields

    @property
    def margin(self) -> float:
        """μ, in the units of C."""
        return MARGIN_RTOL * (float(np.abs(self.c).sum()) + len(self.c))

    def integrality(self) -> np.ndarray:
        out = np.zeros(len(self.c))
        out[: self.n] = 1
        return out

    def spins(self, v: np.ndarray) -> np.ndarray:
        """σ = 2x − 1 from a solution vector (x rounded to the nearest integer)."""
        x = np.rint(np.asarray(v[: self.n]))
        return np.where(x > 0.5, 1, -1).astype(np.int8)


def upper_couplings(problem: CanonicalProblem) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(i, j, K_ij) for the non-zero couplings with i < j."""
    import scipy.sparse as sp

    if problem.kind == "sparse":
        coo = sp.triu(sp.csr_array(problem.K), k=1).tocoo()
        keep = coo.data != 0
        return coo.row[keep].astype(np.int64), coo.col[keep].astype(np.int64), np.asarray(coo.data[keep], float)
    K = np.asarray(problem.K, dtype=np.float64)
    i, j = np.nonzero(np.triu(K, 1))
    return i.astype(np.int64), j.astype(np.int64), K[i, j]


def build_program(problem: CanonicalProblem) -> Program:
    """The linearised program of ``problem`` (see the module docstring)."""
    import scipy.sparse as sp

    n = problem.n
    i, j, w = upper_couplings(problem)
    m = len(w)
    c = np.concatenate([-2.0 * problem.b, 2.0 * w])
    z = n + np.arange(m)
    pos = w > 0
    # two rows per coupling, on (z, x_i, x_j): K > 0: z − x_i + x_j ≥ 0 and z + x_i − x_j ≥ 0;
    # K < 0: z − x_i − x_j ≤ 0 and z + x_i + x_j ≤ 2
    first = np.stack([np.ones(m), -np.ones(m), np.where(pos, 1.0, -1.0)], axis=1)
    second = np.stack([np.ones(m), np.ones(m), np.where(pos, -1.0, 1.0)], axis=1)
    rows = np.repeat(np.arange(2 * m), 3)
    cols = np.stack([np.stack([z, i, j], axis=1), np.stack([z, i, j], axis=1)], axis=1).reshape(-1)
    vals = np.stack([first, second], axis=1).reshape(-1)
    A = sp.csr_array((vals, (rows, cols)), shape=(2 * m, n + m))
    inf = np.inf
    low = np.stack([np.where(pos, 0.0, -inf), np.where(pos, 0.0, -inf)], axis=1).reshape(-1)
    high = np.stack([np.where(pos, inf, 0.0), np.where(pos, inf, 2.0)], axis=1).reshape(-1)
    upper = np.ones(n + m)
    offset = float(w.sum() - problem.b.sum() + problem.k0)
    fixed = None
    if not problem.has_fields and n:
        fixed = int(np.argmax(np.bincount(np.concatenate([i, j]), minlength=n)))
    return Program(c=c, A=A, low=low, high=high, upper=upper, n=n, offset=offset, fixed=fixed,
                   edges=separation_edges(problem, i, j), nodes=n + (1 if problem.has_fields else 0))


def separation_edges(problem: CanonicalProblem, i: np.ndarray, j: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(u, v, column): the couplings with their z columns, then spin–ghost edges (column x_i) for fields."""
    n, m = problem.n, len(i)
    f = np.flatnonzero(problem.b != 0)
    return (np.concatenate([i, f]).astype(np.int64), np.concatenate([j, np.full(len(f), n)]).astype(np.int64),
            np.concatenate([n + np.arange(m), f]).astype(np.int64))


def bounds_of(program: Program) -> tuple[np.ndarray, np.ndarray]:
    """Variable bounds, with the fixed variable (if any) at x = 1."""
    lower = np.zeros(len(program.c))
    if program.fixed is not None:
        lower[program.fixed] = 1.0
    return lower, program.upper
