"""One-flip tabu search with perturbation (solver "tabu").

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀ over σ ∈ {±1}ⁿ.  A walk
always flips the best admissible spin (gain gᵢ = −2σᵢhᵢ, h = Kσ + b, gains kept
incrementally); a flipped spin is tabu for ``tenure`` + U{0..tenure/2} moves
unless flipping it would beat the best value seen (aspiration).  When ``stall``
moves pass without a new best, the walk restarts from the best state with
``perturb``·n random spins flipped and held tabu (iterated tabu search); a kick
that finds nothing new makes the next one stronger.  Each of ``restarts`` runs
starts from a state that option ``start`` chooses, which is climbed to a 1-flip local
optimum and offered before the walk refines it:

- "anneal": the best state that simulated annealing finds in 80 % of the time left (50 %
  on sparse K; one 1000-sweep schedule without a time limit).  On sparse K, ball kicks
  (plugins/common/kicks.py: flip a breadth-first ball of spins, repair greedily, keep
  unless worse) then take 80 % of the time left, restarted from fresh (half as long)
  anneals when they stop gaining.
- "ball-anneal" (sparse K only): annealed ball kicks from uniform random spins, the
  temperature falling linearly from 0.6 × the coupling scale to 0 over 90 % of the time
  left (300·n kicks without a time limit); see :func:`ball_anneal`.
- "random": uniform random spins (plain tabu search).
- "auto", the default: "ball-anneal" on sparse K with mean degree ≤ 4.5, else "anneal".

Option ``ball_kicks`` sets the count of (strict or annealed) ball kicks, 0 for none.  The
same phases run from an ``initial`` state, so "auto"'s improver step uses them too.

Why the anneal start: on sparse random graphs (3-regular, G(n, 10/n)) a walk from
random spins stays 2–12 % below annealing even given 10× the time (measured in
examples/benchmarks/heuristics.py): single flips cannot undo the large-scale
domain structure that a random start freezes in.  The anneal's share: on a 3-regular
graph with Gaussian weights, n = 10⁴, 10 s, an 80 % share cut 5469.9 and a 50 % share
5456.3 (measured), and a 2 s walk from an annealed state found nothing better, while
ball kicks gained 0.3 % in 0.2 s (same instance; measured).

Defaults scale with n: tenure = max(10, n/10) for sparse K and max(10, n/30)
for dense K (at most n/3), stall = max(2000, 2n), perturb = 0.02, and ``moves``
per restart without a time limit = 200·n + 10⁵ (sparse) or 50·n + 10⁴ (dense);
with a time limit, the walk runs until the clock stops.  Dense K costs
O(n) a move; CSR K costs O(degree · log n) a move (free and tabu spins sit in
two max-heaps of gains).
"""

from __future__ import annotations

import math
import time
from typing import Any, Literal

import numpy as np

from pydantic import Field

from spinward.core import Capabilities, CanonicalProblem, InputError, Solution, SolveContext, SolverSpec, hookimpl
from spinward.core.options import SolverOptions

from ..annealing import coupling_scale
from ..common.couplings import working_couplings
from ..common.flips import local_search, random_spins
from ..common.offers import OfferPace

CHUNK_SECONDS = 0.05
MAX_CHUNK = 10**8
KICK_GROWTH = 1.5
ANNEAL_SHARE = 0.8  # of the time left, for the anneal that seeds a walk (dense K)
SPARSE_ANNEAL_SHARE = 0.5  # the same on sparse K, where ball kicks follow the anneal
KICK_SHARE = 0.8  # of the time left after the anneal, for ball kicks (sparse K)
KICKS_PER_SPIN = 100  # ball kicks per spin without a time limit
RESTART_ANNEAL_SHARE = 0.5  # a restart's anneal, relative to the first one's time
STALL_PER_SPIN = 100  # with a time limit: kicks per spin without a gain before a fresh anneal restarts them
BALL_ANNEAL_MAX_DEGREE = 4.5  # start "auto" anneals with ball kicks at or below this mean degree (sparse K)
BALL_ANNEAL_SHARE = 0.9  # of the time left, for annealed ball kicks before the walk
BALL_HEAT = 0.6  # their start temperature, in units of the coupling scale (RMS local field)
BALL_ANNEAL_KICKS_PER_SPIN = 300  # annealed ball kicks per spin without a time limit
STARTS = ("auto", "anneal", "ball-anneal", "random")
KICK_SECONDS = 3e-6  # one ball kick on a sparse graph (measured: 3·10⁶ kicks in about 9 s at n = 10⁴)
MOVE_SECONDS = 1e-6  # one tabu move on a sparse graph (for predicted costs only)

