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
from .mixing import cached_factor, default_rank, dense_couplings, lift, remember_factor, solve_sdp

DENSE_LIMIT = 6000   # largest N certified by a dense Cholesky (≈ N³/3 flops)
DP_STEPS = 3         # Delorme–Poljak steps on y after the two starting points
SLACK = 5e-4         # first Cholesky shift for the dual, relative to mean |y| (bound slack ≈ this, relative)
SDP_TOL = 3e-7       # mixing-method tolerance when the bound provider solves the SDP itself
MIN_SWEEPS = 10      # the dual bound starts only when this many sweeps and the proof fit
DEFAULT_MAX_SWEEPS = 2000
FLOPS = 1.5e9        # a conservative dense LAPACK rate (one core), used only to budget the time limit
EIGH_FLOP_FACTOR = 4.0 / 3.0   # a dense eigh (one eigenpair) costs about this many N³ flops, Cholesky ⅓
PASS_SECONDS = 2e-9   # seconds per stored coupling entry for one product with K (memory bound, generous)
ITERATIONS = 100      # Lanczos restarts of the plain (estimated) bound, at most
MIN_PASSES = 40       # an iterative estimate with fewer products with K than this is not worth starting
STEP_SECONDS = 5e-4   # the iterative eigen-solvers' own work per product with K (measured: LOBPCG, sparse)
STEP_SECONDS_PER_ROW = 5e-7  # and its part that grows with N (orthogonalising against the basis; ARPACK, N = 5·10⁴)
SWEEP_FLOPS = 2e9     # multiply-adds per second of a mixing-method sweep (blocked BLAS or numba; generous)
SINGLE_THREAD_UP_TO = 3000  # below this N, LAPACK runs on one BLAS thread (faster, and steady under load)


def _seconds_for(flops: float) -> float:
    return flops / FLOPS


def _cholesky_cost(N: int) -> float:
    return _seconds_for(N ** 3 / 3)


def _eigh_cost(N: int) -> float:
    return _seconds_for(EIGH_FLOP_FACTOR * N ** 3)


def _pass_cost(problem: CanonicalProblem) -> float:
    entries = problem.K.nnz if problem.kind == "sparse" else problem.n ** 2
    return PASS_SECONDS * (entries + problem.n)


def _estimate_cost(lifted: CanonicalProblem, passes: int = 0) -> float:
    """Seconds of an iterative estimate with ``passes`` products with K (default the least worth starting)."""
    per = _pass_cost(lifted) + STEP_SECONDS + STEP_SECONDS_PER_ROW * lifted.n
    return (passes or MIN_PASSES) * per


def _passes(seconds: float, lifted: CanonicalProblem) -> int:
    """How many products with K fit into ``seconds`` (at most ``ITERATIONS`` Lanczos restarts' worth).

    Each product also pays the iterative solvers' own work per step (orthogonalisation, small
    eigenproblems; ``STEP_SECONDS``), which dominates on sparse K.
    """
    per = _pass_cost(lifted) + STEP_SECONDS + STEP_SECONDS_PER_ROW * lifted.n
    return int(min(ITERATIONS * eigen.LANCZOS_BASIS, max(seconds, 0.0) / per))


def available(ctx: SolveContext) -> float:
    """Seconds this bound may take: the allowance the plan gave (``budget``), and the clock when timed."""
    budget = ctx.option("budget", None)
    return min(ctx.remaining(), math.inf if budget is None else float(budget))


def _fits(ctx: SolveContext, seconds: float) -> bool:
    return available(ctx) >= seconds


def spectral_cost(problem: CanonicalProblem) -> float:
    """Predicted seconds of the cheapest spectral bound: an estimate, plus its proof where N allows."""
    lifted_n = problem.n + (1 if problem.has_fields else 0)
    if problem.kind == "dense" and lifted_n <= eigen.EIGH_LIMIT:
        return _eigh_cost(lifted_n) + _cholesky_cost(lifted_n)
    return _estimate_cost(lift(problem)) + (_cholesky_cost(lifted_n) if lifted_n <= eigen.SMALL_SPARSE else 0.0)


def dual_cost(problem: CanonicalProblem) -> float:
    """Predicted seconds of the SDP dual bound: the mixing method (unless a factor is cached) and its proof."""
    N = problem.n + (1 if problem.has_fields else 0)
    proof = _cholesky_cost(N) if N <= DENSE_LIMIT else _estimate_cost(lift(problem))
    solve = 0.0 if cached_factor(problem) is not None else MIN_SWEEPS * _sweep_cost(problem)
    return solve + proof


def _sweep_cost(problem: CanonicalProblem) -> float:
    """One mixing-method sweep: a pass over K plus 2·entries·k multiply-adds (blocked products)."""
    entries = problem.K.nnz if problem.kind == "sparse" else problem.n ** 2
    return _pass_cost(problem) + 2.0 * entries * default_rank(problem.n) / SWEEP_FLOPS


