"""numba kernels for single-flip local search on the canonical form (maximise ½σᵀKσ + bᵀσ).

Flipping spin i changes the objective by −2σᵢhᵢ with h = Kσ + b.  Imported
lazily: importing this module imports numba; compilation happens on first call.
"""

from __future__ import annotations

import numba as nb


@nb.njit(cache=True)
def sweep_dense(K, h, sigma, tol, max_sweeps):  # pragma: no cover - compiled
    """First-improvement sweeps until no flip gains more than ``tol``; returns flips made."""
    n = sigma.shape[0]
    flips = 0
    for _ in range(max_sweeps):
        changed = False
        for i in range(n):
            if -2.0 * sigma[i] * h[i] > tol:
                sigma[i] = -sigma[i]
                step = 2.0 * sigma[i]
                row = K[i]
                for j in range(n):
                    h[j] += step * row[j]
                flips += 1
                changed = True
        if not changed:
            break
    return flips


@nb.njit(cache=True)
def sweep_csr(indptr, indices, data, h, sigma, tol, max_sweeps):  # pragma: no cover - compiled
    """CSR version of :func:`sweep_dense` (K symmetric, so row i lists i's neighbours)."""
    n = sigma.shape[0]
    flips = 0
    for _ in range(max_sweeps):
        changed = False
        for i in range(n):
            if -2.0 * sigma[i] * h[i] > tol:
                sigma[i] = -sigma[i]
                step = 2.0 * sigma[i]
                for p in range(indptr[i], indptr[i + 1]):
                    h[indices[p]] += step * data[p]
                flips += 1
                changed = True
        if not changed:
            break
    return flips


@nb.njit(cache=True)
def sweep_rows(rows, first, factor, h, sigma, tol):  # pragma: no cover - compiled
    """One first-improvement pass over spins first..first+len(rows) only, from their rows (of a symmetric M, K = factor·M).

    h and sigma are the full vectors, updated in place; M's diagonal entry is not a coupling.
    Passes over consecutive blocks in order make exactly the flips of :func:`sweep_dense`.
    """
    n = sigma.shape[0]
    flips = 0
    for a in range(rows.shape[0]):
        i = first + a
        if -2.0 * sigma[i] * h[i] > tol:
            sigma[i] = -sigma[i]
            step = 2.0 * sigma[i] * factor
            row = rows[a]
            for j in range(n):
                h[j] += step * row[j]
            h[i] -= step * row[i]
            flips += 1
    return flips
