"""Simulated annealing with single-spin flips (solver "anneal").

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀ over σ ∈ {±1}ⁿ; the
annealing energy is E = −C.  Each restart starts from uniform random spins and
runs ``sweeps`` sweeps (default 1000) while β follows a linear or geometric schedule; the best
end-of-sweep state is climbed to a 1-flip local optimum and offered.  With a
time limit, restarts go on until the clock stops; unless ``sweeps`` is given,
schedules of 1000, 4000, 16000... sweeps follow while each new length finds a better
state (else the length repeats), each cut down to fit the time left (a schedule is
sized from the measured cost of a sweep, so none is stopped while still hot), while
one can be at least half as long as the longest so far.
Long schedules pay on large sparse problems: on a 3-regular graph with Gaussian
weights, n = 10⁴, one 80 000-sweep schedule (9 s) cut 5470.8 against 5441.8 for
schedules doubling from 1000 in 10 s; restarts pay on small glassy ones (a 32×32
±J torus: one 2·10⁶-sweep schedule in 22 s reached −1.3867 per spin, doubling
restarts −1.3906 in 8 s, and schedules of 10⁴ to 4·10⁵ sweeps all stop at −1.3867):
growing ×4 while it pays is the compromise (measured).

The β range is set from the coupling scale, not left to the user: with
s = RMS over i of √(Σⱼ Kᵢⱼ² + bᵢ²) (the RMS local field at a uniform random
state), β runs from ``beta_span[0]/s`` to ``beta_span[1]/s``.  For the SK
model (K = J, J ~ N(0,1)) s ≈ √n, so the default (0.2, 8) spans roughly
T = 5·T_c down to T = T_c/8.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np

from pydantic import Field

from spinward.core import Capabilities, CanonicalProblem, InputError, Solution, SolveContext, SolverSpec, hookimpl
from spinward.core.options import SolverOptions
from spinward.core.statistics import FULL_PASS_ENTRIES

from ..common.couplings import working_couplings
from ..common.flips import csr_parts, local_search, random_spins
from ..common.offers import OfferPace

SCHEDULES = ("linear", "geometric")
DEFAULT_SWEEPS = 1000
RULES = {"metropolis": 0, "heat-bath": 1}
DEFAULT_BETA_SPAN = (0.2, 8.0)
CHUNK_SECONDS = 0.05          # target time between clock checks
FIT_SHARE = 0.9               # share of the time left that the next schedule may use
PROBE_SWEEPS = 20             # length of the schedule that times a sweep
UNBOUNDED = 10**7             # sweeps: the longest schedule (its β array takes 80 MB)
GROWTH = 4                    # each schedule is this many times longer than the last, if the time allows
SWEEP_SECONDS = 3e-9          # per coupling entry visited in a sparse sweep (generous; for predicted costs only)
DENSE_SWEEP_SECONDS = 1e-10   # per entry of a dense K, per sweep (most proposals are refused at low T)

class AnnealOptions(SolverOptions):
    """Options of simulated annealing (see the module docstring)."""

    sweeps: int | None = Field(None, ge=1, le=UNBOUNDED, description="sweeps per schedule (default 1000; with a time limit, "
                                                        "schedules grow ×4 while they pay)")
    restarts: int | None = Field(None, ge=1, le=10**9, description="schedules from fresh random spins (default 1; with a "
                                                          "time limit, until the clock stops)")
    schedule: Literal["linear", "geometric"] = Field("linear", description="how β moves between its ends")
    beta_span: tuple[float, float] | None = Field(None, description="(low, high) inverse temperatures relative to "
                                                                    "the coupling scale (default (0.2, 8))")
    rule: Literal["metropolis", "heat-bath"] = Field("metropolis", description="acceptance rule of a flip")
    precision: Literal["auto", "float32", "float64"] = Field("auto", description="working copy of the couplings")
    patience: int | None = Field(None, ge=1, le=10**6, description="with a time limit, end after this many schedules "
                                                                   "in a row found no better state (default: run "
                                                                   "until the clock stops)")


OPTIONS: dict[str, Any] = {name: field.default for name, field in AnnealOptions.model_fields.items()}


@dataclass(frozen=True)
class Plan:
    """Validated options of one run."""

    sweeps: int
    restarts: int
    betas: np.ndarray  # absolute inverse temperatures, one per sweep
    rule: int
    schedule: str = "linear"

    def resized(self, sweeps: int) -> "Plan":
        """The same β range over ``sweeps`` sweeps."""
        betas = beta_schedule(self.schedule, float(self.betas[0]), float(self.betas[-1]), sweeps)
        return Plan(sweeps, self.restarts, betas, self.rule, self.schedule)


def coupling_scale(problem: CanonicalProblem) -> float:
    """RMS over spins of √(Σⱼ Kᵢⱼ² + bᵢ²): the typical |local field| at a random state."""
    stats = problem.meta.get("_stats_exact") or problem.meta.get("_stats")
    if problem.kind == "sparse":
        data = csr_parts(problem)[2]
        total = float(data @ data)
    elif stats is not None and problem.n ** 2 > FULL_PASS_ENTRIES:
        # a K beyond one full statistics pass (a memmap, say) is not read again for a scale: the
        # profile's moments, from a row sample under a time limit, give Σ Kᵢⱼ² = n(n−1)(s² + m²)
        total = problem.n * (problem.n - 1) * (stats.std ** 2 + stats.mean ** 2)
    else:
        # Row by row, so a float32 or memory-mapped K is never copied whole.
        total = 0.0
        for row in np.asarray(problem.K):
            r = np.asarray(row, dtype=np.float64)
            total += float(r @ r)
    total += float(problem.b @ problem.b)
    scale = math.sqrt(total / max(problem.n, 1))
    return scale if scale > 0 and math.isfinite(scale) else 1.0


def beta_schedule(kind: str, lo: float, hi: float, sweeps: int) -> np.ndarray:
    """β per sweep, from ``lo`` to ``hi`` (linear or geometric in β)."""
    if kind == "linear":
        return np.linspace(lo, hi, sweeps)
    return np.geomspace(lo, hi, sweeps)


def make_plan(problem: CanonicalProblem, ctx: SolveContext) -> Plan:
    """Read and check the options; the β range is relative to :func:`coupling_scale`."""
    sweeps = ctx.option("sweeps", None)
    sweeps = DEFAULT_SWEEPS if sweeps is None else int(sweeps)
    if sweeps < 1:
        raise InputError(f"anneal: sweeps must be a positive integer, got {sweeps!r}")
    schedule = ctx.option("schedule", OPTIONS["schedule"])
    if schedule not in SCHEDULES:
        raise InputError(f"anneal: schedule must be one of {SCHEDULES}, got {schedule!r}")
    rule = ctx.option("rule", OPTIONS["rule"])
    if rule not in RULES:
        raise InputError(f"anneal: rule must be one of {tuple(RULES)}, got {rule!r}")
    lo, hi = ctx.option("beta_span", None) or DEFAULT_BETA_SPAN
    if not (0 < float(lo) <= float(hi) < math.inf):
        raise InputError(f"anneal: beta_span must be two numbers 0 < lo <= hi, got {(lo, hi)!r}")
    restarts = ctx.option("restarts", None)
    if restarts is None:  # one anneal (one per answer asked for), or as many as the time limit allows
        restarts = max(1, ctx.solutions) if ctx.time_limit is None else 10**9
    if int(restarts) < 1:
        raise InputError(f"anneal: restarts must be a positive integer or None, got {restarts!r}")
    scale = coupling_scale(problem)
    betas = beta_schedule(schedule, float(lo) / scale, float(hi) / scale, sweeps)
    return Plan(sweeps, int(restarts), betas, RULES[rule], schedule)


class Annealer:
    """One restart's state: spins, local fields, generator state and best-so-far."""

    def __init__(self, problem: CanonicalProblem, couplings: tuple[Any, ...], seed: int) -> None:
        from . import _kernels as kern

        self.problem, self.couplings = problem, couplings
        self.kernel = kern.anneal_csr if problem.kind == "sparse" else kern.anneal_dense
        self.rng_state = np.array([seed | 1], dtype=np.uint64)  # xorshift needs a non-zero state
        self.sigma = np.zeros(problem.n)
        self.h = np.zeros(problem.n)
        self.best_sigma = np.zeros(problem.n)
        self.current = self.best = -math.inf

    def reset(self, start: np.ndarray) -> None:
        """Start from ``start`` (±1) with exact local fields."""
        self.sigma[:] = start
        self.h[:] = self.problem.local_fields(self.sigma)
        self.current = self.best = self.problem.value_from_fields(self.sigma, self.h)
        self.best_sigma[:] = self.sigma

    def sweep(self, betas: np.ndarray, rule: int) -> None:
        """Run one sweep per β in ``betas``."""
        self.current, self.best = self.kernel(*self.couplings, self.h, self.sigma, betas, rule, self.rng_state,
                                              self.best_sigma, self.current, self.best)


