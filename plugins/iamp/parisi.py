"""Zero-temperature Parisi solver for the Sherrington–Kirkpatrick model (ξ(t) = t²/2).

Convention (the SK convention of docs/references.md): J_ij i.i.d. N(0,1), H(σ) = n^{-1/2} Σ_{i<j} J_ij σ_i σ_j,
maximised; the ground-state energy per spin H/n tends to

    P* = inf_γ  Φ_γ(0, 0) − ½ ∫₀¹ t γ(t) dt,
    ∂_tΦ + ½(∂_xxΦ + γ(t)(∂_xΦ)²) = 0,   Φ(1, x) = |x|.

With external fields hᵢ, H(σ) + Σᵢ hᵢσᵢ, whose values follow a law μ (i.i.d., independent of J),
only the starting point of the process changes (the zero-temperature Parisi formula of
docs/references.md covers an external field): P*(μ) = inf_γ E_{H∼μ} Φ_γ(0, H) − ½∫₀¹ tγ(t) dt.  Φ itself
does not depend on μ; μ enters the value (E over the field law) and the forward law of X (X₀ ∼ μ),
so every routine below takes an optional ``start``: the grid weights of X₀ (a point mass at 0
without fields; :func:`field_law` bins a sample of fields onto the grid).  With fields the optimal
γ vanishes on a longer first segment [0, q_min), q_min > 0.

γ is piecewise constant with k non-zero levels: γ = 0 on [0, q₀) (the zero segment that the
zero-temperature problem needs), γ = m_j on [q_{j−1}, q_j) for j = 1..k, with q_k = 1.  On each
level Φ follows from the Hopf–Cole map Φ(s, x) = m⁻¹ log E exp(mΦ(t, x + √(t−s) Z)); the top level
has a closed form (no |x| kink on the grid) and the others are summed directly on an x-grid
(positive terms only, so relative accuracy survives the large exponents; an FFT would not).
Gradients are exact for the levels and use the functional derivative ½(E[(∂_xΦ)²(q, X_q)] − q)
for the breakpoints, with the law of X propagated forward on the same grid.
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import time
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

#: grid spacing and half-width of the x-grid used for the level sums
GRID_H = 0.01
GRID_L = 7.0
#: kernel truncation in standard deviations (the Gaussian weight at 9σ is ~2.6e-18, below double precision)
KERNEL_SIGMAS = 9.0
#: cache format version: bump when the numerics change so stale files are ignored
CACHE_VERSION = 3
#: the Parisi value of the full-RSB (continuous γ) problem, for reports (Crisanti & Rizzo, Phys. Rev. E 65, 046137 (2002); from memory)
PSTAR_REFERENCE = 0.7631667


@dataclass(frozen=True)
class ParisiSolution:
    """A k-level zero-temperature Parisi γ: breakpoints ``q`` (q₀..q_{k−1}) and levels ``m`` (m₁..m_k).

    ``value`` is Φ_γ(0,0) − ½∫tγ for this γ: since P* is the infimum over all γ, every
    value is ≥ P* (up to grid error, below 1e-10 here) and k-RSB approaches P* from above.
    """

    q: np.ndarray
    m: np.ndarray
    value: float
    seconds: float = 0.0
    evaluations: int = 0

    @property
    def k(self) -> int:
        return int(self.m.size)


def x_grid(h: float = GRID_H, half_width: float = GRID_L) -> np.ndarray:
    """Symmetric grid with a node at 0."""
    n_half = int(round(half_width / h))
    return h * np.arange(-n_half, n_half + 1, dtype=np.float64)


def gauss_weights(d: float, h: float) -> np.ndarray:
    """Normalised Gaussian weights of variance ``d`` on offsets kh, |kh| ≤ KERNEL_SIGMAS·√d."""
    half = max(int(math.ceil(KERNEL_SIGMAS * math.sqrt(d) / h)), 1)
    off = h * np.arange(-half, half + 1)
    w = np.exp(-0.5 * off * off / d)
    return w / w.sum()


def _norm_cdf(z: np.ndarray) -> np.ndarray:
    from scipy.special import ndtr

    return ndtr(z)


def _log_norm_cdf(z: np.ndarray) -> np.ndarray:
    from scipy.special import log_ndtr

    return log_ndtr(z)


def top_level(x: np.ndarray, m: float, d: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Closed form of Φ, ∂_xΦ, ∂_xxΦ at time 1 − d when γ = m on [1 − d, 1) and Φ(1, x) = |x|.

    Φ = m⁻¹ log(e^{mx}N(α) + e^{−mx}N(β)) + md/2, α = (x + md)/√d, β = (−x + md)/√d;
    m = 0 gives the heat-equation limit E|x + √d Z|.
    """
    if d <= 0.0:  # time 1 itself (an optimiser may push the last breakpoint to q = 1): Φ(1, x) = |x|
        return np.abs(x), np.sign(x), np.zeros_like(x)
    sd = math.sqrt(d)
    if m < 1e-12:
        a = x / sd
        ncdf = _norm_cdf(a)
        pdf = np.exp(-0.5 * a * a) / math.sqrt(2 * math.pi)
        return x * (2 * ncdf - 1) + 2 * sd * pdf, 2 * ncdf - 1, 2 * pdf / sd
    la = m * x + _log_norm_cdf((x + m * d) / sd)
    lb = -m * x + _log_norm_cdf((-x + m * d) / sd)
    top = np.maximum(la, lb)
    log_s = top + np.log(np.exp(la - top) + np.exp(lb - top))
    phi = log_s / m + 0.5 * m * d
    dphi = np.tanh(0.5 * (la - lb))  # (a − b)/(a + b)
    log_g = -0.5 * x * x / d - 0.5 * m * m * d - 0.5 * math.log(2 * math.pi * d)
    ddphi = m * (1 - dphi * dphi) + 2 * np.exp(log_g - log_s)
    return phi, dphi, ddphi


