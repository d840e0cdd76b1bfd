"""Split a canonical problem into the connected components of its coupling graph.

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀.  Spins i and j are joined
when K_ij ≠ 0.  No coupling crosses two components, so C is the sum of the
components' own objectives and each can be solved on its own: the optimum is
the sum of the parts' optima, and an upper bound is the sum of their bounds.
The offset k₀ (and the caller's shift) is carried by the part that holds
spin 0, which :func:`connected_components` always lists first.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

from .canonical import CanonicalProblem

__all__ = ["assemble", "connected_components", "subproblem"]


def _pattern(problem: CanonicalProblem) -> Any:
    """The non-zero pattern of K as a scipy.sparse CSR array (scipy imported lazily)."""
    import scipy.sparse as sp

    if problem.kind == "sparse":
        K = sp.csr_array(problem.K)
        K.eliminate_zeros()
        return K
    return sp.csr_array(np.asarray(problem.K) != 0)


def connected_components(problem: CanonicalProblem) -> list[np.ndarray]:
    """Index arrays (sorted, int64) of the coupling graph's components.

    Components are ordered by their smallest index, so the first one holds
    spin 0.  A spin with no coupling is a component of its own.  A
    matrix-free (LinearOperator) K has no readable pattern: the whole problem
    is returned as one component.
    """
    n = problem.n
    if n == 0:
        return []
    if problem.kind == "operator":
        return [np.arange(n, dtype=np.int64)]
    labels = problem.meta.get("_component_labels")  # left by the profile, which finds them anyway
    if labels is None:
        from scipy.sparse.csgraph import connected_components as cc

        _, labels = cc(_pattern(problem), directed=False)
    order = np.argsort(labels, kind="stable")  # stable: indices ascending inside each label
    splits = np.flatnonzero(np.diff(labels[order])) + 1
    parts = np.split(order.astype(np.int64), splits)
    return sorted(parts, key=lambda idx: int(idx[0]))


def subproblem(problem: CanonicalProblem, idx: np.ndarray, *, offset: bool | None = None) -> CanonicalProblem:
    """The restriction of ``problem`` to the spins ``idx`` (a new canonical problem).

    C_idx(σ_idx) = ½σ_idxᵀK[idx, idx]σ_idx + b[idx]ᵀσ_idx + k₀·[offset].
    The restriction is exact only when ``idx`` is a union of components
    (couplings leaving ``idx`` are dropped).  ``offset`` says whether this part
    carries k₀ and the caller's shift; by default the part containing spin 0
    does, so that the parts of :func:`connected_components` add up to the whole.
    Labels, scale, sense and form are kept; ``meta`` starts empty.
    """
    idx = np.asarray(idx, dtype=np.int64)
    if offset is None:
        offset = bool(idx.size) and bool(np.any(idx == 0))
    if problem.kind == "sparse":
        import scipy.sparse as sp

        K = sp.csr_array(problem.K)[idx][:, idx]
        K = sp.csr_array(K)
    elif problem.kind == "dense":
        K = np.asarray(problem.K)[np.ix_(idx, idx)]
    else:
        K = problem.dense_K()[np.ix_(idx, idx)]
    labels = tuple(problem.labels[int(i)] for i in idx)
    return CanonicalProblem(
        K, np.asarray(problem.b, dtype=np.float64)[idx].copy(), problem.k0 if offset else 0.0,
        labels, scale=problem.scale, shift=problem.shift if offset else 0.0,
        sense=problem.sense, form=problem.form,
    )


def assemble(n: int, parts: Sequence[np.ndarray], sigmas: Sequence[np.ndarray]) -> np.ndarray:
    """Put the parts' spin vectors back into one int8 ±1 vector of length ``n``."""
    sigma = np.ones(n, dtype=np.int8)
    for idx, s in zip(parts, sigmas, strict=True):
        sigma[np.asarray(idx, dtype=np.int64)] = np.asarray(s, dtype=np.int8)
    return sigma
