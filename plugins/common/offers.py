"""Hand a solver's improvements to the context as they happen (canonical sense: maximise C).

A solver that works in kernel chunks keeps its own running best (often in float32
arithmetic); :class:`OfferPace` offers that state to ``ctx`` after each chunk in which the
running best rose, so the result's trace (time, value) records every improvement at the
resolution of a chunk, and time-to-target is measured, not guessed from the end time.
(A phase run in ``ctx.child(...)`` needs nothing more: a child's offers reach its parent.)

An offer costs one exact evaluation of C (a matvec: O(n²) on dense K).  To keep that cost
small on huge dense problems, an offer waits until ``COST_RATIO`` times the previous offer's
cost has passed since it; on anything below about n = 5000 dense that is a few milliseconds
at most, far below a chunk.  The cost counted is the smaller of the measured one and an
estimate from the stored couplings (``SECONDS_PER_ENTRY`` each), so a one-time delay in the
first evaluation (a BLAS thread pool starting) does not silence the offers after it.
Offers read the clock but never change what the solver does: its state, random draws and
final answer are the same with or without them.
"""

from __future__ import annotations

import math
import time

import numpy as np

from spinward.core import CanonicalProblem, SolveContext

#: wait at least this many times the last offer's cost before the next (offers stay under ~5 % of the run)
COST_RATIO = 20.0
#: a running best this far (relative) below the incumbent is not worth an exact evaluation; the margin
#: covers the drift of running values kept in float32 arithmetic
BELOW_INCUMBENT = 1e-4
#: a generous cost per stored coupling of one evaluation of C (measured here: about 0.3 ns dense, 2 ns CSR)
SECONDS_PER_ENTRY = 4e-9


class OfferPace:
    """Offer a solver's running best to ``ctx`` whenever it rose since the last offer."""

    def __init__(self, problem: CanonicalProblem, ctx: SolveContext) -> None:
        self.problem, self.ctx = problem, ctx
        self.offered = -math.inf
        self.next_at = 0.0
        self.estimate = _evaluation_estimate(problem)

    def __call__(self, sigma: np.ndarray, running_best: float) -> None:
        """``running_best`` is the solver's own value of ``sigma``, used only to see that it rose."""
        if not running_best > self.offered:
            return
        incumbent = self.ctx.best_value
        if running_best < incumbent - BELOW_INCUMBENT * (abs(incumbent) + 1.0):
            return
        now = time.perf_counter()
        if now < self.next_at:
            return
        self.ctx.offer(sigma, self.problem.value(sigma))
        self.offered = running_best
        done = time.perf_counter()
        self.next_at = done + COST_RATIO * min(done - now, self.estimate)


def _evaluation_estimate(problem: CanonicalProblem) -> float:
    """Seconds one evaluation of C should take, from the stored couplings (inf for an operator)."""
    if problem.kind == "sparse":
        return SECONDS_PER_ENTRY * (problem.K.nnz + problem.n)
    if problem.kind == "dense":
        return SECONDS_PER_ENTRY * (problem.n * problem.n + problem.n)
    return math.inf
