"""Outside references for the tests: plain brute force and scipy.optimize.milp (HiGHS).

Nothing here uses spinward's own code paths: each reference works from the
caller's own input (a QUBO matrix, Ising coefficients, or graph edges).
"""

from __future__ import annotations

import itertools

import numpy as np
from scipy.optimize import Bounds, LinearConstraint, milp
from scipy.sparse import lil_array


def all_binary(n: int) -> np.ndarray:
    """Every x ∈ {0,1}ⁿ as rows of a (2ⁿ, n) array (n ≤ 20)."""
    return np.array(list(itertools.product((0, 1), repeat=n)), dtype=np.float64).reshape(-1, n)


def brute_qubo_min(Q: np.ndarray, offset: float = 0.0) -> float:
    """min over x ∈ {0,1}ⁿ of xᵀQx + offset, by enumeration."""
    X = all_binary(Q.shape[0])
    return float(np.min(np.einsum("ki,ij,kj->k", X, Q, X)) + offset)


def brute_ising_min(J_upper: np.ndarray, h: np.ndarray, offset: float = 0.0) -> float:
    """min over s of −Σ_{i<j} J_ij s_i s_j − Σ h_i s_i + offset (J_upper: pair coefficients above the diagonal)."""
    S = 2 * all_binary(len(h)) - 1
    return float(np.min(-np.einsum("ki,ij,kj->k", S, np.triu(J_upper, 1), S) - S @ h) + offset)


def brute_maxcut(n: int, edges: list[tuple[int, int, float]]) -> float:
    """max over sides of Σ w [side_u ≠ side_v], by enumeration."""
    X = all_binary(n)
    total = np.zeros(len(X))
    for u, v, w in edges:
        total += w * (X[:, u] != X[:, v])
    return float(total.max())


def milp_qubo_min(Q: np.ndarray, offset: float = 0.0, linear: list[tuple[np.ndarray, float, float]] = ()) -> float:
    """min xᵀQx + offset by the standard linearisation y_ij = x_i x_j, solved to zero gap by HiGHS.

    ``linear`` adds constraints low ≤ a·x ≤ high, each given as (a, low, high) over the n variables x.
    """
    n = Q.shape[0]
    S = Q + Q.T
    pairs = [(i, j) for i in range(n) for j in range(i + 1, n) if S[i, j] != 0]
    c = np.concatenate([np.diag(Q), [S[i, j] for i, j in pairs]])
    A = lil_array((3 * len(pairs), n + len(pairs)))
    lo, hi = [], []
    for k, (i, j) in enumerate(pairs):
        y = n + k
        A[3 * k, [y, i]] = [1, -1]; lo.append(-np.inf); hi.append(0)          # y ≤ x_i
        A[3 * k + 1, [y, j]] = [1, -1]; lo.append(-np.inf); hi.append(0)      # y ≤ x_j
        A[3 * k + 2, [y, i, j]] = [1, -1, -1]; lo.append(-1); hi.append(np.inf)  # y ≥ x_i + x_j − 1
    cons = [LinearConstraint(A.tocsr(), lo, hi)] if pairs else []
    cons += _side_constraints(linear, len(c))
    res = milp(c, constraints=cons, integrality=np.ones(len(c)), bounds=Bounds(0, 1),
               options={"mip_rel_gap": 0})
    assert res.status == 0, res.message
    return float(res.fun) + offset


def _side_constraints(linear: list[tuple[np.ndarray, float, float]], width: int) -> list[LinearConstraint]:
    """low ≤ a·x ≤ high on the first len(a) variables of a program with ``width`` variables."""
    out = []
    for a, low, high in linear:
        row = np.zeros(width)
        row[: len(a)] = a
        out.append(LinearConstraint(row.reshape(1, -1), low, high))
    return out


