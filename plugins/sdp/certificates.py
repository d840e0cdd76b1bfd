"""Upper bounds on the canonical maximum: the spectral bound and the SDP dual bound.

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀ over σ ∈ {±1}ⁿ.  Both bounds
work on the ghost-spin lift K' (N = n + 1 spins when b ≠ 0, else N = n), whose
maximum equals the original one.  For every y ∈ ℝᴺ and λ ≤ λ_min(Diag(y) − K'),

    C(σ) ≤ ½Σᵢyᵢ − ½Nλ + k₀    (since σᵀK'σ ≤ σᵀ(Diag(y) − λI)σ = Σy − Nλ).

The spectral bound takes y = 0, improved by a few Delorme–Poljak steps on y;
the SDP dual bound takes yᵢ = vᵢ·(K'V)ᵢ from the Burer–Monteiro factor V.
λ is proven by one Cholesky factorisation (:mod:`.eigen`) up to ``dense_limit``
spins; beyond that it is only estimated and the bound says so (certified=False).
"""

from __future__ import annotations

import math
import time
from typing import Any

import numpy as np

from spinward.core import Bound, CanonicalProblem, SolveContext

from . import eigen
from .mixing import cached_factor, dense_couplings, lift, remember_factor, solve_sdp

DENSE_LIMIT = 6000   # largest N certified by a dense Cholesky (≈ N³/3 flops)
DP_STEPS = 3         # Delorme–Poljak steps on y after the two starting points
SLACK = 5e-4         # first Cholesky shift for the dual, relative to mean |y| (bound slack ≈ this, relative)
SDP_TOL = 3e-7       # mixing-method tolerance when the bound provider solves the SDP itself
FLOPS = 1.5e9        # a conservative dense LAPACK rate (one core), used only to budget the time limit


def _seconds_for(flops: float) -> float:
    return flops / FLOPS


def _cholesky_cost(N: int) -> float:
    return _seconds_for(N ** 3 / 3)


def _fits(ctx: SolveContext, seconds: float) -> bool:
    return ctx.remaining() >= seconds


def bound_value(y: np.ndarray, lam: float, k0: float) -> float:
    """½Σy − ½Nλ + k₀, rounded up by a margin for the floating-point sums."""
    N = y.shape[0]
    raw = 0.5 * math.fsum(y.tolist()) - 0.5 * N * lam + k0
    slack = 8.0 * eigen.UNIT * (0.5 * float(np.abs(y).sum()) + 0.5 * N * abs(lam) + abs(k0))
    return raw + slack


def _couplings(lifted: CanonicalProblem) -> Any:
    """K' in the form the estimators want: dense float64 or sparse CSR."""
    return lifted.csr_K() if lifted.kind == "sparse" else dense_couplings(lifted)


def _off_diagonal(K: Any) -> tuple[Any, float]:
    """(K with its diagonal removed, ½ tr K): on ±1 states ½σᵀKσ = ½σᵀK_offσ + ½ tr K.

    The canonical form promises a zero diagonal; this keeps the bound valid if one slips in.
    """
    d = np.asarray(K.diagonal(), dtype=np.float64)
    if not np.any(d):
        return K, 0.0
    K = K.copy()
    if isinstance(K, np.ndarray):
        np.fill_diagonal(K, 0.0)
    else:
        K.setdiag(0.0)
        K.eliminate_zeros()
    return K, 0.5 * math.fsum(d.tolist())


def bound_from_y(problem: CanonicalProblem, y: np.ndarray, *, method: str, rng: np.random.Generator,
                 dense_limit: int = DENSE_LIMIT, est: eigen.Estimate | None = None,
                 first: float | None = None, clustered: bool = False) -> Bound:
    """The bound ½Σy − ½Nλ + k₀ with λ proven when N ≤ ``dense_limit``, else estimated.

    ``first`` is a shift for the Cholesky proof to try before estimating λ_min;
    ``clustered`` says the bottom of the spectrum clusters (y from an SDP factor).
    """
    lifted = lift(problem)
    K, half_trace = _off_diagonal(_couplings(lifted))
    k0 = problem.k0 + half_trace
    info: dict[str, Any] = {"N": lifted.n}
    if lifted.n <= dense_limit:
        Kd = K if isinstance(K, np.ndarray) else np.asarray(K.toarray(), dtype=np.float64)
        lower, tries = eigen.certify_min_eig(Kd, y, est, rng, first=first, clustered=clustered)
        info["cholesky_tries"] = tries
        if lower is not None:
            return Bound(bound_value(y, lower, k0), True, method, {**info, "lambda_lower": lower})
        info["reason"] = "Cholesky verification failed"
    else:
        info["reason"] = f"N = {lifted.n} is above the Cholesky limit {dense_limit}"
    est = eigen.estimate(K, y, rng, clustered=clustered) if est is None else est
    info.update(estimate=est.theta, estimator=est.method, residual=est.residual)
    # Without a proof, θ − ‖r‖ only bounds the eigenvalue nearest θ, not λ_min: an estimate.
    return Bound(bound_value(y, est.theta - est.residual, k0), False, method, info)


def _dp_value(y: np.ndarray, est: eigen.Estimate) -> float:
    return 0.5 * float(y.sum()) - 0.5 * y.shape[0] * est.theta


