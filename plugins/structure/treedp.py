"""Exact dynamic programming over a tree decomposition of the coupling graph.

Canonical sense: maximise C(σ) = Σ_{i<j} K_ij σ_iσ_j + Σ_i b_iσ_i + k₀; fields of
any sign.

Decomposition: an elimination order, the narrowest of three candidates found
within a time budget, each abandoned as soon as a bag exceeds the width limit:
the two Cuthill–McKee bandwidth orders (width k or k+1 on a k×L grid or
ladder) and greedy min-degree (the heuristic of networkx's
``treewidth_min_degree``, rewritten here so that it can stop early; on long
grids it finds about 2k, e.g. 28 on a 16×125 grid).  Spin v's bag is v with
its neighbours N(v) at elimination time; the width is max |N(v)|.

DP: the bags, in elimination order, form a rooted decomposition in which
eliminating v is the forget step of v, and each message enters its parent's
bag by broadcasting over the spins it lacks (the introduce steps).
Eliminating v replaces the tables that contain v by

    g(σ_N) = max_{σ_v} [ Σ tables + σ_v (b_v + Σ_{u∈N} K_vu σ_u) ],

a table over the 2^|N| states of N(v), computed in one vectorised pass; the
arg-max is kept (packed bits) to read the optimum back.  The recursion is
exact; its sums are rounded in float64 only (error ~ n·ε·Σ|weights|, reported
as ``float_tolerance``).
"""

from __future__ import annotations

import heapq
import math
import time
from dataclasses import dataclass
from typing import Any

import numpy as np

from spinward.core import CanonicalProblem, Solution, SolveContext, SolverUnsuitableError
from spinward.core.profile import profile_of

from ..common.flips import local_search, random_spins
from . import mincut

DEFAULT_WIDTH = 20
DEFAULT_ORDER_TIME = 2.0      # seconds' worth of work for the elimination heuristics (without a time limit)
DEFAULT_MEMORY_MB = 1024      # arg-max tables kept for the read-back
WORK_PER_SECOND = 3e6         # fill-in work units (Σ (|N|² + 1) per elimination) per second, measured here
ORDER_SHARE = 0.2             # with a time limit: at most this share of the step goes to the order search
MIN_DEGREE_MAX_N = 5000       # above this, only the (fast) bandwidth orders are tried
BANDWIDTH_FACTOR = 4          # above that size, a bandwidth beyond this many times the width limit declines
BANDWIDTH_MAX_N = 200_000     # above this even the bandwidth check (reverse Cuthill–McKee) costs too much


@dataclass
class Budget:
    """How long an order search may go on: a count of work units, and with a time limit a deadline.

    Work, not seconds, without a time limit: the same problem then gets the same answer.
    """

    work: float
    deadline: float | None = None

    def spent(self, done: float) -> bool:
        return done > self.work or (self.deadline is not None and time.perf_counter() > self.deadline)


@dataclass
class Elimination:
    """An elimination order and each spin's bag (its later neighbours) at elimination."""

    order: list[int]
    scopes: list[list[int]]
    width: int = 0
    seconds: float = 0.0
    cost: int = 0                       # Σ 2^(|N|+1): table entries touched
    memory: int = 0                     # bytes of packed arg-max tables
    work: int = 0                       # Σ (|N|² + 1): fill-in work of the search


def adjacency(n: int, i: np.ndarray, j: np.ndarray) -> list[set[int]]:
    """Neighbour sets, built from a CSR pattern (one slice per spin, no loop over edges)."""
    import scipy.sparse as sp

    ones = np.ones(2 * i.size, dtype=np.int8)
    A = sp.csr_array((ones, (np.concatenate([i, j]), np.concatenate([j, i]))), shape=(n, n))
    ptr, idx = A.indptr, A.indices.tolist()
    return [set(idx[ptr[v]:ptr[v + 1]]) for v in range(n)]