class TabuOptions(SolverOptions):
    """Options of tabu search (see the module docstring)."""

    initial: Any = Field(None, description="canonical ±1 start state (the front door fills it from solve's "
                                           "initial=, or from the primary's state when tabu improves it)")
    moves: int | None = Field(None, ge=1, le=10**15, description="moves per walk (default 200n + 10⁵ sparse, 50n + 10⁴ dense; "
                                                      "with a time limit, until the clock stops)")
    restarts: int | None = Field(None, ge=1, le=10**9, description="walks from fresh starts (default 1)")
    tenure: int | None = Field(None, ge=1, le=10**9, description="moves a flipped spin stays tabu (default max(10, n/10) "
                                                       "sparse, max(10, n/30) dense)")
    stall: int | None = Field(None, ge=1, le=10**15, description="moves without a new best before a kick (default max(2000, 2n))")
    perturb: float = Field(0.02, gt=0.0, le=1.0, description="share of spins a kick flips")
    precision: Literal["auto", "float32", "float64"] = Field("auto", description="working copy of the couplings")
    start: Literal["auto", "anneal", "ball-anneal", "random"] = Field("auto", description="where a walk starts")
    ball_kicks: int | None = Field(None, ge=0, le=10**15, description="ball kicks before the walk (sparse couplings; 0: none)")


OPTIONS: dict[str, Any] = {name: field.default for name, field in TabuOptions.model_fields.items()}


def _positive(name: str, value: Any, default: int) -> int:
    out = default if value is None else int(value)
    if out < 1:
        raise InputError(f"tabu: {name} must be a positive integer or None, got {value!r}")
    return out


