"""Spectral rounding: the sign of the top eigenvector, then single-flip clean-up.

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀.  The top eigenvector of the
ghost-spin lift K' maximises ½xᵀK'x over the sphere |x|² = N; its signs give a
state (ghost sign undone), which local search then climbs to a 1-flip optimum.
"""

from __future__ import annotations

import math

import numpy as np

from spinward.core import Capabilities, CanonicalProblem, Solution, SolveContext, SolverSpec

from .common.flips import local_search

EIGH_LIMIT = 2500  # dense eigh (top index only) up to this size; Lanczos beyond
SMALL = 400        # any K this small is densified (ARPACK needs N well above k)
EIGH_SECONDS = 1.5e-9   # seconds per N³ of a dense eigh (generous), to decide whether it fits a time limit
PASS_SECONDS = 2e-9     # seconds per stored entry of one product with K (memory bound, generous)
MAX_PASSES = 20_000     # products with K Lanczos may use without a time limit


def top_eigenvector(lifted: CanonicalProblem, rng: np.random.Generator, seconds: float = math.inf) -> np.ndarray:
    """A unit eigenvector of the largest eigenvalue of K' (dense eigh or Lanczos).

    Within ``seconds``: a dense eigh runs only when predicted to fit (else Lanczos), and
    Lanczos stops after the products with K that fit (its best vector so far is used).
    """
    N = lifted.n
    if N == 1 or lifted.n_couplings() == 0:
        return np.ones(N)  # no couplings: every vector is a top eigenvector
    entries = lifted.K.nnz if lifted.kind == "sparse" else N * N
    if N <= SMALL or (lifted.kind == "dense" and N <= EIGH_LIMIT and EIGH_SECONDS * N ** 3 <= seconds):
        import scipy.linalg as sl
        from threadpoolctl import threadpool_limits

        with threadpool_limits(limits=1, user_api="blas"):  # small eigh: one thread is faster, and steady under load
            _, U = sl.eigh(lifted.dense_K(), subset_by_index=[N - 1, N - 1], check_finite=False)
        return U[:, 0]
    import scipy.sparse.linalg as sla

    K = lifted.csr_K() if lifted.kind == "sparse" else lifted.K
    basis = min(N - 1, 20)
    passes = MAX_PASSES if math.isinf(seconds) else int(seconds / (PASS_SECONDS * (entries + N)))
    if passes < 2 * basis:  # not even two Lanczos restarts fit: a few steps of the power method
        return power_steps(lifted, rng, max(passes, 1))
    try:
        _, U = sla.eigsh(K, k=1, which="LA", v0=rng.standard_normal(N), tol=1e-8, ncv=basis,
                         maxiter=max(1, min(MAX_PASSES, passes) // basis))
    except sla.ArpackNoConvergence as exc:
        if exc.eigenvectors is None or not exc.eigenvectors.size:
            return rng.standard_normal(N)
        U = exc.eigenvectors
    return U[:, 0]


def power_steps(lifted: CanonicalProblem, rng: np.random.Generator, steps: int) -> np.ndarray:
    """``steps`` products of the shifted K' + cI (c = max row sum, so the top eigenvector dominates)."""
    shift = float(np.max(np.abs(lifted.matvec(np.ones(lifted.n))))) + lifted.max_abs_coupling()
    x = rng.standard_normal(lifted.n)
    for _ in range(steps - 1):
        x = lifted.matvec(x) + shift * x
        x /= np.linalg.norm(x) or 1.0
    return x


def signs(x: np.ndarray, lifted: bool) -> np.ndarray:
    """±1 signs of x (zeros to +1), ghost sign (last entry) undone when lifted."""
    s = np.where(x >= 0.0, 1, -1).astype(np.int8)
    return (s[:-1] * s[-1]).astype(np.int8) if lifted else s


def run(problem: CanonicalProblem, ctx: SolveContext) -> Solution:
    """Sign of the top eigenvector of the lift, polished by single flips."""
    lifted = problem.with_ghost_spin() if problem.has_fields else problem
    x = top_eigenvector(lifted, ctx.rng, 0.8 * ctx.remaining())  # the rest for the clean-up
    sigma, value = local_search(problem, signs(x, lifted is not problem))
    ctx.offer(sigma, value)
    return Solution(sigma=sigma, info={"raw_value": problem.value(signs(x, lifted is not problem))})


def fit(problem: CanonicalProblem) -> float:
    """Fast but weak: only just above nothing."""
    return 0.5


def cost(problem: CanonicalProblem) -> float:
    """Predicted seconds: Lanczos (a few hundred products with K) and one clean-up."""
    from spinward.core.plan import stored_entries

    return 300 * PASS_SECONDS * (stored_entries(problem) + problem.n)

SPEC = SolverSpec(
    name="spectral",
    run=run,
    capabilities=Capabilities(fields=True, operator=False, stochastic=False),
    summary="sign of the top eigenvector, then single-flip clean-up",
    options={},
    fit=fit,
    cost=cost,
    first_reads=5.0,  # a few Lanczos steps (it stops between them), the rounding and its climb
)