def rcm_order(n: int, i: np.ndarray, j: np.ndarray) -> np.ndarray:
    """The reverse Cuthill–McKee order of the coupling graph (scipy)."""
    import scipy.sparse as sp
    from scipy.sparse.csgraph import reverse_cuthill_mckee

    ones = np.ones(2 * i.size, dtype=np.int8)
    A = sp.csr_array((ones, (np.concatenate([i, j]), np.concatenate([j, i]))), shape=(n, n))
    return reverse_cuthill_mckee(A, symmetric_mode=True).astype(np.int64)


def bandwidth(order: np.ndarray, i: np.ndarray, j: np.ndarray) -> int:
    """max |pos(u) − pos(v)| over the couplings: an upper bound on the width of eliminating in ``order``."""
    if not i.size:
        return 0
    pos = np.empty(order.size, dtype=np.int64)
    pos[order] = np.arange(order.size)
    return int(np.max(np.abs(pos[i] - pos[j])))


def eliminate_spin(adj: list[set[int]], v: int, elim: Elimination) -> None:
    """Remove v, make its neighbours a clique (fill-in) and record its bag."""
    nb = adj[v]
    for u in nb:
        au = adj[u]
        au.discard(v)
        au |= nb
        au.discard(u)
    d = len(nb)
    elim.order.append(v)
    elim.scopes.append(list(nb))
    elim.width, elim.cost, elim.memory = max(elim.width, d), elim.cost + 2 ** (d + 1), elim.memory + 2**d // 8 + 1
    elim.work += d * d + 1
    adj[v] = set()


def too_wide(d: int, limit: int, done: int, n: int, name: str) -> str:
    return f"the {name} order reached a bag of width {d} > {limit} after eliminating {done} of {n} spins"


def too_slow(budget: Budget, done: int, n: int, name: str) -> str:
    return (f"the {name} order used up its search budget ({budget.work / WORK_PER_SECOND:.3g} s of work"
            + (" or the time limit" if budget.deadline is not None else "") + f") after {done} of {n} spins")


def min_degree_order(adj: list[set[int]], limit: int, budget: Budget) -> Elimination | str:
    """Greedy min-degree elimination; a reason string once a bag exceeds ``limit`` or the budget is spent."""
    start, n = time.perf_counter(), len(adj)
    heap = [(len(a), v) for v, a in enumerate(adj)]
    heapq.heapify(heap)
    gone = bytearray(n)
    elim = Elimination([], [])
    while heap:
        d, v = heapq.heappop(heap)
        if gone[v] or d != len(adj[v]):
            continue  # a stale heap entry
        if d > limit:
            return too_wide(d, limit, len(elim.order), n, "min-degree")
        for u in adj[v]:
            heapq.heappush(heap, (len(adj[u] | adj[v]) - 2, u))
        eliminate_spin(adj, v, elim)
        gone[v] = 1
        if len(elim.order) % 256 == 0 and budget.spent(elim.work):
            return too_slow(budget, len(elim.order), n, "min-degree")
    elim.seconds = time.perf_counter() - start
    return elim


def fixed_order(adj: list[set[int]], order: np.ndarray, limit: int, budget: Budget, name: str) -> Elimination | str:
    """Eliminate in a given order (a bandwidth order suits grids and ladders), stopping early."""
    start, n = time.perf_counter(), len(adj)
    elim = Elimination([], [])
    for v in order.tolist():
        if len(adj[v]) > limit:
            return too_wide(len(adj[v]), limit, len(elim.order), n, name)
        eliminate_spin(adj, v, elim)
        if len(elim.order) % 256 == 0 and budget.spent(elim.work):
            return too_slow(budget, len(elim.order), n, name)
    elim.seconds = time.perf_counter() - start
    return elim