def _pad_linear(f: np.ndarray, p: int) -> np.ndarray:
    """Extend ``f`` by ``p`` points each side along its end slopes (Φ is asymptotically affine in x)."""
    k = np.arange(1, p + 1)
    left = f[0] - k[::-1] * (f[1] - f[0])
    right = f[-1] + k * (f[-1] - f[-2])
    return np.concatenate([left, f, right])


def log_conv_exp(b: np.ndarray, w: np.ndarray, g: np.ndarray | None = None, block: int = 64) -> np.ndarray:
    """log Σ_j w_{i−j} g_j e^{b_j} ('valid' part), with a local shift per output block.

    A single global shift would underflow where b is small; each block only sees a window of
    width ≈ len(w), across which b varies little, so the shifted sums stay in range.
    """
    p = w.size // 2
    n_out = b.size - 2 * p
    if float(b.max() - b.min()) < 600.0:  # one shift is safe: no term can underflow to zero
        block = n_out
    out = np.empty(n_out)
    with np.errstate(divide="ignore"):
        for s in range(0, n_out, block):
            e = min(s + block, n_out)
            win = b[s:e + 2 * p]
            c = float(win.max())
            terms = np.exp(win - c)
            if g is not None:
                terms *= g[s:e + 2 * p]
            out[s:e] = np.log(np.convolve(terms, w, mode="valid")) + c
    return out


