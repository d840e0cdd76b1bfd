"""Goemans–Williamson random-hyperplane rounding of a Burer–Monteiro factor.

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀.  Each hyperplane r gives
σᵢ = sign(vᵢ·r) on the lifted problem; with a ghost spin the state is mapped
back by multiplying with the ghost's sign.  Many hyperplanes are drawn at once
(one matrix product), the best ones are cleaned up by single flips.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from spinward.core.canonical import CanonicalProblem
from spinward.plugins.common.flips import local_search

from .mixing import Factor

CHUNK = 64  # hyperplanes per matrix product (bounds the n × CHUNK work array)


@dataclass(frozen=True, eq=False)
class Rounding:
    """The best polished state, and the raw (unpolished) hyperplane values."""

    sigma: np.ndarray
    value: float
    raw_values: np.ndarray
    polished: int


def hyperplane_states(factor: Factor, n: int, R: np.ndarray) -> np.ndarray:
    """±1 states (n × m, float64) from hyperplanes R (k × m), ghost sign undone."""
    S = np.where(factor.V @ R >= 0.0, 1.0, -1.0)
    if factor.lifted:
        S = S[:n] * S[n]
    return S


def state_values(problem: CanonicalProblem, S: np.ndarray) -> np.ndarray:
    """C(σ) for each column σ of S."""
    KS = np.asarray(problem.K @ S)
    return 0.5 * np.einsum("ij,ij->j", S, KS) + problem.b @ S + problem.k0


def hyperplane_round(problem: CanonicalProblem, factor: Factor, *, rng: np.random.Generator, count: int = 128,
                     polish: int = 128, should_stop: Callable[[], bool] | None = None,
                     offer: Callable[[np.ndarray, float], object] | None = None) -> Rounding:
    """Draw ``count`` Gaussian hyperplanes, polish the ``polish`` best by single flips, keep the best."""
    k = factor.V.shape[1]
    values, states = [], []
    for start in range(0, max(count, 1), CHUNK):
        m = min(CHUNK, max(count, 1) - start)
        S = hyperplane_states(factor, problem.n, rng.standard_normal((k, m)))
        vals = state_values(problem, S)
        values.append(vals)
        states.append(S.astype(np.int8))
        if should_stop is not None and should_stop():
            break
    raw = np.concatenate(values)
    pool = np.concatenate(states, axis=1)
    order = np.argsort(-raw, kind="stable")
    best_i = int(order[0])
    best_sigma, best_value = pool[:, best_i].copy(), float(raw[best_i])
    if offer is not None:
        offer(best_sigma, best_value)
    done = 0
    for i in order[: max(polish, 0)]:
        sigma, value = local_search(problem, pool[:, int(i)])
        done += 1
        if value > best_value:
            best_sigma, best_value = sigma, value
            if offer is not None:
                offer(sigma, value)
        if should_stop is not None and should_stop():
            break
    return Rounding(sigma=best_sigma, value=best_value, raw_values=raw, polished=done)
