"""Incremental approximate message passing (IAMP) driven by a zero-temperature Parisi solution.

Convention: A is the normalised coupling matrix of shared/CONVENTIONS.md (spectrum ≈ [−2, 2]),
and IAMP climbs ½σᵀAσ (maximise).  It is matrix-free: everything goes through one callable
``matvec(x) -> A x`` (float64 in and out), built here for a dense ndarray (float32 or float64),
a numpy memmap (streamed in row blocks), a scipy.sparse matrix or a scipy LinearOperator.

Iteration (t_ℓ = ℓδ; z is the fresh Gaussian increment of variance δ that AMP produces):

    z  = A f − b f_prev                       (Onsager correction, b = c⟨u⟩)
    u  = ∂_xxΦ(t_ℓ, x),  w = u ∘ z            (control; m += w is the magnetisation path)
    x += γ(t_ℓ) ∂_xΦ(t_ℓ, x) δ + z            (drift of the Parisi SDE)
    f  = c w,  c = √(δ n / ‖w‖²)              (renormalised increment)

At finite n the three-term recursion is only marginally stable along the edge eigenvectors
of A, and the one at λ_min ≈ −2 (which the drift does not damp) grows and ruins about a third
of the runs at n ≤ 2000 (measured).  Removing from z its projection on the last two inputs f
(in theory z is independent of them) kills that mode at a cost of 2/n of the variance.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from .diagnostics import BLOCK_ENTRIES
from .parisi import ParisiTables

Matvec = Callable[[np.ndarray], np.ndarray]


def raw_matvec(K: Any, kind: str) -> Matvec:
    """x ↦ K x in float64, for the canonical problem's K of any kind.

    Dense and memory-mapped K take the same row-block path, so they give bit-identical
    results (a block at a time keeps a memmap's resident pages bounded, too).
    """
    if kind == "operator":
        return lambda x: np.asarray(K.matvec(x), dtype=np.float64).reshape(-1)
    if kind == "sparse":
        csr = K.tocsr()
        return lambda x: np.asarray(csr @ x, dtype=np.float64)
    n = K.shape[0]
    step = max(1, BLOCK_ENTRIES // max(n, 1))
    dtype = K.dtype if K.dtype in (np.float32, np.float64) else np.float64

    def dense(x: np.ndarray) -> np.ndarray:
        xs = np.asarray(x, dtype=dtype)
        out = np.empty(n, dtype=np.float64)
        for r in range(0, n, step):
            out[r:r + step] = np.asarray(K[r:r + step], dtype=dtype) @ xs
        return out

    return dense


def with_ghost(matvec: Matvec, b: np.ndarray) -> Matvec:
    """x' ↦ K' x' for K' = [[K, b], [bᵀ, 0]] (the field absorbed by one extra spin, last)."""

    def ghost(x: np.ndarray) -> np.ndarray:
        out = np.empty(x.size)
        out[:-1] = matvec(x[:-1]) + b * x[-1]
        out[-1] = b @ x[:-1]
        return out

    return ghost


def normalised(matvec: Matvec, mean: float, std: float) -> Matvec:
    """x ↦ A x with A = (K − m(11ᵀ − I)) / (s√n): the rank-one mean is removed, never formed."""

    def apply(x: np.ndarray) -> np.ndarray:
        y = matvec(x)
        if mean != 0.0:
            y -= mean * (x.sum() - x)
        return y / (std * math.sqrt(x.size))

    return apply


@dataclass
class IampResult:
    """The magnetisation path's end point ``m`` (rounded by sign later) and the steps run."""

    m: np.ndarray
    x: np.ndarray
    steps: int
    stopped: bool


def _project_out(z: np.ndarray, recent: list[np.ndarray]) -> np.ndarray:
    """z minus its orthogonal projection on span(recent) (Gram–Schmidt; ``recent`` is short)."""
    basis: list[np.ndarray] = []
    for v in recent:
        for q in basis:
            v = v - (q @ v) * q
        norm = float(np.linalg.norm(v))
        if norm > 1e-300:
            basis.append(v / norm)
    for q in basis:
        z = z - (q @ z) * q
    return z


class _Lookup:
    """Linear interpolation in the tables' rows on their uniform x-grid (one index pass for both)."""

    def __init__(self, grid: np.ndarray) -> None:
        self.x0 = float(grid[0])
        self.inv_h = 1.0 / float(grid[1] - grid[0])
        self.top = grid.size - 1 - 1e-9

    def locate(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        pos = np.clip((x - self.x0) * self.inv_h, 0.0, self.top)
        idx = pos.astype(np.intp)
        return idx, pos - idx

    @staticmethod
    def at(row: np.ndarray, idx: np.ndarray, frac: np.ndarray) -> np.ndarray:
        lo = row[idx]
        return lo + frac * (row[idx + 1] - lo)


def iamp(matvec: Matvec, n: int, tables: ParisiTables, rng: np.random.Generator, *,
         project: int = 2, should_stop: Callable[[], bool] = lambda: False) -> IampResult:
    """Run IAMP on the normalised A (see the module docstring); returns the magnetisation m.

    ``project`` is how many of the latest inputs f each z is made orthogonal to (0 = plain).
    Outside the tables' x-range the end values are used (∂_xΦ → ±1, ∂_xxΦ → 0 there).
    """
    steps = tables.t.size
    dts = np.diff(np.append(tables.t, 1.0))
    look = _Lookup(tables.x)
    f = rng.choice([-1.0, 1.0], size=n) * math.sqrt(dts[0])
    f_prev = np.zeros(n)
    onsager = 0.0
    x = np.zeros(n)
    m = np.zeros(n)
    recent = [f]
    for step in range(steps):
        z = matvec(f) - onsager * f_prev
        if project > 0:
            z = _project_out(z, recent[-project:])
        idx, frac = look.locate(x)
        u = look.at(tables.d2[step], idx, frac)
        w = u * z
        m += w
        x += (tables.gamma[step] * dts[step]) * look.at(tables.d1[step], idx, frac) + z
        if step + 1 == steps or should_stop():
            return IampResult(m, x, step + 1, step + 1 < steps)
        c = math.sqrt(dts[step + 1] * n / max(float(w @ w), 1e-300))
        f_prev, f = f, c * w
        onsager = c * float(u.mean())
        recent.append(f)
        if len(recent) > max(project, 1):
            recent.pop(0)
    return IampResult(m, x, steps, False)
