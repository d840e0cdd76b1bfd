"""numba kernels for the mixing method (block-coordinate ascent over unit vectors).

Convention: maximise ⟨K, VVᵀ⟩ over V with unit rows, K symmetric with zero
diagonal.  Updating row i to gᵢ/‖gᵢ‖ with gᵢ = Σⱼ Kᵢⱼ vⱼ is the exact maximiser
over vᵢ (Wang, Chang & Kolter, arXiv:1706.00476) and raises ⟨K, VVᵀ⟩ by
2(‖gᵢ‖ − vᵢ·gᵢ) ≥ 0.  Imported lazily: importing this module imports numba.
"""

from __future__ import annotations

import math

import numba as nb
import numpy as np


@nb.njit(cache=True)
def _renormalise(g, out):  # pragma: no cover - compiled
    """Write g/‖g‖ into ``out`` and return ‖g‖ (out left unchanged when g = 0)."""
    k = g.shape[0]
    nrm = 0.0
    for c in range(k):
        nrm += g[c] * g[c]
    nrm = math.sqrt(nrm)
    if nrm > 0.0:
        for c in range(k):
            out[c] = g[c] / nrm
    return nrm


@nb.njit(cache=True)
def mix_block_dense(Kss, Gs, Vs, Dbuf):  # pragma: no cover - compiled
    """Sequential updates inside one block whose off-block fields ``Gs`` are known.

    ``Gs[i]`` holds Σⱼ Kᵢⱼ vⱼ with the block's *old* rows; changes ``Dbuf`` of the
    rows already updated in this block are added back through ``Kss``.  ``Vs``
    is updated in place; returns the increase of ⟨K, VVᵀ⟩.
    """
    B, k = Vs.shape
    g = np.empty(k)
    gain = 0.0
    for i in range(B):
        for c in range(k):
            g[c] = Gs[i, c]
        for j in range(i):
            w = Kss[i, j]
            if w != 0.0:
                for c in range(k):
                    g[c] += w * Dbuf[j, c]
        dot = 0.0
        for c in range(k):
            dot += Vs[i, c] * g[c]
        for c in range(k):
            Dbuf[i, c] = Vs[i, c]
        nrm = _renormalise(g, Vs[i])
        for c in range(k):
            Dbuf[i, c] = Vs[i, c] - Dbuf[i, c]
        gain += 2.0 * (nrm - dot)
    return gain


@nb.njit(cache=True)
def mix_sweep_csr(indptr, indices, data, V):  # pragma: no cover - compiled
    """One Gauss–Seidel sweep over all rows for a CSR K; returns the increase of ⟨K, VVᵀ⟩."""
    n, k = V.shape
    g = np.empty(k)
    gain = 0.0
    for i in range(n):
        for c in range(k):
            g[c] = 0.0
        for p in range(indptr[i], indptr[i + 1]):
            j = indices[p]
            if j != i:
                w = data[p]
                for c in range(k):
                    g[c] += w * V[j, c]
        dot = 0.0
        for c in range(k):
            dot += V[i, c] * g[c]
        nrm = _renormalise(g, V[i])
        gain += 2.0 * (nrm - dot)
    return gain
