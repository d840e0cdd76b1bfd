"""numba kernels for exhaustive Gray-code enumeration of the canonical form.

Convention: maximise C(σ) = ½σᵀKσ + bᵀσ over σ ∈ {±1}ⁿ (k₀ is added by the caller).
Spins 0..r−1 run through a Gray code inside a chunk; spins r..n−1 are fixed per
chunk from the chunk's id (bit set ⇒ σ = −1).  Each chunk is independent, so
the result does not depend on the number of threads.
"""

from __future__ import annotations

import numba as nb
import numpy as np

RESYNC = 1 << 14  # recompute fields exactly this often, so rounding cannot drift


@nb.njit(cache=True)
def _chunk_state(chunk, n, r, fixed_last):  # pragma: no cover - compiled
    sigma = np.ones(n)
    free_high = n - r - (1 if fixed_last else 0)
    for k in range(free_high):
        if (chunk >> k) & 1:
            sigma[r + k] = -1.0
    return sigma


@nb.njit(cache=True)
def _exact_fields(K, b, sigma, r, h):  # pragma: no cover - compiled
    n = sigma.shape[0]
    total = 0.0
    for i in range(n):
        acc = 0.0
        for j in range(n):
            acc += K[i, j] * sigma[j]
        total += sigma[i] * (0.5 * acc + b[i])
        if i < r:
            h[i] = acc + b[i]
    return total


@nb.njit(cache=True)
def _scan_chunk(K, b, chunk, r, fixed_last):  # pragma: no cover - compiled
    """Best value and its Gray index within one chunk."""
    n = b.shape[0]
    sigma = _chunk_state(chunk, n, r, fixed_last)
    h = np.empty(max(r, 1))
    value = _exact_fields(K, b, sigma, r, h)
    best, best_t = value, 0
    steps = 1 << r
    for t in range(1, steps):
        i = 0
        while not (t >> i) & 1:
            i += 1
        value -= 2.0 * sigma[i] * h[i]
        sigma[i] = -sigma[i]
        step = 2.0 * sigma[i]
        for j in range(r):
            h[j] += step * K[j, i]
        if (t & (RESYNC - 1)) == 0:
            value = _exact_fields(K, b, sigma, r, h)
        if value > best:
            best, best_t = value, t
    return best, best_t


@nb.njit(cache=True, parallel=True)
def scan_chunks(K, b, chunks, r, fixed_last):  # pragma: no cover - compiled
    """Scan several chunks in parallel; returns (best value, best Gray index) per chunk."""
    m = chunks.shape[0]
    values = np.empty(m)
    index = np.empty(m, dtype=np.int64)
    for c in nb.prange(m):
        values[c], index[c] = _scan_chunk(K, b, chunks[c], r, fixed_last)
    return values, index
