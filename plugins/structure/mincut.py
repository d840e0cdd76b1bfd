"""Exact solver for ferromagnetic (submodular) problems by one s–t minimum cut.

Canonical sense: maximise C(σ) = Σ_{i<j} K_ij σ_iσ_j + Σ_i b_iσ_i + k₀ with
every K_ij ≥ 0 (Ising J_ij ≥ 0, QUBO off-diagonal ≤ 0); fields of any sign.
Writing K_ijσ_iσ_j = K_ij − 2K_ij[σ_i ≠ σ_j] and b_iσ_i = |b_i| − 2|b_i|[σ_i ≠ sign b_i],

    C(σ) = Σ K_ij + Σ |b_i| + k₀ − 2·cut(σ),

where cut(σ) is the capacity of an s–t cut in the network s → i (capacity b_i
for b_i > 0), i → t (capacity −b_i for b_i < 0) and i ↔ j (capacity K_ij);
the source side is σ = +1 (Picard & Ratliff, Networks 5, 1975).

Exactness.  scipy's integer max-flow keeps capacities in 32 bits (larger ones
are silently truncated), so capacities are floored at a power-of-two scale 2^p
(exact in floating point) and capped just above an exact upper bound B < 2^30
on the level's max flow, so that every capacity and the flow value stay below
2^31.  The integer flow, checked here for capacity and conservation, divided by
2^p is a feasible flow of the float network, so its value is a rigorous lower
bound on the minimum cut.  Where the exact cut value of the side found is
above it, the gap is closed level by level on the exact residual network at a
finer scale (integer book-keeping; Python integers once 64 bits are not
enough).  Optimality is claimed only when the exact cut value equals the exact
flow value (max-flow = min-cut); otherwise the result carries a rigorous gap.
Capacities above twice the flow bound are lowered to it first: no minimum cut
crosses such an arc, so minimum cuts and their values do not change.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from spinward.core import CanonicalProblem, Solution, SolveContext, SolverUnsuitableError

LIMIT = 2**31 - 1          # scipy's capacity and flow word
TARGET = 2**30             # each level's flow bound stays below this, well inside the word
INT64_SAFE = 2.0**61       # above this scaled magnitude use Python integers
DEFAULT_LEVELS = 12


@dataclass
class Network:
    """Arc pairs u → v (capacity c_uv) and v → u (capacity c_vu); s = n, t = n + 1."""

    n: int
    u: np.ndarray
    v: np.ndarray
    c_uv: np.ndarray
    c_vu: np.ndarray
    constant: float  # Σ K_ij + Σ|b_i| + k₀, so that C = constant − 2·cut


def couplings_upper(problem: CanonicalProblem) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(i, j, K_ij) for the non-zero pairs i < j, in float64."""
    import scipy.sparse as sp

    up = sp.triu(problem.csr_K(), k=1).tocoo()
    keep = up.data != 0
    return up.row[keep].astype(np.int64), up.col[keep].astype(np.int64), up.data[keep].astype(np.float64)


def build_network(problem: CanonicalProblem) -> Network:
    """The s–t network whose cuts price canonical states (see the module docstring)."""
    n = problem.n
    i, j, w = couplings_upper(problem)
    b = np.asarray(problem.b, dtype=np.float64)
    pos, neg = np.flatnonzero(b > 0), np.flatnonzero(b < 0)
    u = np.concatenate([i, np.full(pos.size, n), neg]).astype(np.int64)
    v = np.concatenate([j, pos, np.full(neg.size, n + 1)]).astype(np.int64)
    c_uv = np.concatenate([w, b[pos], -b[neg]])
    c_vu = np.concatenate([w, np.zeros(pos.size + neg.size)])
    constant = math.fsum(w) + math.fsum(np.abs(b)) + float(problem.k0)
    return Network(n, u, v, *clip_capacities(n, u, v, c_uv, c_vu), constant)