def read_options(problem: CanonicalProblem, ctx: SolveContext) -> dict[str, Any]:
    """Options with their n-dependent defaults filled in (see the module docstring)."""
    n = problem.n
    timed = ctx.time_limit is not None
    moves = ctx.option("moves", None)
    perturb = float(ctx.option("perturb", OPTIONS["perturb"]))
    if not 0 < perturb <= 1:
        raise InputError(f"tabu: perturb must be a fraction in (0, 1], got {perturb!r}")
    # Measured: sparse walks need a long memory (n/10) to leave a basin, dense ones a shorter one (n/30).
    # A default tenure must also leave most spins free on small problems.
    share = 10 if problem.kind == "sparse" else 30
    tenure = _positive("tenure", ctx.option("tenure", None), min(max(10, n // share), max(1, n // 3)))
    budget = 200 * n + 100_000 if problem.kind == "sparse" else 50 * n + 10_000  # a dense move costs O(n)
    return {
        "moves": math.inf if (moves is None and timed) else _positive("moves", moves, budget),
        "restarts": _positive("restarts", ctx.option("restarts", None), max(1, ctx.solutions)),
        "tenure": min(tenure, max(n - 1, 1)),
        "stall": _positive("stall", ctx.option("stall", None), max(2000, 2 * n)),
        "kicks": max(2, min(n, round(perturb * n))),
    }


class Walk:
    """The state of one tabu walk, kept in arrays the kernels update in place."""

    def __init__(self, problem: CanonicalProblem, couplings: tuple[Any, ...], seed: int, tol: float) -> None:
        from . import _kernels as kern

        n = problem.n
        self.kern, self.problem, self.couplings, self.tol = kern, problem, couplings, tol
        self.rng_state = np.array([seed | 1], dtype=np.uint64)
        self.sigma, self.h, self.gain = np.zeros(n), np.zeros(n), np.zeros(n)
        self.best_sigma = np.zeros(n)
        self.tabu_until = np.zeros(n, dtype=np.int64)
        self.heaps, self.poss = np.zeros((2, n), dtype=np.int64), np.full((2, n), -1, dtype=np.int64)
        self.queue = np.zeros((3 * n + 16, 2), dtype=np.int64)  # > n kicked + tenure + spread + 2 live entries
        self.ints = np.zeros(7, dtype=np.int64)
        self.vals = np.array([-math.inf, -math.inf])

    def start(self, sigma: np.ndarray, tabu: np.ndarray | None = None, tenure: int = 0) -> None:
        """Stand on ``sigma`` with exact fields; the spins in ``tabu`` stay tabu for ``tenure`` moves.

        The best state so far is kept.
        """
        k = self.kern
        self.sigma[:] = sigma
        self.h[:] = self.problem.local_fields(self.sigma)
        self.gain[:] = -2.0 * self.sigma * self.h
        self.vals[k.CURRENT] = self.problem.value(self.sigma)
        self.ints[k.LAST_IMPROVE] = self.ints[k.MOVE]
        self.ints[k.AT_BEST] = 0
        if self.vals[k.CURRENT] > self.vals[k.BEST]:
            self.vals[k.BEST] = self.vals[k.CURRENT]
            self.best_sigma[:] = self.sigma
        held = np.zeros(0, dtype=np.int64) if tabu is None else np.asarray(tabu, dtype=np.int64)
        self.tabu_until[:] = 0
        self.tabu_until[held] = self.ints[k.MOVE] + tenure
        if self.problem.kind == "sparse":
            self.ints[k.Q_HEAD] = self.ints[k.Q_TAIL] = 0
            k.heap_build(self.heaps[0], self.poss[0], self.gain, np.arange(self.problem.n, dtype=np.int64),
                         self.ints, k.FREE_SIZE)
            self.ints[k.TABU_SIZE] = 0
            for i in held:
                k.make_tabu(i, self.heaps, self.poss, self.gain, self.tabu_until, self.queue, self.ints)

    def advance(self, moves: int, tenure: int, stall: int) -> int:
        """Run up to ``moves`` moves; returns how many were made (fewer when the walk stalls)."""
        spread = max(tenure // 2, 1)
        if self.problem.kind == "sparse":
            return int(self.kern.tabu_csr(*self.couplings, self.sigma, self.h, self.gain, self.tabu_until, self.heaps,
                                          self.poss, self.queue, self.best_sigma, self.ints, self.vals,
                                          self.rng_state, moves, tenure, spread, stall, self.tol))
        return int(self.kern.tabu_dense(*self.couplings, self.sigma, self.h, self.tabu_until, self.best_sigma,
                                        self.ints, self.vals, self.rng_state, moves, tenure, spread, stall, self.tol))

    def stalled(self, stall: int) -> bool:
        return int(self.ints[self.kern.MOVE] - self.ints[self.kern.LAST_IMPROVE]) >= stall


def kick(walk: Walk, strength: int, tenure: int, rng: np.random.Generator) -> None:
    """Restart the walk from its best state with ``strength`` random spins flipped.

    The flipped spins start tabu, so the next moves cannot simply undo the kick.
    """
    flip = rng.choice(walk.problem.n, size=strength, replace=False).astype(np.int64)
    kicked = walk.best_sigma.copy()
    kicked[flip] *= -1
    walk.start(kicked, flip, tenure)


def walk_once(walk: Walk, opts: dict[str, Any], ctx: SolveContext) -> tuple[int, int, bool]:
    """One iterated tabu run in clock-checked chunks; returns (moves, perturbations, finished).

    A kick that leads to no new best makes the next one 1.5× stronger, so the walk
    escapes a basin that plain tabu moves keep returning to; past n/2 the strength
    starts again from its base.
    """
    done, kicks, chunk = 0, 0, 1000
    offer = OfferPace(walk.problem, ctx)  # each new best, after the chunk that found it
    strength, best_at_kick = opts["kicks"], -math.inf
    while done < opts["moves"]:
        t0 = time.perf_counter()
        made = walk.advance(int(min(chunk, opts["moves"] - done)), opts["tenure"], opts["stall"])
        done += made
        spent = time.perf_counter() - t0
        # The chunk length only sets how often the clock is read; the walk does not depend on it.
        chunk = max(100, min(4 * chunk, MAX_CHUNK, int(made * CHUNK_SECONDS / max(spent, 1e-9))))
        if walk.stalled(opts["stall"]):
            best = float(walk.vals[walk.kern.BEST])
            grow = best <= best_at_kick
            strength = math.ceil(KICK_GROWTH * strength) if grow else opts["kicks"]
            if strength > max(walk.problem.n // 2, 2):  # the cycle of strengths starts over
                strength = opts["kicks"]
            best_at_kick = best
            kick(walk, min(strength, walk.problem.n), opts["tenure"], ctx.rng)
            kicks += 1
        if ctx.should_stop():
            return done, kicks, False
        offer(walk.best_sigma, float(walk.vals[walk.kern.BEST]))
    return done, kicks, True


def mean_degree(problem: Any) -> float:
    """Coupled partners per spin: from a core profile (``couplings`` pairs) or a sparse problem."""
    n = max(int(getattr(problem, "n", 0)), 1)
    if hasattr(problem, "couplings"):
        return 2.0 * float(problem.couplings) / n
    if getattr(problem, "kind", None) == "sparse":
        from ..common.flips import mean_degree as sparse_degree

        return sparse_degree(problem)
    return float(n - 1)


def start_mode(problem: CanonicalProblem, how: Any) -> str:
    """Resolve option ``start``: "auto" is "ball-anneal" on sparse K with mean degree at most
    ``BALL_ANNEAL_MAX_DEGREE``, else "anneal"."""
    if how not in STARTS:
        raise InputError(f"tabu: start must be one of {', '.join(map(repr, STARTS))}, got {how!r}")
    if how == "ball-anneal" and problem.kind != "sparse":
        raise InputError("tabu: start='ball-anneal' needs sparse couplings (ball kicks follow the graph); "
                         "use start='anneal' or 'random' on dense ones")
    if how == "auto":
        low = problem.kind == "sparse" and mean_degree(problem) <= BALL_ANNEAL_MAX_DEGREE
        return "ball-anneal" if low else "anneal"
    return str(how)


def first_state(problem: CanonicalProblem, how: str, ctx: SolveContext) -> np.ndarray:
    """Where a walk starts: uniform random spins, or the best state annealing finds.

    The anneal gets ``ANNEAL_SHARE`` of the time left (one default schedule
    without a time limit), and the walk refines its result.  ("ball-anneal" starts from
    random spins: :func:`ball_anneal` does the annealing.)
    """
    if how in ("random", "ball-anneal"):
        return random_spins(problem.n, ctx.rng).astype(np.float64)
    from .. import annealing

    share = SPARSE_ANNEAL_SHARE if problem.kind == "sparse" else ANNEAL_SHARE
    budget = None if ctx.time_limit is None else share * max(ctx.remaining(), 0.0)
    return np.asarray(annealing.run(problem, ctx.child(time_limit=budget)).sigma, dtype=np.float64)


def _kicks_with_restarts(problem: CanonicalProblem, sigma: np.ndarray, ctx: SolveContext,
                         anneal_seconds: float | None) -> tuple[np.ndarray, float, int]:
    """Kicks for ``KICK_SHARE`` of the time left; when they stall, again from a fresh anneal
    of half ``anneal_seconds`` (while that fits), keeping the best.

    Measured on a 3-regular graph with Gaussian weights, n = 2000: kicks stop gaining after
    about 100 per spin (0.2 s), and three (2.5 s anneal + kicks) rounds gave 1053.4 against
    1049.3 for one 5 s anneal + 4 s of kicks.
    """
    from .. import annealing
    from ..common.kicks import kick_search

    end = time.perf_counter() + KICK_SHARE * max(ctx.remaining(), 0.0)
    stall = STALL_PER_SPIN * problem.n
    best, best_value, done = kick_search(problem, sigma, ctx, seconds=end - time.perf_counter(), stall=stall)
    restart = None if anneal_seconds is None else RESTART_ANNEAL_SHARE * anneal_seconds
    while restart and end - time.perf_counter() > 1.2 * restart and not ctx.should_stop():
        start = annealing.run(problem, ctx.child(time_limit=restart)).sigma
        out, value, more = kick_search(problem, start, ctx, seconds=end - time.perf_counter(), stall=stall)
        done += more
        if value > best_value:
            best, best_value = out, value
    return best, best_value, done


def ball_count(ctx: SolveContext) -> int | None:
    """Option ``ball_kicks``, checked: None or a non-negative integer."""
    count = ctx.option("ball_kicks", None)
    if count is not None and (isinstance(count, bool) or not isinstance(count, (int, np.integer)) or count < 0):
        raise InputError(f"tabu: ball_kicks must be None or a non-negative integer, got {count!r}")
    return None if count is None else int(count)


def ball_anneal(problem: CanonicalProblem, sigma: np.ndarray, ctx: SolveContext) -> tuple[np.ndarray, int]:
    """Annealed ball kicks from ``sigma`` (start "ball-anneal"); returns (σ, kicks run).

    The temperature falls linearly from ``BALL_HEAT`` × the coupling scale to 0 over
    ``BALL_ANNEAL_SHARE`` of the time left, or over ``BALL_ANNEAL_KICKS_PER_SPIN``·n kicks
    without a time limit; option ``ball_kicks`` sets the count instead (0: none).
    Measured, 9 s from random spins against the former default (a 5 s anneal, strict ball
    kicks, the walk; 10 s): 3-regular graphs with Gaussian weights, n = 10⁴, 5511–5516 against
    5472–5481; random 4-regular 6641–6653 against 6626; a 100×100 ±J torus 6992–6998 against
    6988; but random 6-regular 8527–8538 against 8552, and G(n, 10/n) 11343 against 11421.
    At mean degree 5 the two tie within 0.1 % (7664 against 7672 on one instance; ratio 1.001
    on another in examples/benchmarks/ball_anneal.py), so the limit sits below 5.  The periodic 3D ±J
    cube (degree 6, short loops; n = 10 648, 10 s, two seeds) agrees: ball-anneal/anneal = 0.9963, so
    lattices of degree 6 keep the anneal start.
    """
    count = ball_count(ctx)
    if count == 0 or problem.n < 2:
        return sigma, 0
    from ..common.kicks import kick_search

    heat = BALL_HEAT * coupling_scale(problem)
    if ctx.time_limit is not None:
        seconds: float | None = BALL_ANNEAL_SHARE * max(ctx.remaining(), 0.0)
        kicks = count
    else:
        seconds, kicks = None, BALL_ANNEAL_KICKS_PER_SPIN * problem.n if count is None else count
    out, value, done = kick_search(problem, sigma, ctx, seconds=seconds, kicks=kicks, heat=heat)
    ctx.offer(out, value)
    return out.astype(np.float64), done


def ball_phase(problem: CanonicalProblem, sigma: np.ndarray, ctx: SolveContext,
               anneal_seconds: float | None = None) -> tuple[np.ndarray, int]:
    """On sparse K, ball kicks (plugins.common.kicks) from ``sigma`` before the walk; returns (σ, kicks run).

    Option ``ball_kicks``: None gives ``KICK_SHARE`` of the time left, restarted from fresh
    anneals of ``anneal_seconds`` when they stall (or ``KICKS_PER_SPIN``·n kicks without a time
    limit); an integer gives that many kicks (0 turns them off).
    """
    count = ball_count(ctx)
    if problem.kind != "sparse" or count == 0 or problem.n < 2:
        return sigma, 0
    from ..common.kicks import kick_search

    if count is None and ctx.time_limit is not None:
        out, value, done = _kicks_with_restarts(problem, sigma, ctx, anneal_seconds)
    else:
        out, value, done = kick_search(problem, sigma, ctx, kicks=KICKS_PER_SPIN * problem.n if count is None
                                       else int(count))
    ctx.offer(out, value)
    return out.astype(np.float64), done


def run(problem: CanonicalProblem, ctx: SolveContext) -> Solution:
    """``restarts`` iterated tabu runs (default one), each from a fresh start state.

    With ``initial`` (a canonical ±1 state, e.g. another solver's answer) the first run starts there.
    """
    opts = read_options(problem, ctx)
    mode = start_mode(problem, ctx.option("start", OPTIONS["start"]))
    couplings = working_couplings(problem, ctx.option("precision", OPTIONS["precision"]), "tabu", ctx.remaining())
    # Gains below this count as zero, so float noise in the running value never reads as a new best.
    tol = 1e-12 * max(problem.n, 1) * coupling_scale(problem)
    moves = kicks = runs = balls = 0
    finished = True
    while runs < opts["restarts"]:
        walk = Walk(problem, couplings, int(ctx.rng.integers(1, 2**63 - 1)), tol)
        initial = ctx.option("initial", None) if runs == 0 else None
        t0 = time.perf_counter()
        state = (np.asarray(initial, dtype=np.float64) if initial is not None
                 else first_state(problem, mode, ctx))
        if mode == "ball-anneal":
            state, done = ball_anneal(problem, state, ctx)
        else:
            anneal_seconds = None if initial is not None else max(time.perf_counter() - t0, 1e-3)
            state, done = ball_phase(problem, state, ctx, anneal_seconds)
        balls += done
        walk.start(state)
        made, kicked, finished = walk_once(walk, opts, ctx)
        moves, kicks, runs = moves + made, kicks + kicked, runs + 1
        ctx.offer(*local_search(problem, walk.best_sigma))
        if ctx.should_stop():
            break
    assert ctx.best_sigma is not None
    clock = ctx.time_limit is not None and (runs < opts["restarts"] or not finished)  # the clock ended it
    return Solution(sigma=ctx.best_sigma, status="time-limit" if clock else None,
                    info={"restarts": runs, "moves": moves, "perturbations": kicks, "ball_kicks": balls,
                          "finished": finished, "tenure": opts["tenure"], "start": mode})


def fit(problem: Any) -> float:
    """Above annealing on sparse K of mean degree at most ``BALL_ANNEAL_MAX_DEGREE``, where
    annealed ball kicks beat single-flip annealing (see :func:`ball_anneal`), and on dense K of
    at most ``SMALL_DENSE`` spins; elsewhere just below it, so "auto" anneals first and runs
    tabu as the warm-started improver.

    Dense and small, measured at 0.5 s each, 2 instances per row: tabu ≥ anneal on every one,
    and far ahead on penalised QUBOs (a 40- and a 120-asset portfolio with a budget penalty:
    −15.15 / −45.05 against −13.34 / −35.35); SK n = 100, 300, 800 tie or favour tabu.
    """
    if getattr(problem, "kind", None) == "sparse":
        return 2.5 if mean_degree(problem) <= BALL_ANNEAL_MAX_DEGREE else 1.8
    if getattr(problem, "kind", None) == "dense" and problem.n <= SMALL_DENSE:
        return 2.2
    return 1.5


SMALL_DENSE = 1000


def cost(problem: CanonicalProblem) -> float:
    """Predicted seconds of the default run without a time limit (the start, the kicks, the walk)."""
    from .. import annealing

    n = problem.n
    if problem.kind == "sparse":
        walk = (200 * n + 100_000) * MOVE_SECONDS
        if mean_degree(problem) <= BALL_ANNEAL_MAX_DEGREE:
            return BALL_ANNEAL_KICKS_PER_SPIN * n * KICK_SECONDS + walk
        return annealing.cost(problem) + KICKS_PER_SPIN * n * KICK_SECONDS + walk
    return annealing.cost(problem) + (50 * n + 10_000) * n * annealing.DENSE_SWEEP_SECONDS

SPEC = SolverSpec(
    name="tabu",
    run=run,
    capabilities=Capabilities(operator=False, warm_start=True, several=True),
    summary="one-flip tabu search with aspiration and perturbation restarts; ball kicks on sparse couplings",
    options=TabuOptions,
    fit=fit,
    cost=cost,
)


@hookimpl
def spinward_solvers() -> list[SolverSpec]:
    return [SPEC]