def _levels(q: np.ndarray, m: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per level j = 0..k: γ value, start and length (level 0 is the zero segment [0, q₀))."""
    gam = np.concatenate([[0.0], m])
    starts = np.concatenate([[0.0], q])
    ends = np.concatenate([q, [1.0]])
    return gam, starts, ends - starts


def _hopf_cole(phi_next: np.ndarray, gamma: float, d: float, h: float) -> np.ndarray:
    """Φ at the start of a level from Φ at its end (same grid), by direct Gaussian summation."""
    w = gauss_weights(d, h)
    padded = _pad_linear(phi_next, w.size // 2)
    if gamma == 0.0:
        return np.convolve(padded, w, mode="valid")
    return log_conv_exp(gamma * padded, w) / gamma


def backward(q: np.ndarray, m: np.ndarray, x: np.ndarray) -> list[np.ndarray]:
    """Φ on the grid at the start of every level (index j = time starts[j]); the last is closed form."""
    gam, _, d = _levels(q, m)
    h = float(x[1] - x[0])
    k = m.size
    phis: list[np.ndarray] = [np.empty(0)] * (k + 1)
    phis[k] = top_level(x, float(gam[k]), float(d[k]))[0]
    for j in range(k - 1, -1, -1):
        phis[j] = phis[j + 1] if d[j] <= 0 else _hopf_cole(phis[j + 1], float(gam[j]), float(d[j]), h)
    return phis


def point_mass(x: np.ndarray) -> np.ndarray:
    """Grid weights of X₀ = 0 (no fields)."""
    p = np.zeros_like(x)
    p[x.size // 2] = 1.0
    return p


def field_law(fields: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Grid weights of X₀ for a sample of fields: each value split linearly between its two grid nodes.

    E Φ(0, H) is then the same split of Φ(0, ·), exact for Φ linear between nodes (error ≤ h²/8·max ∂_xxΦ).
    """
    h = float(x[1] - x[0])
    pos = np.clip((np.asarray(fields, dtype=np.float64).ravel() - x[0]) / h, 0.0, x.size - 1 - 1e-9)
    k = pos.astype(np.int64)
    frac = pos - k
    p = np.bincount(k, weights=1.0 - frac, minlength=x.size) + np.bincount(k + 1, weights=frac, minlength=x.size)
    return p[: x.size] / max(float(p.sum()), 1e-300)


def forward(q: np.ndarray, m: np.ndarray, x: np.ndarray, phis: list[np.ndarray],
            start: np.ndarray | None = None) -> list[np.ndarray]:
    """Grid weights of X at the start of every level, X₀ ∼ ``start`` (default 0), under the tilted (Doob) transitions."""
    gam, _, d = _levels(q, m)
    h = float(x[1] - x[0])
    p = point_mass(x) if start is None else start
    out = [p]
    for j in range(m.size):
        if d[j] > 0:
            w = gauss_weights(float(d[j]), h)
            half = w.size // 2
            padded_p = np.concatenate([np.zeros(half), p, np.zeros(half)])
            if gam[j] == 0.0:
                p = np.convolve(padded_p, w, mode="valid")
            else:
                b = -gam[j] * _pad_linear(phis[j], half)
                with np.errstate(divide="ignore"):
                    p = np.exp(gam[j] * phis[j + 1] + log_conv_exp(b, w, padded_p))
        out.append(p)
    return out


def evaluate(q: np.ndarray, m: np.ndarray, x: np.ndarray, grad: bool = False, start: np.ndarray | None = None
             ) -> tuple[float, np.ndarray | None, np.ndarray | None]:
    """P(γ) = E Φ(0, X₀) − ½∫tγ (X₀ ∼ ``start``, default 0) and, if asked, its gradient in ``q`` and ``m``."""
    q = np.asarray(q, dtype=np.float64)
    m = np.asarray(m, dtype=np.float64)
    gam, starts, d = _levels(q, m)
    ends = starts + d
    phis = backward(q, m, x)
    penalty = 0.25 * float(np.sum(gam * (ends**2 - starts**2)))
    head = float(phis[0][x.size // 2]) if start is None else float(start @ phis[0])
    value = head - penalty
    if not grad:
        return value, None, None
    ps = forward(q, m, x, phis, start)
    k = m.size
    gm = np.empty(k)
    for j in range(1, k):
        gm[j - 1] = (ps[j + 1] @ phis[j + 1] - ps[j] @ phis[j]) / max(gam[j], 1e-300)
    gm[k - 1] = ps[k] @ _top_dm(x, float(gam[k]), float(d[k]))
    gm -= 0.25 * (ends[1:] ** 2 - starts[1:] ** 2)
    gq = np.empty(k)
    for j in range(k):
        if j + 1 == k:
            u = top_level(x, float(gam[k]), float(d[k]))[1]
        else:
            u = np.gradient(phis[j + 1], x)
        gq[j] = 0.5 * (gam[j] - gam[j + 1]) * (ps[j + 1] @ (u * u) - q[j])
    return value, gq, gm


def _top_dm(x: np.ndarray, m: float, d: float) -> np.ndarray:
    """∂Φ/∂m of the closed-form top level (central difference; the closed form is smooth in m)."""
    eps = 1e-5 * max(m, 1e-3)
    return (top_level(x, m + eps, d)[0] - top_level(x, m - eps, d)[0]) / (2 * eps)


# ---------------------------------------------------------------- optimisation

#: levels near the top follow γ(t) ≈ 0.64/√(1−t); used to scale the level variables
GAMMA_PROFILE = 0.64
#: largest k for which breakpoints are optimised too (above it only the levels are)
JOINT_MAX_K = 10
#: lower bound on a level (the level gradient divides by it)
MIN_LEVEL = 1e-6


def profile_breakpoints(k: int, q0: float) -> np.ndarray:
    """k breakpoints q₀ < … < q_{k−1}, uniform in √(1−t) from q₀ up: they crowd near 1 like γ's growth."""
    s = np.linspace(math.sqrt(1.0 - q0), 0.0, k + 1)[:-1]
    return 1.0 - s * s


def _level_scale(q: np.ndarray) -> np.ndarray:
    ends = np.concatenate([q[1:], [1.0]])
    return GAMMA_PROFILE / np.sqrt(1.0 - 0.5 * (q + ends))


def optimise_levels(q: np.ndarray, x: np.ndarray, m0: np.ndarray | None = None,
                    max_evals: int = 2000, start: np.ndarray | None = None) -> tuple[np.ndarray, float, int]:
    """Minimise over the levels with the breakpoints fixed: a convex problem (P is convex in γ)."""
    from scipy.optimize import minimize

    scale = _level_scale(q)

    def objective(y: np.ndarray) -> tuple[float, np.ndarray]:
        value, _, gm = evaluate(q, y * scale, x, grad=True, start=start)
        return value, gm * scale

    y0 = np.ones(q.size) if m0 is None else m0 / scale
    res = minimize(objective, y0, jac=True, method="L-BFGS-B", bounds=[(MIN_LEVEL, None)] * q.size,
                   options={"ftol": 1e-14, "gtol": 1e-10, "maxfun": max_evals})
    return res.x * scale, float(res.fun), int(res.nfev)


def _unpack(z: np.ndarray, k: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    a = z[: k + 1]
    e = np.exp(a - a.max())
    e /= e.sum()
    return np.cumsum(e)[:k], np.exp(z[k + 1:]), e


def optimise_joint(q: np.ndarray, m: np.ndarray, x: np.ndarray, max_evals: int,
                   start: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray, float, int]:
    """Minimise over breakpoints and levels together (log-lengths and log-levels, so scale-free)."""
    from scipy.optimize import minimize

    k = m.size

    def objective(z: np.ndarray) -> tuple[float, np.ndarray]:
        qq, mm, e = _unpack(z, k)
        value, gq, gm = evaluate(qq, mm, x, grad=True, start=start)
        assert gq is not None and gm is not None  # grad=True returns both gradients
        tail = np.concatenate([np.cumsum(gq[::-1])[::-1], [0.0]])  # ∂P/∂(length i) through all later q
        return value, np.concatenate([e * tail - e * float(gq @ qq), gm * mm])

    z0 = np.concatenate([np.log(np.diff(np.concatenate([[0.0], q, [1.0]]))), np.log(np.maximum(m, MIN_LEVEL))])
    res = minimize(objective, z0, jac=True, method="L-BFGS-B",
                   options={"ftol": 1e-16, "gtol": 1e-12, "maxfun": max_evals})
    qq, mm, _ = _unpack(res.x, k)
    return qq, mm, float(res.fun), int(res.nfev)


def solve_k(k: int, *, joint: bool = True, max_evals: int = 150, x: np.ndarray | None = None,
            start: np.ndarray | None = None, q0: float | None = None) -> ParisiSolution:
    """The k-level (k-RSB) zero-temperature Parisi solution; k = 0 is the replica-symmetric √(2/π).

    Breakpoints start from :func:`profile_breakpoints` (q₀ guessed as 0.48/√k from the
    1-step solution, or ``q0`` when given), levels are optimised with them fixed (convex), then,
    if ``joint`` and k ≤ JOINT_MAX_K, both are refined together.  Beyond that the joint refinement
    costs seconds for a gain below 1e-7, because the profile breakpoints are already near optimal.
    ``start`` is the grid law of X₀ (fields; default a point mass at 0).
    """
    t0 = time.perf_counter()
    x = x_grid() if x is None else x
    if k == 0:
        value = evaluate(np.empty(0), np.empty(0), x, start=start)[0]
        return ParisiSolution(np.empty(0), np.empty(0), value, time.perf_counter() - t0, 1)
    if q0 is None:
        q0 = 0.48 / math.sqrt(k) if k <= JOINT_MAX_K else 0.48 / k
    q = profile_breakpoints(k, q0)
    m, value, evals = optimise_levels(q, x, start=start)
    if joint and k <= JOINT_MAX_K:
        q2, m2, v2, e2 = optimise_joint(q, m, x, max_evals, start=start)
        evals += e2
        if v2 < value and np.all(np.diff(q2) > 0):
            q, m, value = q2, m2, v2
    return ParisiSolution(q, m, value, time.perf_counter() - t0, evals)


def full_rsb(k: int = 25, coarse: ParisiSolution | None = None, fine: ParisiSolution | None = None,
             x: np.ndarray | None = None) -> float:
    """Continuous-γ value: k and 2k profile solutions, then a Richardson step in 1/k².

    The profile values decrease to P* from above faster than 1/k² (measured: 20→40→80 levels
    move by 6.5e-7 then 3e-8), so one 1/k² step lands within ~1e-7; ``fine`` may pass the
    2k-level solution when it is already at hand (the table's k = 50 row), ``coarse`` the k-level one.
    """
    coarse = solve_k(k, joint=False, x=x) if coarse is None else coarse
    fine = solve_k(2 * k, joint=False, x=x) if fine is None else fine
    return (4.0 * fine.value - coarse.value) / 3.0


# ---------------------------------------------------------------- tables for IAMP


@dataclass(frozen=True)
class ParisiTables:
    """∂_xΦ and ∂_xxΦ on the grid ``x`` at the step times t_ℓ (ℓ = 0..L−1), and γ(t_ℓ).

    Rows are times; these drive IAMP: drift γ(t)∂_xΦ(t, x), control ∂_xxΦ(t, x).
    """

    t: np.ndarray
    x: np.ndarray
    gamma: np.ndarray
    d1: np.ndarray
    d2: np.ndarray
    value: float


def _phi_at(t: float, sol: ParisiSolution, phis: list[np.ndarray], x: np.ndarray) -> tuple[np.ndarray, np.ndarray, float]:
    """(∂_xΦ, ∂_xxΦ, γ) at time t, from Φ at the end of t's level by one Hopf–Cole step."""
    gam, starts, d = _levels(sol.q, sol.m)
    j = int(np.searchsorted(starts, t, side="right") - 1)
    while j < sol.k and d[j] <= 0:
        j += 1
    if j == sol.k:
        _, d1, d2 = top_level(x, float(gam[j]), 1.0 - t)
        return d1, d2, float(gam[j])
    left = float(starts[j] + d[j] - t)
    h = float(x[1] - x[0])
    phi = phis[j + 1] if left <= 0 else _hopf_cole(phis[j + 1], float(gam[j]), left, h)
    d1 = np.gradient(phi, h)
    return d1, np.gradient(d1, h), float(gam[j])


def time_grid(steps: int, power: float = 2.0) -> np.ndarray:
    """t_ℓ = 1 − (1 − ℓ/L)^power for ℓ = 0..L (t_L = 1).

    power = 2 makes the steps shrink like √(1−t): E[∂_xxΦ(t, X_t)] grows like (1−t)^{-1/2},
    and on this grid its left-point sum is exact to first order, where a uniform grid
    loses a term of order √δ (measured: the main loss of uniform-step IAMP).
    """
    return 1.0 - (1.0 - np.arange(steps + 1) / steps) ** power


def build_tables(sol: ParisiSolution, times: np.ndarray, x: np.ndarray | None = None) -> ParisiTables:
    """Tables at the given times (all < 1); |∂_xΦ| ≤ 1 and ∂_xxΦ ≥ 0 are enforced against rounding."""
    x = x_grid() if x is None else x
    phis = backward(sol.q, sol.m, x)
    d1 = np.empty((times.size, x.size))
    d2 = np.empty((times.size, x.size))
    gamma = np.empty(times.size)
    for i, ti in enumerate(times):
        d1[i], d2[i], gamma[i] = _phi_at(float(ti), sol, phis, x)
    return ParisiTables(times, x, gamma, np.clip(d1, -1.0, 1.0), np.maximum(d2, 0.0), sol.value)


# ---------------------------------------------------------------- on-disk cache

CACHE_ENV = "SPINWARD_CACHE_DIR"


def cache_dir() -> Path:
    """$SPINWARD_CACHE_DIR, else $XDG_CACHE_HOME/spinward, else ~/.cache/spinward."""
    explicit = os.environ.get(CACHE_ENV)
    if explicit:
        return Path(explicit)
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "spinward"


def cache_key(**params: Any) -> str:
    """A short hash of the parameters and the numerics version (stale files are never read)."""
    payload = json.dumps({"version": CACHE_VERSION, "h": GRID_H, "L": GRID_L, **params}, sort_keys=True)
    return hashlib.sha256(payload.encode()).hexdigest()[:20]


def _save(path: Path, arrays: dict[str, np.ndarray]) -> None:
    """Write atomically (temporary file, then rename); an unwritable cache is skipped silently."""
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        tmp = path.with_name(f"{path.stem}.{os.getpid()}.tmp.npz")
        np.savez(tmp, **arrays)  # type: ignore[arg-type]  # numpy's stub types keyword arrays as allow_pickle
        os.replace(tmp, path)
    except OSError:
        pass


def _load(path: Path) -> dict[str, np.ndarray] | None:
    try:
        with np.load(path, allow_pickle=False) as data:
            return {k: data[k] for k in data.files}
    except (OSError, ValueError, KeyError):
        return None


def load_tables(k: int = 50, steps: int = 200, power: float = 1.0) -> tuple[ParisiTables, bool]:
    """IAMP tables for the k-level solution at ``steps`` times; (tables, loaded_from_cache)."""
    path = cache_dir() / f"iamp-{cache_key(kind='tables', k=k, steps=steps, power=power)}.npz"
    data = _load(path)
    if data is not None:
        return ParisiTables(data["t"], data["x"], data["gamma"], data["d1"], data["d2"], float(data["value"])), True
    sol = cached_solve(k)[0]
    tab = build_tables(sol, time_grid(steps, power)[:-1])
    _save(path, {"t": tab.t, "x": tab.x, "gamma": tab.gamma, "d1": tab.d1, "d2": tab.d2,
                 "value": np.array(tab.value), "q": sol.q, "m": sol.m})
    return tab, False


def cached_solve(k: int) -> tuple[ParisiSolution, bool]:
    """:func:`solve_k` through the cache; (solution, loaded_from_cache)."""
    path = cache_dir() / f"parisi-{cache_key(kind='levels', k=k, joint=JOINT_MAX_K)}.npz"
    data = _load(path)
    if data is not None:
        return ParisiSolution(data["q"], data["m"], float(data["value"]), float(data["seconds"]),
                              int(data["evaluations"])), True
    sol = solve_k(k)
    _save(path, {"q": sol.q, "m": sol.m, "value": np.array(sol.value), "seconds": np.array(sol.seconds),
                 "evaluations": np.array(sol.evaluations)})
    return sol, False


# ---------------------------------------------------------------- the table for `spinward parisi`

#: published values for the table's last column (sources in docs/references.md)
_REFERENCE = {0: (math.sqrt(2 / math.pi), "√(2/π), exact"), 1: (0.7652, "≈ 0.7652, from memory")}


def parisi_table(ks: Sequence[int] = (0, 1, 2, 3, 5, 10, 20, 50), *, full_k: int = 25,
                 use_cache: bool = True) -> list[dict]:
    """One row per k (k-RSB value, breakpoint q₀, top level, evaluations, seconds) and a "full" row.

    The full row extrapolates the ``full_k`` and 2·``full_k`` level solutions (see :func:`full_rsb`).

    Sense: the values are the SK ground-state energy per spin P_k (maximisation convention of
    docs/references.md); P_k decreases to P* as k grows.
    """
    rows: list[dict] = []
    for k in ks:
        start = time.perf_counter()
        sol, cached = cached_solve(int(k)) if use_cache else (solve_k(int(k)), False)
        ref = _REFERENCE.get(int(k))
        rows.append({"k": int(k), "value": sol.value, "q0": float(sol.q[0]) if sol.k else None,
                     "top_level": float(sol.m[-1]) if sol.k else None, "evaluations": sol.evaluations,
                     "seconds": time.perf_counter() - start, "cached": cached,
                     "reference": ref[0] if ref else None, "reference_note": ref[1] if ref else ""})
    start = time.perf_counter()
    if use_cache:
        value = full_rsb(full_k, coarse=cached_solve(full_k)[0], fine=cached_solve(2 * full_k)[0])
    else:
        value = full_rsb(full_k)
    rows.append({"k": "full", "value": value, "q0": None, "top_level": None, "evaluations": None,
                 "seconds": time.perf_counter() - start, "cached": False, "reference": PSTAR_REFERENCE,
                 "reference_note": "Crisanti & Rizzo 2002, from memory"})
    return rows


def format_parisi_table(rows: list[dict]) -> str:
    """A plain-text table of :func:`parisi_table` rows."""
    head = f"{'k':>5}  {'P_k':>13}  {'q0':>7}  {'top γ':>8}  {'evals':>6}  {'seconds':>8}  reference"
    lines = [head, "-" * len(head)]
    for r in rows:
        q0 = f"{r['q0']:.4f}" if r["q0"] is not None else "-"
        top = f"{r['top_level']:.2f}" if r["top_level"] is not None else "-"
        ev = str(r["evaluations"]) if r["evaluations"] is not None else "-"
        sec = f"{r['seconds']:.2f}" + (" (cache)" if r["cached"] else "")
        ref = f"{r['reference']:.7f} {r['reference_note']}" if r["reference"] is not None else ""
        lines.append(f"{r['k']!s:>5}  {r['value']:13.10f}  {q0:>7}  {top:>8}  {ev:>6}  {sec:>8}  {ref}")
    return "\n".join(lines)