def anneal_once(annealer: Annealer, plan: Plan, ctx: SolveContext) -> tuple[bool, int]:
    """One full schedule in clock-checked chunks; returns (finished, sweeps done)."""
    betas, done, chunk = plan.betas, 0, 1
    offer = OfferPace(annealer.problem, ctx)  # each improvement, after the chunk that found it
    while done < betas.size:
        t0 = time.perf_counter()
        annealer.sweep(betas[done:done + chunk], plan.rule)
        done = min(done + chunk, betas.size)
        spent = time.perf_counter() - t0
        # Chunk length only sets how often the clock is read; the trajectory does not depend on it.
        chunk = max(1, min(4 * chunk, int(chunk * CHUNK_SECONDS / max(spent, 1e-9))))
        if ctx.should_stop():
            return False, done
        offer(annealer.best_sigma, annealer.best)
    return True, done


def next_length(target: int, per_sweep: float | None, remaining: float) -> int:
    """Sweeps for the next schedule: ``target``, cut down to what the time left allows.

    A schedule's run time is close to proportional to its length (the same β
    curve, resampled), so ``per_sweep`` measured on any earlier run predicts it.
    """
    if per_sweep is None or math.isinf(remaining):
        return target
    return min(target, int(FIT_SHARE * remaining / max(per_sweep, 1e-12)))


