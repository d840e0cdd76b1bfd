"""Smallest eigenvalue of M = Diag(y) − K: estimates, and a rigorous lower bound.

The bound comes from one floating-point Cholesky factorisation of M − μI.  If it
runs to completion, the computed factor R̂ satisfies R̂ᵀR̂ = A + ΔA with
|ΔAᵢⱼ| ≤ γ/(1−γ)·√(aᵢᵢaⱼⱼ), γ = γ_{N+1} = (N+1)u/(1 − (N+1)u) (Higham, *Accuracy and
Stability of Numerical Algorithms*, Thm 10.3 with Cauchy–Schwarz on |R̂ᵀ||R̂|),
so λ_min(A) ≥ −γ/(1−γ)·tr(A).  Adding the one rounding of each diagonal entry
gives λ_min(M) ≥ μ − margin; the margin is doubled for safety.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from typing import Any

import numpy as np

UNIT = 2.0 ** -53          # unit roundoff of float64
EIGH_LIMIT = 2500          # dense eigh (subset) estimates up to this size; lobpcg beyond
SMALL_SPARSE = 400         # sparse K this small is densified for the estimate (lobpcg overhead dominates)
LANCZOS_BASIS = 20         # ARPACK's Lanczos basis size (one restart costs about this many products with K)


@dataclass(frozen=True)
class Estimate:
    """θ ≈ λ_min(M) (a Rayleigh–Ritz value, so θ ≥ λ_min), its unit vector and residual ‖Mu − θu‖."""

    theta: float
    vector: np.ndarray
    residual: float
    method: str


def shifted(K: np.ndarray, y: np.ndarray, mu: float) -> np.ndarray:
    """A fresh array Diag(y − μ) − K (K dense, zero diagonal)."""
    A = np.negative(K, dtype=np.float64)
    A[np.diag_indices_from(A)] = y - mu
    return A


def cholesky_margin(diag: np.ndarray) -> float:
    """How far below μ the smallest eigenvalue may lie when Cholesky of M − μI succeeds."""
    N = diag.shape[0]
    g = (N + 1) * UNIT / (1.0 - (N + 1) * UNIT)
    trace = math.fsum(diag)
    return 2.0 * (g / (1.0 - g) * trace + UNIT * float(np.max(diag)) + N * 1e-300)


def verified_min_eig(K: np.ndarray, y: np.ndarray, mu: float) -> float | None:
    """A proven lower bound on λ_min(Diag(y) − K), or None if Cholesky of the shift fails."""
    from scipy.linalg.lapack import dpotrf

    A = shifted(K, y, mu)
    diag = A.diagonal().copy()
    if diag.size and float(diag.min()) <= 0.0:
        return None
    _, info = dpotrf(A, lower=1, clean=0, overwrite_a=1)
    if info != 0:
        return None
    return mu - cholesky_margin(diag)


def estimate_dense(K: np.ndarray, y: np.ndarray) -> Estimate:
    """Exact-arithmetic-grade estimate by LAPACK's eigh on the lowest index only."""
    import scipy.linalg as sl

    A = shifted(K, y, 0.0)
    w, U = sl.eigh(A, subset_by_index=[0, 0], overwrite_a=True, check_finite=False)
    u = U[:, 0]
    return Estimate(float(w[0]), u, residual_norm(K, y, float(w[0]), u), "eigh")


def residual_norm(K: Any, y: np.ndarray, theta: float, u: np.ndarray) -> float:
    return float(np.linalg.norm(y * u - K @ u - theta * u))


def _operator(K: Any, y: np.ndarray) -> Any:
    import scipy.sparse.linalg as sla

    N = y.shape[0]
    return sla.LinearOperator((N, N), matvec=lambda x: y * x.ravel() - K @ x.ravel(),
                              matmat=lambda X: y[:, None] * X - K @ X, dtype=np.float64)


def _rayleigh(K: Any, y: np.ndarray, u: np.ndarray, method: str) -> Estimate:
    u = u / np.linalg.norm(u)
    theta = float(u @ (y * u - K @ u))  # a true Rayleigh quotient, so θ ≥ λ_min holds
    return Estimate(theta, u, residual_norm(K, y, theta, u), method)