def candidates(n: int, i: np.ndarray, j: np.ndarray, limit: int, budget: Budget) -> list[Elimination | str]:
    """Both Cuthill–McKee orders (fast to finish or to fail), then min-degree (up to
    ``MIN_DEGREE_MAX_N`` spins), within one budget shared by all.

    Each later candidate only has to beat the narrowest order found so far.
    """
    orders: list[tuple[str, np.ndarray | None]] = [("min-degree", None)] if n <= MIN_DEGREE_MAX_N else []
    if i.size:  # without couplings every order has width 0
        rcm = rcm_order(n, i, j)
        orders = [("reverse Cuthill-McKee", rcm), ("Cuthill-McKee", rcm[::-1]), *orders]
    found: list[Elimination | str] = []
    for name, order in orders:
        best = min((f.width for f in found if isinstance(f, Elimination)), default=limit + 1)
        cap = min(limit, best - 1)
        spent = sum(f.work for f in found if isinstance(f, Elimination))
        if cap < 0 or budget.spent(spent):
            break
        left = Budget(budget.work - spent, budget.deadline)
        adj = adjacency(n, i, j)
        found.append(min_degree_order(adj, cap, left) if order is None else fixed_order(adj, order, cap, left, name))
    if not orders:
        found.append(f"{n} spins: the min-degree search runs only up to {MIN_DEGREE_MAX_N}")
    return found


def sort_scopes(elim: Elimination) -> None:
    """Order every bag by descending elimination rank.

    Each message's axes then already run in its parent's order (no transpose), and
    the spins it lacks, introduced later, are the leading axes, so broadcasting
    keeps long contiguous inner loops.
    """
    rank = {v: k for k, v in enumerate(elim.order)}
    elim.scopes = [sorted(S, key=rank.__getitem__, reverse=True) for S in elim.scopes]


def decompose(problem: CanonicalProblem, limit: int, budget: Budget) -> Elimination | str:
    """The narrowest elimination found for ``problem``, or why there is none.

    A success is cached per width limit (a later call with another budget reuses it);
    a failure is cached per limit and work budget when no deadline cut it.
    """
    done, failed = ("_treedp_elimination", limit), ("_treedp_failure", limit, budget.work)
    for key in (done, failed):
        if key in problem.meta:
            return problem.meta[key]
    found = search(problem, limit, budget)
    if isinstance(found, Elimination) or budget.deadline is None:
        problem.meta[done if isinstance(found, Elimination) else failed] = found
    return found


def search(problem: CanonicalProblem, limit: int, budget: Budget) -> Elimination | str:
    n, m = problem.n, problem.n_couplings()
    if m > limit * n:  # a graph of treewidth ≤ w has fewer than w·n edges
        return f"{m} couplings on {n} spins is more than a graph of treewidth ≤ {limit} can have"
    start = time.perf_counter()
    i, j, _ = mincut.couplings_upper(problem)
    tried = candidates(n, i, j, limit, budget)
    good = [f for f in tried if isinstance(f, Elimination)]
    if not good:
        return "; ".join(str(f) for f in tried) or "no budget was left to search for an order"
    found = min(good, key=lambda e: (e.width, e.cost))
    found.seconds = time.perf_counter() - start  # the whole search, all candidates
    sort_scopes(found)
    return found