def next_schedule(target: int, longest: int, per_sweep: float, remaining: float) -> int:
    """Length of the next time-limited schedule, or 0 to stop.

    ``target`` cut to fit (:func:`next_length`); stretched to fill the time when what it
    would leave could not host a schedule half as long as the longest; 0 when even the
    stretched one would be under half the longest (it would rarely win) or under the probe.
    """
    length = next_length(target, per_sweep, remaining)
    fill = next_length(UNBOUNDED, per_sweep, remaining)
    if fill - length < max(longest, length) // 2:
        length = fill
    return 0 if length < max(PROBE_SWEEPS, longest // 2) else length


def run(problem: CanonicalProblem, ctx: SolveContext) -> Solution:
    """Anneal ``restarts`` times (default once; until the clock stops with a time limit).

    With a time limit and no ``sweeps`` given, a short probe schedule measures the
    cost of a sweep; then schedules of 1000, 4000, 16000... sweeps follow (a length
    repeats when it found no better state), each cut down to ``FIT_SHARE`` of the
    time left, so none is stopped while still hot.
    """
    plan = make_plan(problem, ctx)
    couplings = working_couplings(problem, ctx.option("precision", OPTIONS["precision"]), "anneal", ctx.remaining())
    grow = ctx.time_limit is not None and ctx.option("sweeps", None) is None
    target, per_sweep = plan.sweeps, None
    if grow:
        plan = plan.resized(PROBE_SWEEPS)
    patience = ctx.option("patience", None) if grow else None
    done, sweeps_run, finished, longest, best, stale, settled = 0, 0, True, 0, -math.inf, 0, False
    while done < plan.restarts:
        annealer = Annealer(problem, couplings, int(ctx.rng.integers(1, 2**63 - 1)))
        annealer.reset(random_spins(problem.n, ctx.rng))
        t0 = time.perf_counter()
        finished, swept = anneal_once(annealer, plan, ctx)
        t1 = time.perf_counter()
        sweeps_run, done, longest = sweeps_run + swept, done + 1, max(longest, plan.sweeps)
        sigma, value = local_search(problem, annealer.best_sigma)
        ctx.offer(sigma, value)
        improved, best = value > best, max(best, value)
        stale = 0 if improved else stale + 1
        if ctx.should_stop():
            break
        if patience is not None and stale >= patience:
            settled = True  # an end of its own: the time left goes to whatever follows
            break
        if grow:
            per_sweep, clean_up = (t1 - t0) / plan.sweeps, time.perf_counter() - t1
            if plan.sweeps > PROBE_SWEEPS:  # grow while longer schedules pay, else repeat the length
                target = min(GROWTH * plan.sweeps, UNBOUNDED) if improved else plan.sweeps
            length = next_schedule(target, longest, per_sweep, ctx.remaining() - clean_up)
            if length == 0:
                break
            plan = plan.resized(length)
    assert ctx.best_sigma is not None
    # the clock, not the work (or the patience), ended it
    clock = ctx.time_limit is not None and not settled and (done < plan.restarts or not finished)
    return Solution(sigma=ctx.best_sigma, status="time-limit" if clock else None,
                    info={"restarts": done, "sweeps": sweeps_run, "last_sweeps": plan.sweeps,
                          "schedule_finished": finished, "beta_span": (float(plan.betas[0]), float(plan.betas[-1]))})


def fit(problem: CanonicalProblem) -> float:
    """A good general heuristic for dense and sparse couplings alike."""
    return 2.0


def cost(problem: CanonicalProblem) -> float:
    """Predicted seconds of the default run without a time limit: 1000 sweeps.

    A sparse sweep visits every coupling; a dense one pays O(n) per accepted flip only
    (measured: 1000 sweeps at n = 4000 in 0.8 s), hence the smaller rate per entry.
    """
    from spinward.core.plan import stored_entries

    rate = SWEEP_SECONDS if problem.kind == "sparse" else DENSE_SWEEP_SECONDS
    return DEFAULT_SWEEPS * rate * (stored_entries(problem) + problem.n)

SPEC = SolverSpec(
    name="anneal",
    run=run,
    capabilities=Capabilities(operator=False, several=True),
    summary="simulated annealing, single-flip Metropolis or heat-bath, β schedule set from the coupling scale",
    options=AnnealOptions,
    fit=fit,
    cost=cost,
)


@hookimpl
def spinward_solvers() -> list[SolverSpec]:
    return [SPEC]
