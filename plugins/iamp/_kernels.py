"""numba kernel for the IAMP solver: the fused IAMP step (the polish's Metropolis walks live in
plugins/common/_metropolis_kernels.py).  Imported lazily from the run function; compilation
happens on first call and is cached on disk by numba.
"""

from __future__ import annotations

import numba as nb


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
