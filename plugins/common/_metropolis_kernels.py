"""numba kernels for low-temperature single-flip Metropolis walks on the canonical form.

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀.  Flipping spin i changes C by
Δ = −2σᵢhᵢ with h = Kσ + b; a move is taken when Δ ≥ 0, else with probability e^{βΔ}.
Spins are visited in index order (one sweep = n proposals).

Random numbers come from the shared xorshift64* generator (its state is a one-element
array owned by the caller), so a walk is a pure function of its seed and does not depend
on how the caller chunks the sweeps between clock checks.  Imported lazily: importing this
module imports numba; compilation happens on first call and is cached on disk.
"""

from __future__ import annotations

import math

import numba as nb
import numpy as np

from ._random_kernels import uniform

_EXP_CUTOFF = 40.0  # e^{-40} < 2^{-53}: such a move is never taken, and no number is drawn for it


@nb.njit(cache=True)
def walk_integer(K, h, sigma, betas, state):  # pragma: no cover - compiled
    """Sweeps on integer couplings (int8 or int16 K, int32 fields in the same unit); returns moves taken.

    ``h`` = Kσ + b exactly (integer arithmetic, so no drift over millions of moves), ``sigma`` int8,
    ``betas`` per sweep in inverse units of K.  h and sigma are updated in place.
    """
    n = sigma.shape[0]
    taken = 0
    for t in range(betas.shape[0]):
        beta = betas[t]
        for i in range(n):
            gain = -2 * np.int64(sigma[i]) * np.int64(h[i])
            if gain < 0:
                x = beta * gain
                if x < -_EXP_CUTOFF or uniform(state) >= math.exp(x):
                    continue
            sigma[i] = -sigma[i]
            step = np.int32(2 * sigma[i])
            row = K[i]
            for j in range(n):
                h[j] += step * row[j]
            taken += 1
    return taken


@nb.njit(cache=True)
def walk_dense(K, h, sigma, betas, state):  # pragma: no cover - compiled
    """Sweeps on a dense float K (float32 or float64, a memmap is fine); h and sigma float64, in place."""
    n = sigma.shape[0]
    taken = 0
    for t in range(betas.shape[0]):
        beta = betas[t]
        for i in range(n):
            gain = -2.0 * sigma[i] * h[i]
            if gain < 0.0:
                x = beta * gain
                if x < -_EXP_CUTOFF or uniform(state) >= math.exp(x):
                    continue
            sigma[i] = -sigma[i]
            step = 2.0 * sigma[i]
            row = K[i]
            for j in range(n):
                h[j] += step * row[j]
            taken += 1
    return taken


@nb.njit(cache=True)
def walk_csr(indptr, indices, data, h, sigma, betas, state):  # pragma: no cover - compiled
    """CSR version of :func:`walk_dense` (K symmetric: row i lists i's neighbours)."""
    n = sigma.shape[0]
    taken = 0
    for t in range(betas.shape[0]):
        beta = betas[t]
        for i in range(n):
            gain = -2.0 * sigma[i] * h[i]
            if gain < 0.0:
                x = beta * gain
                if x < -_EXP_CUTOFF or uniform(state) >= math.exp(x):
                    continue
            sigma[i] = -sigma[i]
            step = 2.0 * sigma[i]
            for p in range(indptr[i], indptr[i + 1]):
                h[indices[p]] += step * data[p]
            taken += 1
    return taken


@nb.njit(cache=True)
def integer_fields(K, sigma, b):  # pragma: no cover - compiled
    """Kσ + b in int64 (exact), for integer K (int8/int16), int8 σ and integer b."""
    n = sigma.shape[0]
    out = np.empty(n, dtype=np.int64)
    for i in range(n):
        acc = np.int64(b[i])
        row = K[i]
        for j in range(n):
            acc += np.int64(row[j]) * sigma[j]
        out[i] = acc
    return out


@nb.njit(cache=True)
def walk_rows(rows, first, factor, h, sigma, betas, state):  # pragma: no cover - compiled
    """:func:`walk_dense` over spins first..first+len(rows) only, from their rows (of a symmetric M, K = factor·M).

    Used where a block of rows lives (a worker): h and sigma are the full float64 vectors and are
    updated in place; M's diagonal entry is not a coupling, so a flip leaves hᵢ's own term alone.
    """
    n = sigma.shape[0]
    taken = 0
    for t in range(betas.shape[0]):
        beta = betas[t]
        for a in range(rows.shape[0]):
            i = first + a
            gain = -2.0 * sigma[i] * h[i]
            if gain < 0.0:
                x = beta * gain
                if x < -_EXP_CUTOFF or uniform(state) >= math.exp(x):
                    continue
            sigma[i] = -sigma[i]
            step = 2.0 * sigma[i] * factor
            row = rows[a]
            for j in range(n):
                h[j] += step * row[j]
            h[i] -= step * row[i]
            taken += 1
    return taken
