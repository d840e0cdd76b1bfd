"""Greedy single-flip clean-up shared by the solvers.

Convention: canonical form, maximise C(σ) = ½σᵀKσ + bᵀσ + k₀; a state is
returned at a 1-flip local optimum (no flip gains more than a tolerance tied to
the coupling scale, so float noise cannot cause cycling).
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np

from spinward.core.canonical import CanonicalProblem

MAX_SWEEPS = 10_000


def flip_tolerance(problem: CanonicalProblem) -> float:
    """A gain below this is treated as zero (relative 1e-12 of the largest coefficient)."""
    if problem.kind == "operator":
        return 1e-12
    big = max(problem.max_abs_coupling(), float(np.abs(problem.b).max()) if problem.n else 0.0)
    return 1e-12 * max(big, 1e-300) * max(problem.n, 1)


def csr_parts(problem: CanonicalProblem) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(indptr, indices, data) of a sparse K, cached on the problem."""
    parts = problem.meta.get("_csr_parts")
    if parts is None:
        import scipy.sparse as sp

        K = sp.csr_array(problem.K)
        K.sort_indices()
        parts = (K.indptr.astype(np.int64), K.indices.astype(np.int64), K.data.astype(np.float64))
        problem.meta["_csr_parts"] = parts
    return parts


def mean_degree(problem: CanonicalProblem) -> float:
    """Stored couplings per spin of a sparse K (its mean degree when the diagonal is empty)."""
    return float(csr_parts(problem)[0][-1]) / max(problem.n, 1)


def local_search(problem: CanonicalProblem, sigma: np.ndarray, h: np.ndarray | None = None,
                 should_stop: Callable[[], bool] | None = None) -> tuple[np.ndarray, float]:
    """Climb from ``sigma`` to a 1-flip local optimum; returns (σ, C(σ)).

    ``h`` may pass the local fields Kσ + b if already known (it is updated in place).
    With ``should_stop``, the climb runs one sweep per kernel call and asks between sweeps (a
    sweep of a dense K costs O(n²)); a climb stopped early has not reached a local optimum.
    A LinearOperator K is returned unchanged (no cheap single-flip update exists).
    """
    s = np.array(sigma, dtype=np.float64)
    if problem.n == 0 or problem.kind == "operator":
        return s.astype(np.int8), problem.value(s)
    from . import _flip_kernels as kern

    fields = problem.local_fields(s) if h is None else np.asarray(h, dtype=np.float64)
    tol = flip_tolerance(problem)
    if problem.kind == "sparse":
        args: tuple[Any, ...] = (*csr_parts(problem), fields, s, tol)
        kernel = kern.sweep_csr
    else:
        K: Any = problem.K
        if K.dtype not in (np.float32, np.float64) or not K.flags.c_contiguous:
            K = np.ascontiguousarray(K, dtype=np.float64)
        args, kernel = (K, fields, s, tol), kern.sweep_dense
    if should_stop is None:
        kernel(*args, MAX_SWEEPS)
    else:
        for _ in range(MAX_SWEEPS):
            if kernel(*args, 1) == 0 or should_stop():
                break
    out = s.astype(np.int8)
    if problem.kind == "dense":  # the kernel kept the fields up to date: a dense K is not read again
        return out, problem.value_from_fields(out, fields)
    return out, problem.value(out)


def random_spins(n: int, rng: np.random.Generator) -> np.ndarray:
    """Uniform random ±1 vector (int8)."""
    return (2 * rng.integers(0, 2, size=n, dtype=np.int8) - 1).astype(np.int8)
