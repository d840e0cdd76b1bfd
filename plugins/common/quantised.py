"""An integer working copy of a dense K for the low-temperature walks (K ≈ unit·Q, b ≈ unit·c).

Canonical form: maximise ½σᵀKσ + bᵀσ + k₀.  Q is int16 (or int8 when only that fits the
memory budget), c is integer, both in one ``unit`` = max(|K|, |b|) / top, rounded to nearest.
A walk on (Q, c) keeps its local fields Qσ + c in exact integer arithmetic (no drift) and
reads half (int16) or a quarter (int8) of the bytes of a float32 row per accepted move, which
is where a low-temperature walk on dense couplings spends its time.  The copy only steers the
search: states are always cleaned and valued on the caller's K.

The rounding error per entry is uniform in ±unit/2, RMS unit/√12; a copy is made only when
that RMS is at most ``MAX_RELATIVE_ERROR`` of the couplings' standard deviation (heavy-tailed
couplings, where one huge entry sets the unit, keep the float path).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from spinward.core import CanonicalProblem

#: RMS rounding error allowed, relative to the couplings' standard deviation
MAX_RELATIVE_ERROR = 0.02
#: rows converted per block (bounds the float64 temporary)
ROW_BLOCK = 256
#: (dtype, largest magnitude) in order of preference
INTEGER_TYPES = ((np.int16, 32767), (np.int8, 127))


@dataclass(frozen=True)
class IntegerCouplings:
    """Q (int8/int16, n×n, C-contiguous), c (int64 fields) and the unit: K ≈ unit·Q, b ≈ unit·c."""

    Q: np.ndarray
    c: np.ndarray
    unit: float
    relative_error: float  # RMS rounding error / coupling standard deviation

    @property
    def precision(self) -> str:
        return np.dtype(self.Q.dtype).name


def choose_integer_type(n: int, max_abs: float, std: float, budget: int) -> tuple[Any, int] | None:
    """(dtype, top) of the integer copy, or None when none is accurate enough or fits ``budget`` bytes.

    int32 local fields must hold n·top + top exactly, which bounds n for int16 at 65 534.
    """
    if std <= 0 or max_abs <= 0 or not math.isfinite(max_abs):
        return None
    for dtype, top in INTEGER_TYPES:
        size = n * n * np.dtype(dtype).itemsize
        error = max_abs / top / math.sqrt(12.0) / std
        if size <= budget and error <= MAX_RELATIVE_ERROR and (n + 1) * top < 2**31:
            return dtype, top
    return None


def integer_couplings(problem: CanonicalProblem, std: float, budget: int) -> IntegerCouplings | None:
    """The integer copy of a dense ``problem.K`` (read in row blocks; a memmap is never copied whole).

    ``std`` is the couplings' standard deviation (the accuracy criterion); ``budget`` the most
    bytes the copy may take.  None when no integer type qualifies (see :func:`choose_integer_type`).
    """
    if problem.kind != "dense":
        return None
    n = problem.n
    big = max(problem.max_abs_coupling(), float(np.abs(problem.b).max()) if n else 0.0)
    choice = choose_integer_type(n, big, std, budget)
    if choice is None:
        return None
    dtype, top = choice
    unit = big / top
    Q = np.empty((n, n), dtype=dtype)
    for start in range(0, n, ROW_BLOCK):
        block = np.asarray(problem.K[start:start + ROW_BLOCK], dtype=np.float64)
        Q[start:start + ROW_BLOCK] = np.rint(block / unit)
    c = np.rint(np.asarray(problem.b, dtype=np.float64) / unit).astype(np.int64)
    return IntegerCouplings(Q, c, unit, unit / math.sqrt(12.0) / std)
