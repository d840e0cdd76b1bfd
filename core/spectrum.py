"""The one Lanczos routine: Ritz values of a symmetric operator, for the profile and for solvers."""

from __future__ import annotations

from collections.abc import Callable

import numpy as np


def lanczos_ritz(matvec: Callable[[np.ndarray], np.ndarray], n: int, *, steps: int, seed: int = 0,
                 should_stop: Callable[[], bool] | None = None) -> np.ndarray:
    """Ritz values (descending) after ``steps`` Lanczos steps with full reorthogonalisation.

    Ritz values lie inside the spectrum: the largest is a lower estimate of λ_max, the
    smallest an upper estimate of λ_min; an isolated outlier converges within a few
    steps, the semicircle edge slowly.  ``should_stop`` ends the iteration early (the
    values found so far are returned).
    """
    steps = max(1, min(steps, n))
    Q = np.zeros((steps, n))
    alpha, beta = np.zeros(steps), np.zeros(steps)
    q = np.random.default_rng(seed).standard_normal(n)
    q /= np.linalg.norm(q)
    used = steps
    for k in range(steps):
        Q[k] = q
        w = np.asarray(matvec(q), dtype=np.float64)
        alpha[k] = q @ w
        w -= Q[: k + 1].T @ (Q[: k + 1] @ w)
        beta[k] = np.linalg.norm(w)
        if beta[k] < 1e-12 or k + 1 == steps or (should_stop is not None and should_stop()):
            used = k + 1
            break
        q = w / beta[k]
    T = np.diag(alpha[:used]) + np.diag(beta[: used - 1], 1) + np.diag(beta[: used - 1], -1)
    return np.sort(np.linalg.eigvalsh(T))[::-1]
