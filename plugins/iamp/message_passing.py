"""Incremental approximate message passing (IAMP) driven by a zero-temperature Parisi solution.

Convention: A is the normalised coupling matrix of docs/conventions.md (spectrum ≈ [−2, 2]),
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
import time
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from .diagnostics import BLOCK_ENTRIES
from .parisi import ParisiTables

Matvec = Callable[[np.ndarray], np.ndarray]


def raw_matvec(K: Any, kind: str, dtype: Any = np.float64) -> Matvec:
    """x ↦ K x (float64 in and out), computed in ``dtype`` for dense and sparse K.

    Dense and memory-mapped K take the same row-block path, each block cast to ``dtype``, so
    an in-memory K, its float32 working copy and a memmap of it give bit-identical results (a
    block at a time keeps a memmap's resident pages bounded, too).  A LinearOperator computes
    in its own precision.
    """
    if kind == "operator":
        if hasattr(K, "matvec_as"):  # row blocks held elsewhere compute in the working precision too
            return lambda x: K.matvec_as(x, dtype)
        return lambda x: np.asarray(K.matvec(x), dtype=np.float64).reshape(-1)
    if kind == "sparse":
        csr = K.tocsr().astype(dtype)
        return lambda x: np.asarray(csr @ x.astype(dtype), dtype=np.float64)
    n = K.shape[0]
    step = max(1, BLOCK_ENTRIES // max(n, 1))

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
    matvec_seconds: float = 0.0  # time spent inside matvec (the rest of a step is elementwise work)


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


def find_root(matvec: Matvec, fields: np.ndarray, grid: np.ndarray, d1: np.ndarray, d2: np.ndarray,
              iterations: int, should_stop: Callable[[], bool] = lambda: False) -> tuple[np.ndarray, np.ndarray, float]:
    """Phase 1 with fields: AMP to the fixed point of m = ∂_xΦ(t₁, h + z), z = A m − b m_prev.

    ``d1``, ``d2`` are ∂_xΦ(t₁, ·), ∂_xxΦ(t₁, ·) on ``grid``; b = ⟨∂_xxΦ(t₁, x)⟩ is the Onsager term.
    By state evolution z tends to N(0, q) with q = E ∂_xΦ(t₁, h + √q Z)², geometrically when
    E[∂_xxΦ(t₁, X)²] < 1, which holds below the start q_min of the Parisi γ's support (at q_min it
    is 1: El Alaoui, Montanari & Sellke, arXiv:2001.00904, the first phase).  Returns (x, m, the
    last RMS change of m).
    """
    x = np.asarray(fields, dtype=np.float64).copy()
    m = np.interp(x, grid, d1)
    m_prev = np.zeros_like(m)
    change = math.inf
    for _ in range(iterations):
        onsager = float(np.interp(x, grid, d2).mean())
        x = fields + matvec(m) - onsager * m_prev
        m_prev, m = m, np.interp(x, grid, d1)
        change = float(np.sqrt(np.mean((m - m_prev) ** 2)))
        if should_stop():
            break
    return x, m, change


def iamp(matvec: Matvec, n: int, tables: ParisiTables, rng: np.random.Generator, *,
         project: int = 2, should_stop: Callable[[], bool] = lambda: False,
         start: tuple[np.ndarray, np.ndarray] | None = None) -> IampResult:
    """Run IAMP on the normalised A (see the module docstring); returns the magnetisation m.

    ``project`` is how many of the latest inputs f each z is made orthogonal to (0 = plain).
    ``start`` = (x, m) at the tables' first time (phase 1 with fields, :func:`find_root`); else 0.
    Outside the tables' x-range the end values are used (∂_xΦ → ±1, ∂_xxΦ → 0 there).
    The elementwise part of a step (table lookups, m, x and w) is one fused numba loop.
    """
    from . import _kernels as kern

    steps = tables.t.size
    dts = np.diff(np.append(tables.t, 1.0))
    grid = (float(tables.x[0]), 1.0 / float(tables.x[1] - tables.x[0]), tables.x.size - 1 - 1e-9)
    f = rng.choice([-1.0, 1.0], size=n) * math.sqrt(dts[0])
    f_prev = np.zeros(n)
    onsager = 0.0
    x = np.zeros(n) if start is None else np.array(start[0], dtype=np.float64)
    m = np.zeros(n) if start is None else np.array(start[1], dtype=np.float64)
    w = np.empty(n)
    recent = [f]
    in_matvec = 0.0
    for step in range(steps):
        t0 = time.perf_counter()
        y = matvec(f)
        in_matvec += time.perf_counter() - t0
        z = y - onsager * f_prev
        if project > 0:
            z = _project_out(z, recent[-project:])
        w_norm2, u_sum = kern.amp_step(z, x, m, w, tables.d1[step], tables.d2[step],
                                       float(tables.gamma[step] * dts[step]), *grid)
        if step + 1 == steps or should_stop():
            return IampResult(m, x, step + 1, step + 1 < steps, in_matvec)
        c = math.sqrt(dts[step + 1] * n / max(w_norm2, 1e-300))
        f_prev, f = f, c * w
        onsager = c * u_sum / n
        recent.append(f)
        if len(recent) > max(project, 1):
            recent.pop(0)
    return IampResult(m, x, steps, False, in_matvec)
