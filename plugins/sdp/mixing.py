"""The SDP relaxation by a Burer–Monteiro factor, solved with the mixing method.

Canonical sense: the integer problem is max ½σᵀKσ + bᵀσ + k₀ over σ ∈ {±1}ⁿ.
Fields enter through a ghost spin (``CanonicalProblem.with_ghost_spin``, the
ghost last), so the relaxation is always the field-free

    max ½⟨K', X⟩ + k₀  over X ⪰ 0, diag X = 1,   X = VVᵀ, V ∈ ℝ^{N×k}, unit rows,

whose value is an upper bound on the integer optimum only *when solved to
optimality*; a certified bound comes from :mod:`.certificates`.  The rank
k = ⌈√(2N)⌉ is enough for some optimal X to be representable (Barvinok–Pataki).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from typing import Any, Callable

import numpy as np

from spinward.core.canonical import CanonicalProblem

DEFAULT_TOL = 1e-7        # stop when one sweep raises ⟨K, VVᵀ⟩ by less than this, relative
DEFAULT_MAX_SWEEPS = 2000
BLOCK = 192               # rows per BLAS block in the dense sweep
SINGLE_FROM = 1500        # "auto" precision: float32 block products from this many spins
MAX_RANK = 128            # the factor's columns, at most (see default_rank)


@dataclass(frozen=True, eq=False)
class Factor:
    """A Burer–Monteiro factor of the (lifted) SDP and what it achieved.

    ``V`` has unit rows for the lifted problem (ghost spin last when ``lifted``);
    ``value`` = ½⟨K', VVᵀ⟩ + k₀ in canonical units (the primal SDP value, not a bound).
    """

    V: np.ndarray
    lifted: bool
    value: float
    sweeps: int
    converged: bool
    seconds: float


def lift(problem: CanonicalProblem) -> CanonicalProblem:
    """The field-free problem the SDP works on (ghost spin added only when b ≠ 0), cached."""
    if not problem.has_fields:
        return problem
    lifted = problem.meta.get("_sdp_lift")
    if not isinstance(lifted, CanonicalProblem):
        lifted = problem.with_ghost_spin()
        problem.meta["_sdp_lift"] = lifted
    return lifted


def default_rank(N: int) -> int:
    """⌈√(2N)⌉ (Barvinok–Pataki), capped at N and at ``MAX_RANK``.

    The cap keeps the factor's memory and each sweep's cost linear in N on large problems
    (N = 2·10⁵ would ask for rank 633: a 1 GB factor); the relaxation's value at rank 128
    is within rounding of the full one on every instance we measured, and any factor still
    gives a valid dual bound (plugins/sdp/certificates.py).
    """
    return max(1, min(N, math.ceil(math.sqrt(2 * N)), MAX_RANK))


def random_factor(N: int, k: int, rng: np.random.Generator) -> np.ndarray:
    """N×k matrix with independent uniformly random unit rows."""
    V = rng.standard_normal((N, k))
    V /= np.sqrt(np.einsum("ij,ij->i", V, V))[:, None]  # (np.linalg.norm along rows is 3× slower)
    return V


def dense_couplings(lifted: CanonicalProblem) -> np.ndarray:
    """K' as a C-contiguous float64 array (float32 input is widened exactly)."""
    K = lifted.K
    if isinstance(K, np.ndarray) and K.dtype == np.float64 and K.flags.c_contiguous:
        return K
    return np.ascontiguousarray(lifted.dense_K(), dtype=np.float64)