def estimate_iterative(K: Any, y: np.ndarray, rng: np.random.Generator, *, passes: int = 2000,
                       x0: np.ndarray | None = None, clustered: bool = False) -> Estimate:
    """Lanczos (ARPACK) estimate of λ_min(Diag(y) − K); LOBPCG when ``clustered`` or unconverged.

    ``passes`` caps the products with K (ARPACK restarts cost about ``LANCZOS_BASIS`` each,
    a LOBPCG iteration about its block width).  At an SDP optimum the bottom of the spectrum
    clusters near 0 and Lanczos crawls, so the dual bound asks for LOBPCG.  Either may stop
    unconverged; the Rayleigh quotient θ is still ≥ λ_min.
    """
    import scipy.sparse.linalg as sla

    N = y.shape[0]
    op = _operator(K, y)
    v0 = rng.standard_normal(N) if x0 is None else np.asarray(x0, dtype=np.float64)
    if not clustered:
        basis = min(N - 1, LANCZOS_BASIS)
        try:
            _, U = sla.eigsh(op, k=1, which="SA", v0=v0, tol=1e-6, ncv=basis, maxiter=max(1, passes // basis))
            return _rayleigh(K, y, U[:, 0], "lanczos")
        except sla.ArpackNoConvergence as exc:
            if exc.eigenvectors is not None and exc.eigenvectors.size:
                return _rayleigh(K, y, exc.eigenvectors[:, 0], "lanczos (unconverged)")
        passes = passes // 2  # the rest of the allowance for LOBPCG
    width = min(4, max(1, N // 4))
    X = rng.standard_normal((N, width))
    X[:, 0] = v0
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        w, U = sla.lobpcg(op, X, largest=False, tol=1e-9, maxiter=max(1, passes // (2 * width)))
    return _rayleigh(K, y, U[:, int(np.argmin(w))], "lobpcg")


def estimate(K: Any, y: np.ndarray, rng: np.random.Generator, *, x0: np.ndarray | None = None,
             clustered: bool = False, passes: int | None = None) -> Estimate:
    """The cheapest good estimate for this size and kind (see :func:`estimate_iterative`).

    ``passes`` caps the products with K of an iterative estimate (default: 2000 on a dense K,
    6000 on a sparse one, whose products are cheap).
    """
    if not isinstance(K, np.ndarray) and y.shape[0] <= SMALL_SPARSE:
        K = np.asarray(K.toarray(), dtype=np.float64)
    if isinstance(K, np.ndarray):
        if y.shape[0] <= EIGH_LIMIT:
            return estimate_dense(K, y)
        return estimate_iterative(K, y, rng, x0=x0, passes=passes or 2000, clustered=clustered)
    return estimate_iterative(K, y, rng, x0=x0, passes=passes or 6000, clustered=clustered)


def scale_of(K: Any, y: np.ndarray) -> float:
    """max_i |yᵢ| + Σⱼ|Kᵢⱼ| ≥ ‖Diag(y) − K‖₂ (Gershgorin), the unit for tolerances."""
    rows = np.asarray(abs(K).sum(axis=1)).ravel()
    return float(np.max(np.abs(y) + rows)) if y.size else 0.0


def estimate_slack(est: Estimate, scale: float, N: int) -> float:
    """How far below θ to try first: LAPACK's error for eigh, twice the residual otherwise."""
    if est.method == "eigh":
        return 64.0 * N * UNIT * scale + 1e-300
    return 2.0 * est.residual + 1e-9 * scale


def certify_min_eig(K: np.ndarray, y: np.ndarray, est: Estimate | None, rng: np.random.Generator,
                    *, first: float | None = None, tries: int = 5,
                    clustered: bool = False) -> tuple[float | None, int]:
    """Lower bound on λ_min(Diag(y) − K) proven by Cholesky; returns (bound or None, attempts).

    ``first`` is a shift to try before any estimate (e.g. a target slack below 0 when
    y comes from a near-optimal SDP factor).  Then μ = θ − slack from ``est``; a
    failure replaces an iterative estimate by a dense eigh one, or widens the slack.
    """
    N = y.shape[0]
    scale = max(scale_of(K, y), 1e-300)
    attempts = 0
    if first is not None:
        attempts += 1
        lower = verified_min_eig(K, y, first)
        if lower is not None:
            return lower, attempts
    if est is None:
        est = estimate(K, y, rng, clustered=clustered)
    delta = estimate_slack(est, scale, N)
    while attempts < tries:
        attempts += 1
        lower = verified_min_eig(K, y, est.theta - delta)
        if lower is not None:
            return lower, attempts
        if est.method != "eigh" and N <= EIGH_LIMIT:  # a dense eigh beyond that costs more than the proof
            est = estimate_dense(K, y)
            delta = estimate_slack(est, scale, N)
        else:
            delta = 8.0 * delta + 1e-12 * scale
    return None, attempts
