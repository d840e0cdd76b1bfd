"""numba kernels for the IAMP solver: the fused IAMP step and the low-temperature polish.

Canonical sense for the polish: maximise ½σᵀKσ + bᵀσ.

Flipping spin i changes C by Δ = −2σᵢhᵢ with h = Kσ + b.  Imported lazily from the run
function; compilation happens on first call and is cached on disk by numba.
"""

from __future__ import annotations

import numba as nb
import numpy as np


@nb.njit(cache=True)
def metropolis_dense(K, h, sigma, betas, seed):  # pragma: no cover - compiled
    """One Metropolis sweep per entry of ``betas``; returns the number of accepted flips.

    h and sigma (float64) are updated in place; the best state is tracked by the caller's
    final greedy climb (at the low temperatures used here the end state is near the best).
    """
    np.random.seed(seed)
    n = sigma.shape[0]
    accepted = 0
    for beta in betas:
        for i in range(n):
            gain = -2.0 * sigma[i] * h[i]
            if gain >= 0.0 or np.random.random() < np.exp(beta * gain):
                sigma[i] = -sigma[i]
                step = 2.0 * sigma[i]
                row = K[i]
                for j in range(n):
                    h[j] += step * row[j]
                accepted += 1
    return accepted


@nb.njit(cache=True)
def metropolis_csr(indptr, indices, data, h, sigma, betas, seed):  # pragma: no cover - compiled
    """CSR version of :func:`metropolis_dense` (K symmetric: row i lists i's neighbours)."""
    np.random.seed(seed)
    n = sigma.shape[0]
    accepted = 0
    for beta in betas:
        for i in range(n):
            gain = -2.0 * sigma[i] * h[i]
            if gain >= 0.0 or np.random.random() < np.exp(beta * gain):
                sigma[i] = -sigma[i]
                step = 2.0 * sigma[i]
                for p in range(indptr[i], indptr[i + 1]):
                    h[indices[p]] += step * data[p]
                accepted += 1
    return accepted


@nb.njit(cache=True)
def moments(block):  # pragma: no cover - compiled
    """(Σx, Σx², #nonzero, max|x|) of a 2-D block in one pass, accumulated in float64."""
    total = 0.0
    squares = 0.0
    nonzero = 0
    big = 0.0
    rows, cols = block.shape
    for i in range(rows):
        for j in range(cols):
            v = np.float64(block[i, j])
            total += v
            squares += v * v
            if v != 0.0:
                nonzero += 1
            a = abs(v)
            big = max(big, a)
    return total, squares, nonzero, big


@nb.njit(cache=True)
def amp_step(z, x, m, w, d1, d2, drift_dt, x0, inv_h, top):  # pragma: no cover - compiled
    """One IAMP step's elementwise part, in place; returns (‖w‖², Σu).

    With u = ∂_xxΦ(t, x) and ∂_xΦ(t, x) interpolated linearly in the rows ``d1``/``d2`` on the
    uniform grid x0 + k/inv_h (clamped to its ends, where the tables are flat):
    w = u ∘ z, m += w, x += drift_dt·∂_xΦ + z (x is read before it is updated).
    """
    w_norm2 = 0.0
    u_sum = 0.0
    for i in range(z.shape[0]):
        pos = (x[i] - x0) * inv_h
        pos = min(max(pos, 0.0), top)
        k = int(pos)
        frac = pos - k
        u = d2[k] + frac * (d2[k + 1] - d2[k])
        slope = d1[k] + frac * (d1[k + 1] - d1[k])
        wi = u * z[i]
        w[i] = wi
        m[i] += wi
        x[i] += drift_dt * slope + z[i]
        w_norm2 += wi * wi
        u_sum += u
    return w_norm2, u_sum