def delorme_poljak(K: Any, N: int, rng: np.random.Generator, *, steps: int = DP_STEPS,
                   should_stop: Any = None) -> tuple[np.ndarray, eigen.Estimate]:
    """Cheap descent on f(y) = ½Σy − ½Nλ_min(Diag(y) − K), from y = 0 and y = K1 (Laplacian).

    ∂f/∂yᵢ = ½(1 − N uᵢ²) with u the bottom eigenvector; steps halve on failure.
    Returns the best y found and its estimate (values are estimates, not proofs).
    """
    starts = [np.zeros(N), np.asarray(K.sum(axis=1)).ravel().astype(np.float64)]
    scored = [(y, eigen.estimate(K, y, rng)) for y in starts]
    y, est = min(scored, key=lambda t: _dp_value(*t))
    step = 0.25 * max(abs(est.theta), 1e-12 * eigen.scale_of(K, y), 1e-300)
    for _ in range(steps):
        if should_stop is not None and should_stop():
            break
        trial = y - step * 0.5 * (1.0 - N * est.vector ** 2)
        trial_est = eigen.estimate(K, trial, rng, x0=est.vector)
        if _dp_value(trial, trial_est) < _dp_value(y, est):
            y, est, step = trial, trial_est, step * 1.5
        else:
            step *= 0.5
    return y, est


def spectral_bound(problem: CanonicalProblem, ctx: SolveContext) -> Bound:
    """λ_max bound of the ghost-spin lift, improved by a few Delorme–Poljak steps on y.

    Within the context's time limit: the Delorme–Poljak steps (dense eigen-solves) run
    only when they and the Cholesky proof fit; when even the proof does not fit, the
    bound comes from a Lanczos estimate and says "estimated".
    """
    lifted = lift(problem)
    N = lifted.n
    dense_limit = int(ctx.option("dense_limit", DENSE_LIMIT))
    proof = _cholesky_cost(N) if N <= dense_limit else float("inf")
    dp_cost = (DP_STEPS + 2) * 4 * _cholesky_cost(N)
    default = DP_STEPS if N <= eigen.EIGH_LIMIT and _fits(ctx, proof + dp_cost) else -1
    steps = int(ctx.option("dp_steps", default))
    K = _couplings(lifted)
    if steps < 0:  # the plain eigenvalue bound, y = 0, from a cheap iterative estimate
        y = np.zeros(N)
        est = eigen.estimate_iterative(K, y, ctx.rng, maxiter=100) if N > eigen.SMALL_SPARSE else None
        if not _fits(ctx, proof):
            dense_limit = -1  # no time to prove it: bound_from_y then reports an estimate
    else:
        y, est = delorme_poljak(K, N, ctx.rng, steps=steps, should_stop=ctx.should_stop)
    return bound_from_y(problem, y, method="spectral", rng=ctx.rng, dense_limit=dense_limit, est=est)


def dual_y(lifted: CanonicalProblem, V: np.ndarray) -> np.ndarray:
    """yᵢ = vᵢ·(K'V)ᵢ, the multipliers of the diagonal constraints at the factor."""
    KV = np.asarray(lifted.K @ V)
    return np.einsum("ij,ij->i", V, KV)


def sdp_dual_bound(problem: CanonicalProblem, ctx: SolveContext) -> Bound | None:
    """The SDP dual bound from a Burer–Monteiro factor (reused if the SDP solver left one)."""
    factor = cached_factor(problem)
    N = lift(problem).n
    if factor is None and not _fits(ctx, 3 * _cholesky_cost(N) + _seconds_for(120.0 * N * N * math.sqrt(2 * N))):
        return None  # neither a factor to reuse nor time to solve the SDP and prove it
    if factor is not None and not _fits(ctx, _cholesky_cost(N)):
        return None
    if factor is None:
        factor = solve_sdp(problem, rng=ctx.rng, tol=float(ctx.option("tol", SDP_TOL)),
                           should_stop=ctx.should_stop)
        remember_factor(problem, factor)
    y = dual_y(lift(problem), factor.V)
    # Near the optimum λ_min(Diag(y) − K') ≈ 0 from below: try a small target slack before
    # paying for an estimate (the dense eigh estimate is cheap only for moderate N).
    first = None if y.shape[0] <= eigen.EIGH_LIMIT else -float(ctx.option("slack", SLACK)) * float(np.abs(y).mean())
    bound = bound_from_y(problem, y, method="sdp-dual", rng=ctx.rng, first=first, clustered=True,
                         dense_limit=int(ctx.option("dense_limit", DENSE_LIMIT)))
    info = {**bound.info, "primal": float(factor.value), "sweeps": factor.sweeps, "converged": factor.converged}
    return Bound(bound.value, bound.certified, bound.method, info)


def bound_report(problem: CanonicalProblem, *, seed: int = 0, time_limit: float | None = None) -> list[dict[str, Any]]:
    """Both bounds with their times, in canonical units and in the caller's objective.

    ``objective_bound`` is an upper bound for a maximisation and a lower bound for
    a minimisation (``problem.bound_to_objective``).
    """
    rows = []
    for name, fn in (("spectral", spectral_bound), ("sdp-dual", sdp_dual_bound)):
        ctx = SolveContext(rng=np.random.default_rng(seed), time_limit=time_limit)
        t0 = time.perf_counter()
        b = fn(problem, ctx)
        if b is None:
            rows.append({"method": name, "canonical_bound": None, "objective_bound": None, "kind": "skipped",
                         "seconds": time.perf_counter() - t0, "info": {"reason": "did not fit the time limit"}})
            continue
        rows.append({"method": name, "canonical_bound": b.value, "objective_bound": problem.bound_to_objective(b.value),
                     "kind": "certified" if b.certified else "estimated", "seconds": time.perf_counter() - t0,
                     "info": dict(b.info)})
    return rows
