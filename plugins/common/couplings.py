"""Working copies of the couplings K for the numba kernels (shared by annealing, tabu and IAMP).

A float32 copy of a dense K halves the memory traffic of matvecs and O(n) row updates; the
values that solvers report are always recomputed from the caller's K, so the copy only steers
the search.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from spinward.core import CanonicalProblem, InputError

from .flips import csr_parts

#: bytes; above this a dense K is used as given (no working copy is made)
FLOAT32_COPY_LIMIT = 1 << 30
PRECISIONS = ("auto", "float32", "float64")
COPY_PAYBACK_READS = 30
COPY_BLOCK_ENTRIES = 1 << 22


def check_precision(precision: Any, who: str) -> str:
    """``precision`` if it is one of :data:`PRECISIONS`, else an InputError naming the choices."""
    if precision not in PRECISIONS:
        raise InputError(f"{who}: precision must be 'auto', 'float32' or 'float64', got {precision!r}")
    return str(precision)


def working_couplings(problem: CanonicalProblem, precision: str, who: str = "anneal",
                      remaining: float = math.inf) -> tuple[Any, ...]:
    """Arguments that describe K to a kernel: (K,) dense or (indptr, indices, data) CSR.

    "auto" makes a C-contiguous float32 copy of a dense K when it takes at most
    :data:`FLOAT32_COPY_LIMIT` bytes; a larger K (a memmap, say) is used as given, never
    copied (the kernels read any numeric dtype and layout).  "float32"/"float64" force a copy of that precision.
    With ``remaining`` seconds under a time limit, "auto" also uses a C-contiguous float64 K as
    given when fewer than :data:`COPY_PAYBACK_READS` reads of it (as the profile timed one) fit:
    the copy costs a few reads and saves half a read per product, so it would not pay back.
    """
    check_precision(precision, who)
    if problem.kind == "sparse":
        return csr_parts(problem)
    K = problem.K
    if precision == "auto" and problem.n * problem.n * 4 > FLOAT32_COPY_LIMIT:
        return (K,)
    profile = problem.meta.get("_profile")
    if precision == "auto" and profile is not None and remaining < COPY_PAYBACK_READS * profile.read_seconds \
            and isinstance(K, np.ndarray) and K.dtype == np.float64 and K.flags.c_contiguous:
        return (K,)
    want = np.float64 if precision == "float64" else np.float32
    if K.dtype != want or not K.flags.c_contiguous:
        # copied in row blocks of COPY_BLOCK_ENTRIES: Ctrl-C lands between blocks, not after a
        # copy of half a second
        out = np.empty(K.shape, dtype=want)
        rows = max(1, COPY_BLOCK_ENTRIES // max(problem.n, 1))
        for start in range(0, problem.n, rows):
            out[start:start + rows] = K[start:start + rows]
        K = out
    return (K,)