def check(problem: CanonicalProblem) -> bool | str:
    """True unless a cheap fact rules out width ≤ 20 (the order search itself runs in :func:`solve_low_width`)."""
    if problem.kind == "operator":
        return "tree DP needs explicit couplings, not a LinearOperator"
    prof = profile_of(problem)
    if prof.degeneracy is not None and prof.degeneracy > DEFAULT_WIDTH:
        return f"treewidth is at least {prof.degeneracy} (from the degree sequence), above the limit of {DEFAULT_WIDTH}"
    if prof.dense and prof.n > 2 * DEFAULT_WIDTH:
        return f"dense couplings ({100 * prof.density:.3g}% of pairs): treewidth far above {DEFAULT_WIDTH}"
    if prof.couplings > DEFAULT_WIDTH * prof.n:
        return f"{prof.couplings} couplings on {prof.n} spins: more than a graph of treewidth ≤ {DEFAULT_WIDTH} has"
    if prof.treewidth is not None and prof.treewidth > DEFAULT_WIDTH and prof.n <= 64:
        return f"its elimination orders are wider than {DEFAULT_WIDTH} (min-degree found {prof.treewidth})"
    if prof.n > BANDWIDTH_MAX_N:
        return f"n = {prof.n}: above {BANDWIDTH_MAX_N} spins no elimination order is searched for"
    if prof.n > MIN_DEGREE_MAX_N:  # only the bandwidth orders will be tried: decline when they are far too wide
        width = _rcm_bandwidth(problem)
        if width > BANDWIDTH_FACTOR * DEFAULT_WIDTH:
            return (f"n = {prof.n} is above {MIN_DEGREE_MAX_N}, where only bandwidth orders are tried, and the "
                    f"reverse Cuthill–McKee bandwidth is {width}")
    return True


def _rcm_bandwidth(problem: CanonicalProblem) -> int:
    cached = problem.meta.get("_treedp_bandwidth")
    if cached is None:
        i, j, _ = mincut.couplings_upper(problem)
        cached = bandwidth(rcm_order(problem.n, i, j), i, j)
        problem.meta["_treedp_bandwidth"] = cached
    return cached


def into_axes(axes: dict[int, int], ndim: int, scope: list[int], table: np.ndarray) -> np.ndarray:
    """View ``table`` (axes in ``scope`` order) broadcastable onto a bag with the given axis map."""
    pos = [axes[x] for x in scope]
    order = np.argsort(pos)
    view = table if np.all(order[1:] > order[:-1]) else table.transpose(order)  # sorted scopes need no transpose
    shape = [1] * ndim
    for p in pos:
        shape[p] = 2
    return view.reshape(shape)


def linear_table(coef: np.ndarray) -> np.ndarray:
    """Σ_k coef_k σ_k over all 2^d states, flat; the first spin is the most significant bit, 0 ↔ σ = −1."""
    table = np.zeros(1)
    for c in reversed(coef.tolist()):  # each new spin becomes the leading axis
        table = np.concatenate([table - c, table + c])
    return table


def bag_couplings(K: Any, v: int, S: list[int], where: np.ndarray) -> np.ndarray:
    """K_vu for u in the bag S (0 for fill-in pairs); ``where`` is a scratch array of −1s."""
    where[S] = np.arange(len(S))
    cols, vals = K.indices[K.indptr[v]:K.indptr[v + 1]], K.data[K.indptr[v]:K.indptr[v + 1]]
    hit = where[cols] >= 0  # couplings to spins eliminated later; earlier ones were counted there
    coef = np.zeros(len(S))
    coef[where[cols[hit]]] = vals[hit]
    where[S] = -1
    return coef


@dataclass
class Sweep:
    """What the forward pass leaves: packed arg-max tables and the optimum value."""

    decisions: list[np.ndarray]
    value: float


def forward(problem: CanonicalProblem, elim: Elimination, ctx: SolveContext) -> Sweep | None:
    """Eliminate the spins in order (module docstring); None if the clock stopped it."""
    n = problem.n
    K = problem.csr_K()
    K.sum_duplicates()
    b = np.asarray(problem.b, dtype=np.float64)
    rank = np.empty(n, dtype=np.int64)
    rank[np.asarray(elim.order, dtype=np.int64)] = np.arange(n)
    where = np.full(n, -1, dtype=np.int64)
    buckets: list[list[tuple[list[int], np.ndarray]]] = [[] for _ in range(n)]
    sweep = Sweep([], float(problem.k0))
    for step, (v, S) in enumerate(zip(elim.order, elim.scopes)):
        if step % 32 == 0 and ctx.should_stop():
            return None
        d = len(S)
        axes = {**{u: k for k, u in enumerate(S)}, v: d}  # v is the last (lowest-rank) axis
        T = np.zeros((1,) * (d + 1))
        for scope, table in buckets[v]:
            T = T + into_axes(axes, d + 1, scope, table)  # grows to the union of the scopes by broadcasting
        T = np.broadcast_to(T, (2,) * (d + 1))
        buckets[v] = []
        coef = bag_couplings(K, v, S, where)
        lin = (b[v] + linear_table(coef)).reshape((2,) * d)
        down, up = T[..., 0] - lin, T[..., 1] + lin
        sweep.decisions.append(np.packbits((up > down).ravel()))
        best = np.maximum(down, up)
        if d == 0:
            sweep.value += float(best)
        else:
            buckets[S[int(np.argmin(rank[S]))]].append((S, best))
    return sweep