def _dense_sweeper(K: np.ndarray, k: int, single: bool,
                   should_stop: Callable[[], bool] | None = None) -> Callable[[np.ndarray], float]:
    """One Gauss–Seidel sweep: BLAS for each block's fields, numba inside the block.

    ``should_stop`` is asked between blocks: on a large dense K one sweep takes seconds, and a
    partial sweep still leaves a feasible factor (every row it reached was updated exactly).

    With ``single`` the big product runs in float32 (half the memory traffic); the
    factor stays float64 and is still a feasible point, and the dual bound is
    recomputed from it in float64, so only the accuracy of the fixed point suffers.
    """
    from . import _kernels

    N = K.shape[0]
    D = np.empty((BLOCK, k))
    Kb = K.astype(np.float32) if single else K

    def sweep(V: np.ndarray) -> float:
        Vb = V.astype(np.float32) if single else V
        gain = 0.0
        for s in range(0, N, BLOCK):
            e = min(N, s + BLOCK)
            Gs = np.asarray(Kb[s:e] @ Vb, dtype=np.float64)
            gain += _kernels.mix_block_dense(K[s:e, s:e], Gs, V[s:e], D[: e - s])
            if single:
                Vb[s:e] = V[s:e]
            if should_stop is not None and should_stop():
                break
        return gain

    return sweep


def _sparse_sweeper(lifted: CanonicalProblem) -> Callable[[np.ndarray], float]:
    from spinward.plugins.common.flips import csr_parts

    from . import _kernels

    parts = csr_parts(lifted)
    return lambda V: float(_kernels.mix_sweep_csr(*parts, V))


def inner_value(lifted: CanonicalProblem, V: np.ndarray) -> float:
    """⟨K', VVᵀ⟩ = Σᵢ vᵢ·(K'V)ᵢ, recomputed from scratch."""
    KV = lifted.K @ V if lifted.kind != "operator" else lifted.K.matmat(V)
    return float(np.einsum("ij,ij->", V, np.asarray(KV)))  # (no N×k temporary)


def solve_sdp(problem: CanonicalProblem, *, rng: np.random.Generator, rank: int | None = None,
              tol: float = DEFAULT_TOL, max_sweeps: int = DEFAULT_MAX_SWEEPS,
              should_stop: Callable[[], bool] | None = None, V0: np.ndarray | None = None,
              precision: str = "auto") -> Factor:
    """Run the mixing method until a sweep gains less than ``tol`` (relative) or the clock stops.

    Returns the factor of the lifted problem; its ``value`` is the primal SDP value
    ½⟨K', VVᵀ⟩ + k₀ (a lower estimate of the SDP optimum, not a bound).
    ``precision``: "float64", "float32" (dense products only) or "auto" (float32
    for dense N ≥ SINGLE_FROM).
    """
    t0 = time.perf_counter()
    lifted = lift(problem)
    N = lifted.n
    if V0 is not None:
        V = np.ascontiguousarray(V0, dtype=np.float64).copy()
        k = V.shape[1]
    else:
        k = default_rank(N) if rank is None else max(1, min(int(rank), N))
        V = random_factor(N, k, rng)
    if lifted.kind == "sparse":
        sweep = _sparse_sweeper(lifted)
    else:
        single = precision == "float32" or (precision == "auto" and N >= SINGLE_FROM)
        sweep = _dense_sweeper(dense_couplings(lifted), k, single, should_stop)
    total = inner_value(lifted, V)
    sweeps, converged = 0, False
    while sweeps < max_sweeps:
        gain = sweep(V)
        total += gain
        sweeps += 1
        if should_stop is not None and should_stop():  # first: a sweep cut short proves no convergence
            break
        if gain <= tol * max(abs(total), 1e-300):
            converged = True
            break
    value = 0.5 * inner_value(lifted, V) + problem.k0
    return Factor(V=V, lifted=lifted is not problem, value=value, sweeps=sweeps, converged=converged,
                  seconds=time.perf_counter() - t0)


def cached_factor(problem: CanonicalProblem) -> Factor | None:
    """A factor an earlier SDP run left on the problem (so the dual bound can reuse it)."""
    found: Any = problem.meta.get("_sdp_factor")
    return found if isinstance(found, Factor) else None


def remember_factor(problem: CanonicalProblem, factor: Factor) -> None:
    """Keep the best factor on ``problem.meta`` for the bound provider."""
    old = cached_factor(problem)
    if old is None or factor.value >= old.value:
        problem.meta["_sdp_factor"] = factor