def limited_threads(N: int) -> Any:
    """One BLAS thread for moderate N (see SINGLE_THREAD_UP_TO), else no change."""
    from contextlib import nullcontext

    if N > SINGLE_THREAD_UP_TO:
        return nullcontext()
    from threadpoolctl import threadpool_limits

    return threadpool_limits(limits=1, user_api="blas")


def bound_value(y: np.ndarray, lam: float, k0: float) -> float:
    """½Σy − ½Nλ + k₀, rounded up by a margin for the floating-point sums."""
    N = y.shape[0]
    raw = 0.5 * math.fsum(y.tolist()) - 0.5 * N * lam + k0
    slack = 8.0 * eigen.UNIT * (0.5 * float(np.abs(y).sum()) + 0.5 * N * abs(lam) + abs(k0))
    return raw + slack


def _couplings(lifted: CanonicalProblem) -> Any:
    """K' in the form the estimators want: sparse CSR, dense float64, or (a large dense K held as
    float32 or a memmap, beyond the Cholesky limit, where only an iterative estimate is possible)
    K' itself streamed in row blocks, so no float64 copy of it is ever made."""
    if lifted.kind == "sparse":
        return lifted.csr_K()
    K = lifted.K
    copy_free = isinstance(K, np.ndarray) and K.dtype == np.float64 and K.flags.c_contiguous
    if not copy_free and lifted.n > DENSE_LIMIT:
        return Streamed(lifted)
    return dense_couplings(lifted)