def read_back(n: int, elim: Elimination, sweep: Sweep) -> np.ndarray:
    """The optimal spins, in reverse elimination order (each bag's later spins are already set)."""
    sigma = np.zeros(n, dtype=np.int8)
    for v, S, dec in zip(reversed(elim.order), reversed(elim.scopes), reversed(sweep.decisions)):
        idx = 0
        for u in S:
            idx = (idx << 1) | int(sigma[u] > 0)
        sigma[v] = 1 if (int(dec[idx >> 3]) >> (7 - (idx & 7))) & 1 else -1
    return sigma


def fallback(problem: CanonicalProblem, ctx: SolveContext, info: dict[str, Any]) -> Solution:
    """Out of time: a clean-up of a random state, flagged as no proof."""
    sigma, value = local_search(problem, random_spins(problem.n, ctx.rng))
    ctx.offer(sigma, value)
    return Solution(sigma=sigma, exact=False, info=info)


def solve_low_width(problem: CanonicalProblem, ctx: SolveContext) -> Solution:
    """Exact optimum by DP when the width is at most ``max_width`` (module docstring)."""
    limit = int(ctx.option("max_width", DEFAULT_WIDTH))
    seconds = float(ctx.option("order_time", DEFAULT_ORDER_TIME))
    deadline = None
    if ctx.time_limit is not None:  # the time limit also bounds the search for an order
        seconds = min(seconds, ORDER_SHARE * max(ctx.remaining(), 0.0))
        deadline = time.perf_counter() + seconds
    found = decompose(problem, limit, Budget(seconds * WORK_PER_SECOND, deadline))
    if isinstance(found, str) and ctx.should_stop():
        return fallback(problem, ctx, {"stopped": f"time limit while searching for an order: {found}"})
    if isinstance(found, str):
        raise SolverUnsuitableError(f"tree DP cannot run: {found}; raise max_width or order_time, "
                                    "or use another method")
    if found.memory > int(ctx.option("max_memory_mb", DEFAULT_MEMORY_MB)) * 2**20:
        raise SolverUnsuitableError(f"tree DP would keep {found.memory / 2**20:.0f} MB of tables; "
                                    "raise max_memory_mb")
    info = {"width": found.width, "order_seconds": found.seconds, "table_entries": found.cost}
    sweep = forward(problem, found, ctx)
    if sweep is None:
        return fallback(problem, ctx, {**info, "stopped": "time limit before the DP finished"})
    sigma = read_back(problem.n, found, sweep)
    value = problem.value(sigma)
    ctx.offer(sigma, value)
    _, _, w = mincut.couplings_upper(problem)
    scale = math.fsum(np.abs(w)) + math.fsum(np.abs(problem.b)) + abs(float(problem.k0))
    tol = 8.0 * np.finfo(np.float64).eps * (problem.n + 1) * (scale + 1.0)  # float64 rounding of the DP sums
    info.update(dp_value=sweep.value, float_tolerance=tol)
    return Solution(sigma=sigma, exact=True, bound=max(value, sweep.value) + tol, info=info)
