"""numba kernels for single-flip simulated annealing on the canonical form.

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀.  The annealing energy is
E = −C, so flipping spin i raises E by ΔE = 2σᵢhᵢ with h = Kσ + b.  Spins are
visited in index order (one sweep = n proposals); a proposal is accepted by the
Metropolis rule min(1, e^{−βΔE}) or by the heat-bath rule 1/(1 + e^{βΔE}).

Random numbers come from the shared xorshift64* generator (plugins/common/_random_kernels.py), whose state lives in a
one-element array owned by the caller, so a run is a pure function of its seed:
identical across runs, chunkings and thread counts.  Imported lazily: importing
this module imports numba; compilation happens on first call (cached on disk).
"""

from __future__ import annotations

import math

import numba as nb

from ..common._random_kernels import uniform

METROPOLIS = 0
HEAT_BATH = 1

_EXP_CUTOFF = 40.0  # e^{-40} < 2^{-53}: such a move can never be accepted


@nb.njit(cache=True, inline="always")
def accept(delta_e, beta, rule, state):  # pragma: no cover - compiled
    """Whether a move raising the energy by ``delta_e`` is taken at inverse temperature ``beta``."""
    x = beta * delta_e
    if rule == METROPOLIS:
        if delta_e <= 0.0:
            return True
        if x > _EXP_CUTOFF:
            return False
        return uniform(state) < math.exp(-x)
    if x > _EXP_CUTOFF:
        return False
    if x < -_EXP_CUTOFF:
        return True
    return uniform(state) < 1.0 / (1.0 + math.exp(x))


@nb.njit(cache=True)
def anneal_dense(K, h, sigma, betas, rule, state, best_sigma, current, best):  # pragma: no cover - compiled
    """One sweep per entry of ``betas`` on dense K; returns (current, best) canonical values.

    ``h`` and ``sigma`` (float64) are updated in place; ``best_sigma`` receives the
    best end-of-sweep state whenever ``current`` beats ``best``.
    """
    n = sigma.shape[0]
    for t in range(betas.shape[0]):
        beta = betas[t]
        for i in range(n):
            de = 2.0 * sigma[i] * h[i]
            if accept(de, beta, rule, state):
                sigma[i] = -sigma[i]
                current -= de
                step = 2.0 * sigma[i]
                row = K[i]
                for j in range(n):
                    h[j] += step * row[j]
        if current > best:
            best = current
            best_sigma[:] = sigma
    return current, best


@nb.njit(cache=True)
def anneal_csr(indptr, indices, data, h, sigma, betas, rule, state, best_sigma, current, best):  # pragma: no cover
    """CSR version of :func:`anneal_dense` (K symmetric: row i lists i's neighbours)."""
    n = sigma.shape[0]
    for t in range(betas.shape[0]):
        beta = betas[t]
        for i in range(n):
            de = 2.0 * sigma[i] * h[i]
            if accept(de, beta, rule, state):
                sigma[i] = -sigma[i]
                current -= de
                step = 2.0 * sigma[i]
                for p in range(indptr[i], indptr[i + 1]):
                    h[indices[p]] += step * data[p]
        if current > best:
            best = current
            best_sigma[:] = sigma
    return current, best