def clip_capacities(n: int, u: np.ndarray, v: np.ndarray, c_uv: np.ndarray,
                    c_vu: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Lower every capacity above 2D to 2D, where D = min(Σ source arcs, Σ sink arcs).

    D bounds the max flow, so a cut crossing an arc of capacity ≥ 2D is never
    minimum, before or after: minimum cuts and their values are unchanged, and
    the integer scale is no longer limited by couplings far larger than the fields.
    """
    bound = min(math.fsum(c_uv[u == n]), math.fsum(c_uv[v == n + 1]))
    if bound > 0:
        c_uv, c_vu = np.minimum(c_uv, 2 * bound), np.minimum(c_vu, 2 * bound)
    return c_uv, c_vu


def floor_scaled(c: np.ndarray, p: int, big: bool) -> np.ndarray:
    """⌊c·2^p⌋ exactly: int64, or Python integers (object array) when ``big``."""
    x = np.floor(np.ldexp(c, p))  # a power-of-two scaling and a floor are exact in floating point
    if not np.all(np.isfinite(x)):
        raise OverflowError("scaled capacity overflows float64")
    return np.frompyfunc(int, 1, 1)(x) if big else x.astype(np.int64)


def exact_sum(x: np.ndarray) -> int:
    """Σx as a Python integer, without int64 overflow."""
    if x.size == 0:
        return 0
    if x.dtype != object and float(np.abs(x).max()) * x.size < INT64_SAFE:
        return int(x.sum())
    return int(x.astype(object).sum())


def is_big(net: Network, p: int) -> bool:
    top = max(float(net.c_uv.max(initial=0.0)), float(net.c_vu.max(initial=0.0)))
    return math.ldexp(top, p) >= INT64_SAFE


def capped(net: Network, phi: np.ndarray, p: int, big: bool, cap: int) -> tuple[np.ndarray, np.ndarray]:
    """Residual capacities ⌊2^p c⌋ ∓ Φ, capped at ``cap`` (all exact integers)."""
    r_uv = floor_scaled(net.c_uv, p, big) - phi
    r_vu = floor_scaled(net.c_vu, p, big) + phi
    return (np.minimum(r_uv, cap).astype(np.int64), np.minimum(r_vu, cap).astype(np.int64))


def run_maxflow(net: Network, cap_uv: np.ndarray, cap_vu: np.ndarray) -> np.ndarray:
    """One scipy dinic max-flow; returns the verified net flow on every pair."""
    import scipy.sparse as sp
    from scipy.sparse.csgraph import maximum_flow

    N = net.n + 2
    rows = np.concatenate([net.u, net.v])
    cols = np.concatenate([net.v, net.u])
    data = np.concatenate([cap_uv, cap_vu])
    keep = data > 0
    C = sp.csr_array((data[keep].astype(np.int32), (rows[keep], cols[keep])), shape=(N, N))
    C.sum_duplicates()
    flow = maximum_flow(C, net.n, net.n + 1, method="dinic").flow
    f = np.asarray(flow[net.u, net.v]).astype(np.int64).ravel()
    verify_flow(net, f, cap_uv, cap_vu)
    return f


def verify_flow(net: Network, f: np.ndarray, cap_uv: np.ndarray, cap_vu: np.ndarray) -> None:
    """Check capacity and conservation exactly (the proof must not trust the library)."""
    if np.any(f > cap_uv) or np.any(-f > cap_vu):
        raise ArithmeticError("max-flow returned a flow above an arc capacity")
    N = net.n + 2
    excess = np.bincount(net.v, weights=f, minlength=N) - np.bincount(net.u, weights=f, minlength=N)
    if np.any(excess[: net.n] != 0):  # |values| < 2^53, so float sums are exact
        raise ArithmeticError("max-flow returned a flow that is not conserved")


def source_side(net: Network, res_uv: np.ndarray, res_vu: np.ndarray) -> np.ndarray:
    """Boolean mask over the n + 2 nodes reachable from s along positive residual arcs."""
    import scipy.sparse as sp
    from scipy.sparse.csgraph import breadth_first_order

    N = net.n + 2
    rows = np.concatenate([net.u[res_uv > 0], net.v[res_vu > 0]])
    cols = np.concatenate([net.v[res_uv > 0], net.u[res_vu > 0]])
    G = sp.csr_array((np.ones(rows.size, dtype=np.int8), (rows, cols)), shape=(N, N))
    order = breadth_first_order(G, net.n, directed=True, return_predecessors=False)
    mask = np.zeros(N, dtype=bool)
    mask[order] = True
    if mask[net.n + 1]:
        raise ArithmeticError("max-flow left an augmenting path to the sink; the flow is not maximum")
    return mask


def cut_excess(net: Network, side: np.ndarray, phi: np.ndarray, p: int, big: bool) -> tuple[int, int]:
    """(⌊2^p·cut(side)⌋ − 2^p·flow value, number of cut arcs whose 2^p·c is not an integer).

    Both zero proves that ``side`` is a minimum cut of the float network.
    """
    out_uv = side[net.u] & ~side[net.v]
    out_vu = side[net.v] & ~side[net.u]
    cuts = np.concatenate([net.c_uv[out_uv], net.c_vu[out_vu]])
    scaled = np.ldexp(cuts, p)
    fractional = int(np.count_nonzero(np.floor(scaled) != scaled))
    cut_floor = exact_sum(floor_scaled(cuts, p, big))
    value = exact_sum(phi[net.u == net.n])  # net outflow of s
    if cut_floor < value:  # weak duality: no flow exceeds a cut
        raise ArithmeticError("a flow value exceeds a cut capacity; the flow is not feasible")
    return cut_floor - value, fractional


@dataclass
class CutResult:
    """The source side found, whether it is proved minimum, and a rigorous gap otherwise."""

    side: np.ndarray        # bool over the n spins: True ↔ σ = +1
    proved: bool
    gap: float              # upper bound on C* − C(σ), canonical units (0 when proved)
    levels: list[dict]


def trivial_cut(net: Network) -> CutResult | None:
    """Without source (or sink) arcs every spin goes to the other side; cut 0 is optimal."""
    has_src = bool(np.any(net.u == net.n))
    has_snk = bool(np.any(net.v == net.n + 1))
    if has_src and has_snk:
        return None
    return CutResult(np.full(net.n, has_src or not has_snk), True, 0.0, [])


def first_scale(net: Network) -> int:
    """Largest p with 2^p · (an upper bound on the max flow) ≤ 2^30."""
    bound = min(math.fsum(net.c_uv[net.u == net.n]), math.fsum(net.c_uv[net.v == net.n + 1]))
    return math.floor(math.log2(TARGET) - math.log2(bound))


def flow_bound(net: Network, phi: np.ndarray, p: int, big: bool, side: np.ndarray | None) -> int:
    """An exact upper bound on the level's max flow: an s–t cut of the residual network."""
    r_uv = floor_scaled(net.c_uv, p, big) - phi
    r_vu = floor_scaled(net.c_vu, p, big) + phi
    if side is None:
        return min(exact_sum(r_uv[net.u == net.n]), exact_sum(r_uv[net.v == net.n + 1]))
    out_uv = side[net.u] & ~side[net.v]
    out_vu = side[net.v] & ~side[net.u]
    return exact_sum(r_uv[out_uv]) + exact_sum(r_vu[out_vu])


def better_side(net: Network, phi: np.ndarray, p: int, big: bool, new: np.ndarray,
                old: np.ndarray | None) -> tuple[np.ndarray, int]:
    """The side (new or previous) with the smaller exact gap to the flow, and that gap in units of 2^-p."""
    excess, fractional = cut_excess(net, new, phi, p, big)
    best = (new, excess + fractional)
    if old is not None:
        excess, fractional = cut_excess(net, old, phi, p, big)
        if excess + fractional < best[1]:
            best = (old, excess + fractional)
    return best


def solve_network(net: Network, ctx: SolveContext, max_levels: int) -> CutResult:
    """Minimum cut with an exact optimality proof, refined level by level (module docstring)."""
    done = trivial_cut(net)
    if done is not None:
        return done
    top = max(float(net.c_uv.max(initial=0.0)), float(net.c_vu.max(initial=0.0)))
    p_max = 1020 - math.frexp(top)[1]  # keeps every 2^p·c finite in float64
    p = min(first_scale(net), p_max)
    big = is_big(net, p)
    phi = np.zeros(net.u.size, dtype=object if big else np.int64)
    side, levels, gap_units = None, [], math.inf
    for _ in range(max(int(max_levels), 1)):
        cap = flow_bound(net, phi, p, big, side)
        if cap >= LIMIT:  # cannot happen by the choice of p; never let scipy truncate
            raise OverflowError(f"level capacity bound {cap} exceeds 2^31 - 1")
        # one above the bound: a capped arc can never be saturated, so the new cut crosses exact arcs only
        cap_uv, cap_vu = capped(net, phi, p, big, cap + 1)
        f = run_maxflow(net, cap_uv, cap_vu)
        phi = phi + f
        side, gap_units = better_side(net, phi, p, big, source_side(net, cap_uv - f, cap_vu + f), side)
        levels.append({"scale_bits": p, "flow": int(f[net.u == net.n].sum()), "gap_units": gap_units})
        if gap_units == 0 or ctx.should_stop():
            break
        step = math.floor(math.log2(TARGET) - math.log2(gap_units))
        step = min(step, p_max - p)
        if step <= 0:
            break
        p += step
        if not big and is_big(net, p):
            big, phi = True, phi.astype(object)
        phi = phi * (2**step)
    # the gap is in cut units of 2^-p at the last level run; C changes by twice the cut
    gap = 0.0 if gap_units == 0 else math.ldexp(2.0 * gap_units, -levels[-1]["scale_bits"]) * (1 + 1e-12)
    assert side is not None  # the loop runs at least one level
    return CutResult(side[: net.n].copy(), gap_units == 0, gap, levels)


BLOCK_ENTRIES = 1 << 20  # entries per row block when a dense K is scanned


def negative_couplings(problem: CanonicalProblem, *, stop_early: bool = False) -> tuple[int, int, bool]:
    """(pairs i < j with K_ij < 0, non-zero pairs, whether every entry is finite).

    A dense K is read in row blocks (no n² temporary; a memory-mapped K is read in place).
    With ``stop_early``, the reading stops at the first block holding a negative or
    non-finite entry, and the counts are those of the blocks read (a lower bound).
    """
    if problem.kind == "sparse":
        data = problem.csr_K().data
        return int(np.count_nonzero(data < 0)) // 2, int(np.count_nonzero(data)) // 2, \
            bool(np.all(np.isfinite(data)))
    K, n = problem.K, problem.n
    rows = max(1, BLOCK_ENTRIES // max(n, 1))
    negative = nonzero = 0
    finite = True
    for start in range(0, n, rows):
        block = np.asarray(K[start:start + rows])
        negative += int(np.count_nonzero(block < 0))
        nonzero += int(np.count_nonzero(block))
        finite = finite and bool(np.all(np.isfinite(block)))
        if stop_early and (negative or not finite):
            break
    return negative // 2, nonzero // 2, finite


def check(problem: CanonicalProblem) -> bool | str:
    """True for canonical K_ij ≥ 0 (ferromagnetic / submodular), else the reason."""
    if problem.kind == "operator":
        return "min-cut needs explicit couplings, not a LinearOperator"
    if not np.all(np.isfinite(problem.b)):
        return "the fields hold non-finite values"
    bad, total, finite = negative_couplings(problem, stop_early=True)
    if not finite:
        return "the couplings hold non-finite values"
    if bad:
        whole = problem.kind == "sparse" or problem.n * problem.n <= BLOCK_ENTRIES  # read in one block
        counted = "" if whole else " in the rows read before the check stopped"
        return (f"couplings are not all ferromagnetic: {bad} of {total} are negative{counted} "
                "(min-cut needs Ising J_ij ≥ 0, i.e. QUBO off-diagonal ≤ 0)")
    return True


def solve_ferromagnet(problem: CanonicalProblem, ctx: SolveContext) -> Solution:
    """Solve a problem that passes :func:`check`; exact=True only with a proof (module docstring)."""
    verdict = check(problem)
    if verdict is not True:
        raise SolverUnsuitableError(f"min-cut cannot run: {verdict}; use another method")
    net = build_network(problem)
    result = solve_network(net, ctx, int(ctx.option("max_levels", DEFAULT_LEVELS)))
    sigma = np.where(result.side, 1, -1).astype(np.int8)
    value = problem.value(sigma)
    ctx.offer(sigma, value)
    # C(σ) is evaluated in floating point; widen the bound by a rounding margin
    slack = 1e-12 * (abs(net.constant) + float(np.abs(net.c_uv).sum()) + 1.0)
    info = {"levels": len(result.levels), "scale_bits": [lv["scale_bits"] for lv in result.levels],
            "arcs": int(net.u.size), "gap_bound": result.gap}
    if not result.proved:
        info["tolerance"] = (f"not proved optimal: at most {result.gap:.3g} below the optimum "
                             "(canonical units); raise max_levels or the time limit")
    bound = value + result.gap + slack
    return Solution(sigma=sigma, exact=result.proved, bound=bound, info=info)