class Streamed:
    """A dense K' read in row blocks on every product (no copy): ``K @ x``, ``K @ X``, a zero diagonal."""

    def __init__(self, problem: CanonicalProblem) -> None:
        self.problem = problem
        self.shape = (problem.n, problem.n)

    def __matmul__(self, x: np.ndarray) -> np.ndarray:
        x = np.asarray(x, dtype=np.float64)
        if x.ndim == 1:
            return self.problem.matvec(x)
        return np.column_stack([self.problem.matvec(x[:, j]) for j in range(x.shape[1])])

    def diagonal(self) -> np.ndarray:
        return np.zeros(self.problem.n)  # the canonical form's diagonal is zero by construction


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
                 first: float | None = None, clustered: bool = False, passes: int | None = None) -> Bound:
    """The bound ½Σy − ½Nλ + k₀ with λ proven when N ≤ ``dense_limit``, else estimated.

    ``first`` is a shift for the Cholesky proof to try before estimating λ_min;
    ``clustered`` says the bottom of the spectrum clusters (y from an SDP factor);
    ``passes`` caps the products with K of an iterative estimate.
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
    est = eigen.estimate(K, y, rng, clustered=clustered, passes=passes) if est is None else est
    info.update(estimate=est.theta, estimator=est.method, residual=est.residual)
    # Without a proof, θ − ‖r‖ only bounds the eigenvalue nearest θ, not λ_min: an estimate.
    return Bound(bound_value(y, est.theta - est.residual, k0), False, method, info)


def _dp_value(y: np.ndarray, est: eigen.Estimate) -> float:
    return 0.5 * float(y.sum()) - 0.5 * y.shape[0] * est.theta


def delorme_poljak(K: Any, N: int, rng: np.random.Generator, *, steps: int = DP_STEPS,
                   afford: Any = None) -> tuple[np.ndarray, eigen.Estimate]:
    """Cheap descent on f(y) = ½Σy − ½Nλ_min(Diag(y) − K), from y = 0 and y = K1 (Laplacian).

    ∂f/∂yᵢ = ½(1 − N uᵢ²) with u the bottom eigenvector; steps halve on failure.
    ``afford()`` is asked before each step (one more estimate) and ends the descent when False.
    Returns the best y found and its estimate (values are estimates, not proofs).
    """
    starts = [np.zeros(N), np.asarray(K.sum(axis=1)).ravel().astype(np.float64)]
    scored = [(y, eigen.estimate(K, y, rng)) for y in starts]
    y, est = min(scored, key=lambda t: _dp_value(*t))
    step = 0.25 * max(abs(est.theta), 1e-12 * eigen.scale_of(K, y), 1e-300)
    for _ in range(steps):
        if afford is not None and not afford():
            break
        trial = y - step * 0.5 * (1.0 - N * est.vector ** 2)
        trial_est = eigen.estimate(K, trial, rng, x0=est.vector)
        if _dp_value(trial, trial_est) < _dp_value(y, est):
            y, est, step = trial, trial_est, step * 1.5
        else:
            step *= 0.5
    return y, est


def spectral_bound(problem: CanonicalProblem, ctx: SolveContext) -> Bound | None:
    """λ_max bound of the ghost-spin lift, improved by a few Delorme–Poljak steps on y.

    Within what the plan allows (:func:`available`): the Delorme–Poljak steps (dense
    eigen-solves) run only while they and the Cholesky proof fit; when even the proof does
    not fit, the bound comes from a Lanczos estimate and says "estimated"; when not even
    that fits, there is no bound (None).  Without a time limit the decisions use the
    predicted costs only, so the same problem gets the same bound.
    """
    lifted = lift(problem)
    N = lifted.n
    with limited_threads(N):
        return _spectral(problem, lifted, N, ctx)


def _spectral(problem: CanonicalProblem, lifted: CanonicalProblem, N: int, ctx: SolveContext) -> Bound | None:
    dense_limit = int(ctx.option("dense_limit", DENSE_LIMIT))
    proof = _cholesky_cost(N) if N <= dense_limit else float("inf")
    one = _eigh_cost(N)
    default = DP_STEPS if N <= eigen.EIGH_LIMIT and _fits(ctx, proof + (DP_STEPS + 2) * one) else -1
    steps = int(ctx.option("dp_steps", default))
    start, allowance = time.perf_counter(), available(ctx)
    K = _couplings(lifted)
    if steps < 0:  # the plain eigenvalue bound, y = 0, from a cheap iterative estimate
        y = np.zeros(N)
        est = None
        if N > eigen.SMALL_SPARSE:
            passes = _passes(allowance - (proof if _fits(ctx, proof) else 0.0), lifted)
            if passes < MIN_PASSES:
                return None
            est = eigen.estimate_iterative(K, y, ctx.rng, passes=passes)
        if not _fits(ctx, proof):
            dense_limit = -1  # no time to prove it: bound_from_y then reports an estimate
    else:
        def afford() -> bool:  # one more estimate, then the proof
            used = time.perf_counter() - start if ctx.time_limit is not None else 0.0
            return not ctx.should_stop() and allowance - used >= one + proof
        y, est = delorme_poljak(K, N, ctx.rng, steps=steps, afford=afford)
    return bound_from_y(problem, y, method="spectral", rng=ctx.rng, dense_limit=dense_limit, est=est)


def dual_y(lifted: CanonicalProblem, V: np.ndarray) -> np.ndarray:
    """yᵢ = vᵢ·(K'V)ᵢ, the multipliers of the diagonal constraints at the factor."""
    KV = np.asarray(lifted.K @ V)
    return np.einsum("ij,ij->i", V, KV)


def sdp_dual_bound(problem: CanonicalProblem, ctx: SolveContext) -> Bound | None:
    """The SDP dual bound from a Burer–Monteiro factor (reused if the SDP solver left one).

    Any factor gives a valid bound (an unconverged one a weaker one), so the mixing method
    runs only while the proof still fits after it: until the clock leaves the proof's time
    (with a time limit), or for as many sweeps as the allowance pays for (without one).
    """
    N = lift(problem).n
    with limited_threads(N):
        return _dual(problem, N, ctx)


def _dual(problem: CanonicalProblem, N: int, ctx: SolveContext) -> Bound | None:
    factor = cached_factor(problem)
    dense_limit = int(ctx.option("dense_limit", DENSE_LIMIT))
    proof = _cholesky_cost(N) if N <= dense_limit else _estimate_cost(lift(problem))
    sweep = _sweep_cost(lift(problem))
    if not _fits(ctx, proof + (0.0 if factor is not None else MIN_SWEEPS * sweep)):
        return None  # neither a factor and its proof, nor a few sweeps and a proof, fit the allowance
    if factor is None:
        allowance = available(ctx)
        if ctx.time_limit is None:
            sweeps = int(min(DEFAULT_MAX_SWEEPS, (allowance - proof) / sweep))
            factor = solve_sdp(problem, rng=ctx.rng, tol=float(ctx.option("tol", SDP_TOL)), max_sweeps=sweeps,
                               should_stop=ctx.should_stop)
        else:
            end = time.perf_counter() + allowance - proof
            factor = solve_sdp(problem, rng=ctx.rng, tol=float(ctx.option("tol", SDP_TOL)),
                               should_stop=lambda: ctx.should_stop() or time.perf_counter() > end)
        remember_factor(problem, factor)
    y = dual_y(lift(problem), factor.V)
    # Near the optimum λ_min(Diag(y) − K') ≈ 0 from below: try a small target slack before
    # paying for an estimate (the dense eigh estimate is cheap only for moderate N).
    first = None if y.shape[0] <= eigen.EIGH_LIMIT else -float(ctx.option("slack", SLACK)) * float(np.abs(y).mean())
    left = available(ctx)
    provable = N <= dense_limit and left >= _cholesky_cost(N)
    passes = _passes(left - (_cholesky_cost(N) if provable else 0.0), lift(problem))
    if not provable and passes < MIN_PASSES:
        return None
    bound = bound_from_y(problem, y, method="sdp-dual", rng=ctx.rng, first=first, clustered=True,
                         dense_limit=dense_limit if provable else -1, passes=passes)
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