def milp_maxcut(n: int, edges: list[tuple[int, int, float]], linear: list[tuple[np.ndarray, float, float]] = ()) -> float:
    """max Σ w z_uv with z_uv = x_u XOR x_v enforced by four inequalities (any weight sign).

    ``linear`` adds constraints low ≤ a·x ≤ high on the sides x (x_u = 1: side 1), as (a, low, high).
    """
    m = len(edges)
    c = np.concatenate([np.zeros(n), [-w for _, _, w in edges]])
    A = lil_array((4 * m, n + m))
    lo, hi = [], []
    for k, (u, v, _) in enumerate(edges):
        z = n + k
        A[4 * k, [z, u, v]] = [1, -1, -1]; lo.append(-np.inf); hi.append(0)     # z ≤ x_u + x_v
        A[4 * k + 1, [z, u, v]] = [1, 1, 1]; lo.append(-np.inf); hi.append(2)    # z ≤ 2 − x_u − x_v
        A[4 * k + 2, [z, u, v]] = [1, -1, 1]; lo.append(0); hi.append(np.inf)    # z ≥ x_u − x_v
        A[4 * k + 3, [z, u, v]] = [1, 1, -1]; lo.append(0); hi.append(np.inf)    # z ≥ x_v − x_u
    cons = [LinearConstraint(A.tocsr(), lo, hi)] + _side_constraints(linear, n + m)
    res = milp(c, constraints=cons, integrality=np.ones(n + m), bounds=Bounds(0, 1), options={"mip_rel_gap": 0})
    assert res.status == 0, res.message
    return -float(res.fun)


def ising_as_qubo(J_upper: np.ndarray, h: np.ndarray, offset: float = 0.0) -> tuple[np.ndarray, float]:
    """(Q, c) with xᵀQx + c = −Σ_{i<j} J_ij s_i s_j − Σ h_i s_i + offset for s = 2x − 1, by plain algebra."""
    J = np.triu(J_upper, 1)
    # −J s_i s_j = −J (4 x_i x_j − 2 x_i − 2 x_j + 1);  −h s = −2 h x + h
    Q = -4.0 * J
    lin = -2.0 * h + 2.0 * J.sum(axis=1) + 2.0 * J.sum(axis=0)
    Q = Q + np.diag(lin)
    return Q, float(offset - J.sum() + h.sum())


# Canonical-level references (maximise ½σᵀKσ + bᵀσ + k₀), shared by the heuristic plugins' tests.

def brute_max(K: np.ndarray, b: np.ndarray, k0: float) -> float:
    """max over all σ ∈ {±1}ⁿ of ½σᵀKσ + bᵀσ + k₀, by plain enumeration."""
    S = np.array(list(itertools.product((-1.0, 1.0), repeat=len(b))))
    return float(np.max(0.5 * np.einsum("ki,ij,kj->k", S, K, S) + S @ b + k0))


def own_value(K: np.ndarray, b: np.ndarray, k0: float, sigma: np.ndarray) -> float:
    s = np.asarray(sigma, dtype=np.float64)
    return float(0.5 * s @ K @ s + b @ s + k0)


def random_instance(rng: np.random.Generator, n: int) -> tuple[np.ndarray, np.ndarray, float]:
    """Gaussian couplings of both signs on a random pattern, Gaussian fields, an offset."""
    K = np.triu(rng.standard_normal((n, n)) * (rng.random((n, n)) < 0.6), 1)
    return K + K.T, rng.standard_normal(n) * rng.random(), float(rng.normal())


def heuristic_misses(solve, options: dict, *, sparse: bool, seed: int, trials: int = 12) -> int:
    """How often ``solve(K, b, k0, seed=trial, **options)`` misses the brute-force optimum on small
    random instances (n from 2 to 13); also asserts it never reports more than the optimum."""
    import scipy.sparse as sp

    rng = np.random.default_rng(seed)
    misses = 0
    for trial in range(trials):
        K, b, k0 = random_instance(rng, int(rng.integers(2, 14)))
        opt = brute_max(K, b, k0)
        sol, _ = solve(sp.csr_array(K) if sparse else K, b, k0, seed=trial, **options)
        value = own_value(K, b, k0, sol.sigma)
        assert value <= opt + 1e-9
        misses += value < opt - 1e-9
    return misses
