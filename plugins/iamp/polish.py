"""The clean-up after IAMP: rounds of low-temperature re-annealing started from the IAMP states.

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀.  Temperatures are in units of the
normalised A = (K − m(11ᵀ − I))/(s√n) (docs/conventions.md), where SK's critical temperature
is 1: a round walks with single-flip Metropolis while β rises geometrically from
``betas[0]`` to ``betas[1]`` over ``sweeps`` sweeps, then climbs greedily on the caller's K.
Each round starts from an IAMP state (round r from run r mod runs) with its own seed; the
best state over all rounds and the IAMP states themselves is kept, so the polish never loses.

Why these numbers (measured on SK, 4 instances, n = 4000, int16 walks):
- starting just below T_c (β = 1.2) beat colder starts: 10 000 sweeps from β = 1.2, 1.5, 2.0
  reached e = 0.7592, 0.7589, 0.7586; 3000 sweeps 0.7586, 0.7582, 0.7583;
- a geometric schedule beat a linear one of the same length (1.5 → 20 over 8000 sweeps:
  0.7590 against 0.7585 for linear 1.5 → 5);
- from β = 1.2 the start hardly matters: 3000 sweeps from the IAMP state reached 0.7581,
  from uniform random spins 0.7583 (from β = 1.5: 0.7579 against 0.7573).  The IAMP state
  saves the walk's hot part and is the floor of the result, which is what the guarantee covers.

From n = 8000 on the walk starts at β = 1.5: measured at n = 8000 (3 instances), 6000 sweeps from
β = 1.2 and 1.5 reached 0.7600 and 0.7596 (10 000 sweeps: 0.7604, 0.7603), the colder start taking
0.7× the time (3.4% of the proposals accepted at the start against 4.7%).

The walk runs on the integer copy of plugins.common.quantised when one is accurate and fits
(int16: 2.5× faster than float32 rows at n = 4000, measured), else on the couplings as given
(a memmap is read in place, never copied) or on CSR parts for a sparse K.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from spinward.core import CanonicalProblem, SolveContext

#: (first, last) β of the polish in units of A below and from LARGE_N
SMALL_N_BETAS = (1.2, 20.0)
LARGE_N_BETAS = (1.5, 20.0)
LARGE_N = 8000
#: sweeps between clock checks at first (doubled while a chunk takes under CHUNK_SECONDS)
FIRST_CHUNK = 16
CHUNK_SECONDS = 0.05


@dataclass(frozen=True)
class PolishPlan:
    """Validated polish settings: sweeps per round, rounds (None: as many as the time limit allows)."""

    sweeps: int
    rounds: int | None
    betas: tuple[float, float]  # in units of A
    scale: float                # s√n: β in units of A divided by this is β in canonical units


@dataclass
class Walker:
    """What one walk needs: the kernel, its couplings and how to turn σ into fields."""

    kind: str                  # "integer", "dense", "csr" or "blocks" (row blocks held elsewhere)
    couplings: tuple[Any, ...]
    unit: float = 1.0          # canonical value of one integer step (integer walks)
    c: np.ndarray | None = None
    visit: int = 1             # sweeps per visit of a block (row blocks held elsewhere)

    def fields(self, problem: CanonicalProblem, sigma: np.ndarray) -> np.ndarray:
        from spinward.plugins.common import _metropolis_kernels as kern

        if self.kind == "integer":
            assert self.c is not None
            return kern.integer_fields(self.couplings[0], sigma.astype(np.int8), self.c).astype(np.int32)
        return problem.local_fields(sigma)

    def walk(self, h: np.ndarray, sigma: np.ndarray, betas: np.ndarray, state: np.ndarray) -> int:
        from spinward.plugins.common import _metropolis_kernels as kern

        if self.kind == "integer":
            return int(kern.walk_integer(self.couplings[0], h, sigma, betas * self.unit, state))
        if self.kind == "csr":
            return int(kern.walk_csr(*self.couplings, h, sigma, betas, state))
        if self.kind == "blocks":
            from .distributed import block_walk

            return block_walk(self.couplings[0], h, sigma, betas, state, self.visit)
        return int(kern.walk_dense(self.couplings[0], h, sigma, betas, state))


@dataclass
class PolishOutcome:
    """Best state of the rounds (or the best start when no round improved), and what each round reached."""

    sigma: np.ndarray
    value: float
    round_values: list[float] = field(default_factory=list)
    seconds: float = 0.0
    moves: int = 0
    sweeps: int = 0
    stopped: bool = False
    precision: str = ""
    betas: tuple[float, float] = (0.0, 0.0)


def auto_betas(n: int) -> tuple[float, float]:
    """The default (first, last) β of the polish for n spins (module docstring: why)."""
    return LARGE_N_BETAS if n >= LARGE_N else SMALL_N_BETAS


def schedule(plan: PolishPlan) -> np.ndarray:
    """β per sweep in canonical units: geometric from betas[0] to betas[1] (units of A)."""
    lo, hi = plan.betas
    return np.geomspace(lo, hi, plan.sweeps) / plan.scale


def walk_round(problem: CanonicalProblem, walker: Walker, start: np.ndarray, betas: np.ndarray,
               seed: int, ctx: SolveContext) -> tuple[np.ndarray, int, int, bool]:
    """One walk from ``start`` in clock-checked chunks; (end state int8, moves, sweeps, stopped early).

    The chunk length only sets how often the clock is read: the walk itself depends on the seed alone
    (row blocks held elsewhere are walked in groups of a fixed length, plugins/iamp/distributed.py).
    """
    sigma = start.astype(np.int8 if walker.kind == "integer" else np.float64)
    h = walker.fields(problem, sigma)
    state = np.array([seed | 1], dtype=np.uint64)
    fixed = walker.kind == "blocks"
    done, chunk, moves = 0, walker.visit if fixed else FIRST_CHUNK, 0
    while done < betas.size:
        t0 = time.perf_counter()
        moves += walker.walk(h, sigma, betas[done:done + chunk], state)
        done = min(done + chunk, betas.size)
        if ctx.should_stop():
            return sigma.astype(np.int8), moves, done, done < betas.size
        if not fixed and time.perf_counter() - t0 < CHUNK_SECONDS:
            chunk *= 2
    return sigma.astype(np.int8), moves, done, False


def run_polish(problem: CanonicalProblem, starts: list[tuple[np.ndarray, float]], plan: PolishPlan,
           walker: Walker, ctx: SolveContext) -> PolishOutcome:
    """Rounds of re-annealing from ``starts`` (cleaned IAMP states with their values); the best is kept.

    Without a time limit ``plan.rounds`` rounds run (1 when None).  With one, rounds go on while
    the time left fits another round of the length measured so far (``plan.rounds`` caps them).
    """
    from spinward.core.canonical import row_blocks
    from spinward.plugins.common.flips import local_search

    from .distributed import block_local_search

    climb = block_local_search if row_blocks(problem.K) is not None else local_search
    best_sigma, best_value = max(starts, key=lambda s: s[1])
    out = PolishOutcome(best_sigma, best_value)
    betas = schedule(plan)
    wanted = plan.rounds if plan.rounds is not None else (1 if ctx.time_limit is None else 10**6)
    t_start = time.perf_counter()
    for r in range(wanted):
        round_start = time.perf_counter()
        seed = int(ctx.rng.integers(1, 2**62))
        end, moves, sweeps, stopped = walk_round(problem, walker, starts[r % len(starts)][0], betas, seed, ctx)
        sigma, value = climb(problem, end)
        out.round_values.append(value)
        out.moves, out.sweeps = out.moves + moves, out.sweeps + sweeps
        if value > out.value:
            out.sigma, out.value = sigma, value
            ctx.offer(sigma, value)
        if stopped or ctx.should_stop():
            out.stopped = stopped
            break
        if ctx.remaining() < 1.05 * (time.perf_counter() - round_start):
            break
    out.seconds = time.perf_counter() - t_start
    return out


def make_walker(problem: CanonicalProblem, couplings: tuple[Any, ...], std: float, precision: str,
                budget: int, visit: int = 1) -> Walker:
    """The fastest accurate walker: integer copy ("auto", when it qualifies), else the float couplings.

    ``couplings`` is the float working copy (dense: (K,), sparse: CSR parts); ``std`` the
    couplings' standard deviation; ``budget`` the bytes an integer copy may take.  Row blocks
    held elsewhere (core RowBlocks) are walked where they live, ``visit`` sweeps per visit.
    """
    from spinward.core.canonical import row_blocks

    if row_blocks(problem.K) is not None:
        return Walker("blocks", (problem.K,), visit=visit)
    if problem.kind == "sparse":
        return Walker("csr", couplings)
    if precision == "auto" and not isinstance(problem.K, np.memmap):
        from spinward.plugins.common.quantised import integer_couplings

        copy = integer_couplings(problem, std, budget)
        if copy is not None:
            return Walker("integer", (copy.Q,), copy.unit, copy.c)
    return Walker("dense", couplings)


def walker_precision(walker: Walker) -> str:
    """Plain name of the arithmetic a walker uses (for the result's info)."""
    if walker.kind == "integer":
        return f"{np.dtype(walker.couplings[0].dtype).name} couplings, exact integer fields"
    if walker.kind == "csr":
        return "sparse float64 couplings"
    if walker.kind == "blocks":
        return "row blocks where they live (float64 local fields)"
    return f"{np.dtype(walker.couplings[0].dtype).name} couplings"


def scale_of(std: float, n_eff: int) -> float:
    """s√n: one unit of A in canonical units (n_eff counts the ghost spin when fields are absorbed)."""
    return std * math.sqrt(max(n_eff, 1))
