"""The xorshift64* generator shared by the numba kernels (annealing, tabu).

Its 64-bit state lives in a one-element uint64 array owned by the caller, so a run
is a pure function of its seed: identical across runs, chunkings and thread counts.
Imported lazily: importing this module imports numba.
"""

from __future__ import annotations

import numba as nb
import numpy as np

_SHIFT_A = np.uint64(12)
_SHIFT_B = np.uint64(25)
_SHIFT_C = np.uint64(27)
_SHIFT_OUT = np.uint64(11)
_MULT = np.uint64(2685821657736338717)
_INV_2_53 = 1.0 / 9007199254740992.0


@nb.njit(cache=True, inline="always")
def uniform(state):  # pragma: no cover - compiled
    """Next uniform in [0, 1) from xorshift64* (state[0] must be non-zero)."""
    x = state[0]
    x ^= x >> _SHIFT_A
    x ^= x << _SHIFT_B
    x ^= x >> _SHIFT_C
    state[0] = x
    return float((x * _MULT) >> _SHIFT_OUT) * _INV_2_53
