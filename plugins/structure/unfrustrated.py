"""Exact solver for frustration-free couplings by gauge fixing.

Canonical sense: maximise C(σ) = Σ_{i<j} K_ij σ_iσ_j + Σ_i b_iσ_i + k₀.  The
couplings are frustration-free when signs τ ∈ {±1}ⁿ exist with τ_iτ_jK_ij ≥ 0
for every pair (no cycle carries an odd number of negative couplings; Toulouse
1977).  The gauge σ = τσ' maps the problem to a ferromagnet with K'_ij =
τ_iτ_jK_ij and b'_i = τ_ib_i and keeps every value.  Without fields σ = τ
attains Σ|K_ij| + k₀, which bounds every state, so it is optimal; with fields
the ferromagnet goes to the min-cut solver.

τ is found on a BFS spanning forest: τ_v is the parity of the negative
couplings on the tree path from v to its component's root.
"""

from __future__ import annotations

import math

import numpy as np

from spinward.core import CanonicalProblem, Solution, SolveContext, SolverUnsuitableError
from spinward.core.profile import profile_of

from . import mincut

PROFILE_FIRST = 5000  # above this size the profile's balance test answers first (no count of bad couplings)


def tree_parity(n: int, i: np.ndarray, j: np.ndarray, negative: np.ndarray) -> np.ndarray:
    """Parity (0/1) of negative couplings on BFS-forest paths to each component's root."""
    import scipy.sparse as sp
    from scipy.sparse.csgraph import breadth_first_order, connected_components

    if n == 0:
        return np.zeros(0, dtype=np.int8)
    _, labels = connected_components(sp.csr_array((np.ones(i.size), (i, j)), shape=(n, n)), directed=False)
    roots = np.unique(labels, return_index=True)[1]  # the first spin of each component
    # one virtual root joined to every component's root gives a single BFS forest
    rows = np.concatenate([i, np.full(roots.size, n)])
    cols = np.concatenate([j, roots])
    sign = np.concatenate([np.where(negative, 2, 1), np.ones(roots.size)]).astype(np.int8)
    G = sp.csr_array((sign, (rows, cols)), shape=(n + 1, n + 1))
    G = sp.csr_array(G + G.T)
    _, pred = breadth_first_order(G, n, directed=False, return_predecessors=True)
    anc = np.where(pred < 0, n, pred).astype(np.int64)
    par = np.zeros(n + 1, dtype=np.int8)
    tree = np.arange(n)
    par[:n] = (np.asarray(G[anc[:n], tree]).ravel() == 2).astype(np.int8)
    anc[n] = n
    while np.any(anc != n):  # pointer jumping: log(depth) rounds
        par ^= par[anc]
        anc = anc[anc]
    return par[:n]


def gauge_signs(problem: CanonicalProblem) -> tuple[np.ndarray, int, int]:
    """(τ as int8 ±1, couplings left negative after the gauge, non-zero couplings); cached."""
    cached = problem.meta.get("_gauge_signs")
    if cached is not None:
        return cached
    i, j, w = mincut.couplings_upper(problem)
    tau = np.where(tree_parity(problem.n, i, j, w < 0) == 1, -1, 1).astype(np.int8)
    bad = int(np.count_nonzero(tau[i] * tau[j] * w < 0))
    problem.meta["_gauge_signs"] = (tau, bad, int(w.size))
    return tau, bad, int(w.size)


def frustrated_triangle(problem: CanonicalProblem, tries: int = 256) -> tuple[int, int, int] | None:
    """A sampled triangle with K_ijK_jkK_ki < 0 in a dense K (a proof of frustration), or None.

    Dense inputs only: it spares building the sparse graph of a large frustrated dense matrix.
    """
    n = problem.n
    if problem.kind != "dense" or n <= 64:  # small inputs get the exact count instead
        return None
    K = problem.K
    rng = np.random.default_rng(n)  # fixed: the check must not consume the caller's randomness
    for i, j, k in rng.integers(0, n, (tries, 3)).tolist():
        if len({i, j, k}) == 3 and float(K[i, j]) * float(K[j, k]) * float(K[k, i]) < 0:
            return i, j, k
    return None


def check(problem: CanonicalProblem) -> bool | str:
    """True when a gauge makes every coupling ferromagnetic, else the reason."""
    if problem.kind == "operator":
        return "gauge fixing needs explicit couplings, not a LinearOperator"
    triangle = frustrated_triangle(problem)
    if triangle is not None:
        return (f"couplings are frustrated: the triangle {triangle} has an odd number of negative "
                "couplings, so no gauge makes them all ferromagnetic")
    if not (np.all(np.isfinite(problem.b)) and mincut.negative_couplings(problem)[2]):
        return "the couplings or fields hold non-finite values"
    balanced = profile_of(problem).frustration_free if problem.n > PROFILE_FIRST else True
    if balanced is None:
        return "the balance of the couplings was not checked (the time limit is short for their number)"
    if not balanced:  # the profile's balance test is cheaper than the gauge search
        return ("couplings are frustrated: some cycle has an odd number of negative couplings, so no gauge "
                "makes them all ferromagnetic")
    _, bad, total = gauge_signs(problem)
    if bad:
        return (f"couplings are frustrated: {bad} of {total} couplings close a cycle with an odd "
                "number of negative couplings, so no gauge makes them all ferromagnetic")
    return True


def gauged(problem: CanonicalProblem, tau: np.ndarray) -> CanonicalProblem:
    """The ferromagnet K' = DKD, b' = Db with D = diag(τ) (same values at σ' = τσ)."""
    t = tau.astype(np.float64)
    if problem.kind == "sparse":
        import scipy.sparse as sp

        D = sp.diags_array(t)
        K = sp.csr_array(D @ problem.csr_K() @ D)
    else:
        K = problem.dense_K() * np.outer(t, t)
    return CanonicalProblem(K, t * problem.b, problem.k0, form="gauge")


def solve_frustration_free(problem: CanonicalProblem, ctx: SolveContext) -> Solution:
    """Exact optimum of a problem passing :func:`check` (see the module docstring)."""
    tau, bad, _ = gauge_signs(problem)
    if bad:
        raise SolverUnsuitableError(f"gauge fixing cannot run: {check(problem)}; use another method")
    if not problem.has_fields:
        sigma = tau.copy()
        value = problem.value(sigma)
        ctx.offer(sigma, value)
        _, _, w = mincut.couplings_upper(problem)
        bound = math.fsum(np.abs(w)) + float(problem.k0)
        slack = 1e-12 * (abs(bound) + 1.0)  # C(σ) is evaluated in floating point
        return Solution(sigma=sigma, exact=True, bound=max(bound, value) + slack,
                        info={"method": "gauge fixing", "fields": False})
    levels = ctx.option("max_levels", mincut.DEFAULT_LEVELS)
    sub_ctx = ctx.child(options={"max_levels": levels}, embed=lambda s, v: ((s * tau).astype(np.int8), v))
    sub = mincut.solve_ferromagnet(gauged(problem, tau), sub_ctx)
    sigma = (tau * sub.sigma).astype(np.int8)
    ctx.offer(sigma, problem.value(sigma))
    return Solution(sigma=sigma, exact=sub.exact, bound=sub.bound,
                    info={"method": "gauge fixing + min-cut", "fields": True, **sub.info})
