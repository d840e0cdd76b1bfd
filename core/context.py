"""What a solver receives besides the problem: seed, clock, options, incumbent.

Solvers call :meth:`SolveContext.should_stop` in their loops and
:meth:`SolveContext.offer` whenever they hold a better state, so that a time
limit or Ctrl-C always leaves the best state so far with the core.

Contexts form a tree made by :meth:`SolveContext.child` alone.  A child ends no
later than its parent, shares the parent's interrupt flag and warnings, and
passes every improvement up (mapped into the parent's problem by ``embed`` when
the child solves a part, a lifted or a reduced problem), so the root always holds
the best state of the whole solve.
"""

from __future__ import annotations

import math
import signal
import threading
import time
import warnings
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from typing import Any

import numpy as np

from .errors import AssumptionWarning

#: maps a child's (state, value) to the parent's problem; None drops the offer
Embed = Callable[[np.ndarray, float], "tuple[np.ndarray, float] | None"]


def make_seed(seed: int | np.random.Generator | None) -> tuple[int, np.random.Generator]:
    """Normalise a seed into (recorded seed, generator).

    None draws a fresh seed; a numpy Generator gives one draw (so the result records an
    int seed that repeats the run, and the caller's generator advances by that draw).
    """
    if isinstance(seed, np.random.Generator):
        seed = int(seed.integers(0, 2**63 - 1))
    elif seed is None:
        seed = int(np.random.SeedSequence().generate_state(1, dtype=np.uint32)[0])
    if isinstance(seed, (bool, float)) or not isinstance(seed, (int, np.integer)) or seed < 0:
        from .errors import InputError

        raise InputError(f"seed must be a non-negative int or a numpy Generator, got {seed!r}")
    return int(seed), np.random.default_rng(int(seed))


class _Shared:
    """State every context of one solve shares: the interrupt flag and the warnings."""

    def __init__(self) -> None:
        self.interrupted = False
        self.warnings: list[str] = []


class SolveContext:
    """Clock, randomness, options and incumbent for one solver run (or one step of a plan).

    ``time_limit`` is in seconds from ``start`` (None: no limit, so solvers do fixed work);
    ``best_sigma``/``best_value`` hold this context's incumbent, ``trace`` its improvements
    as (seconds since start, canonical value).
    """

    def __init__(self, rng: np.random.Generator, seed: int | None = None, time_limit: float | None = None,
                 options: dict[str, Any] | None = None, start: float | None = None, *,
                 solutions: int = 1, _parent: "SolveContext | None" = None, _embed: Embed | None = None,
                 _shared: _Shared | None = None) -> None:
        self.rng, self.seed, self.time_limit = rng, seed, time_limit
        self.options: dict[str, Any] = dict(options or {})
        self.start = time.perf_counter() if start is None else start
        self.solutions = solutions          # distinct states the caller asked for (solvers may run that many starts)
        self.parent, self._embed = _parent, _embed
        self._shared = _shared or _Shared()
        self.best_sigma: np.ndarray | None = None
        self.best_value = -math.inf
        self.trace: list[tuple[float, float]] = []
        self.listeners: list[Callable[[np.ndarray, float], None]] = []

    # ---------------------------------------------------------------- clock and stop flag
    @property
    def interrupted(self) -> bool:
        return self._shared.interrupted

    @interrupted.setter
    def interrupted(self, value: bool) -> None:
        self._shared.interrupted = bool(value) or self._shared.interrupted

    @property
    def warnings(self) -> list[str]:
        return self._shared.warnings

    def elapsed(self) -> float:
        return time.perf_counter() - self.start

    def remaining(self) -> float:
        """Seconds left before the time limit (inf without one)."""
        if self.time_limit is None:
            return math.inf
        return self.time_limit - self.elapsed()

    def expired(self) -> bool:
        return self.remaining() <= 0

    def should_stop(self) -> bool:
        """True once the time limit has passed or Ctrl-C was pressed."""
        return self._shared.interrupted or self.expired()

    # ---------------------------------------------------------------- incumbent
    def offer(self, sigma: np.ndarray, value: float) -> bool:
        """Record ``sigma`` (canonical value ``value``) if it beats the incumbent; pass it up."""
        improved = value > self.best_value
        if improved:
            self.best_value = float(value)
            self.best_sigma = np.array(sigma, dtype=np.int8, copy=True)
            self.trace.append((self.elapsed(), float(value)))
        for listener in self.listeners:  # e.g. the pool of several answers: it wants every distinct state
            listener(np.asarray(sigma), float(value))
        if self.parent is not None and (improved or self.listeners_above()):
            lifted = (np.asarray(sigma), float(value)) if self._embed is None else self._embed(sigma, value)
            if lifted is not None:
                self.parent.offer(*lifted)
        return improved

    def listeners_above(self) -> bool:
        node = self.parent
        while node is not None:
            if node.listeners:
                return True
            node = node.parent
        return False

    def warn(self, message: str, category: type[Warning] = AssumptionWarning) -> None:
        """Attach a warning to the result and emit it once."""
        if message not in self._shared.warnings:
            self._shared.warnings.append(message)
            warnings.warn(message, category, stacklevel=3)

    def option(self, name: str, default: Any) -> Any:
        return self.options.get(name, default)

    # ---------------------------------------------------------------- children
    def child(self, time_limit: float | None = None, *, options: dict[str, Any] | None = None,
              embed: Embed | None = None, rng: np.random.Generator | None = None) -> "SolveContext":
        """A context for one step or sub-solver: it ends by ``time_limit`` seconds from now and never
        after this context; it shares the interrupt flag and warnings; its offers reach this
        context, through ``embed`` when it solves a different problem (a part, a lift, a reduction)."""
        left = self.remaining()
        limit = left if time_limit is None else min(time_limit, left)
        return SolveContext(rng=self.rng if rng is None else rng, seed=self.seed,
                            time_limit=None if math.isinf(limit) else max(limit, 0.0),
                            options=options, solutions=self.solutions, _parent=self, _embed=embed,
                            _shared=self._shared)


@contextmanager
def interrupt_guard(ctx: SolveContext) -> Iterator[None]:
    """While solving, the first Ctrl-C sets ``ctx.interrupted``; a second one raises.

    Only the main thread may install signal handlers; elsewhere this does nothing
    and a KeyboardInterrupt is handled by the front door instead.
    """
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    previous = signal.getsignal(signal.SIGINT)

    def handler(signum: int, frame: Any) -> None:
        if ctx.interrupted:
            raise KeyboardInterrupt
        ctx.interrupted = True

    try:
        signal.signal(signal.SIGINT, handler)
    except ValueError:  # not the main interpreter
        yield
        return
    try:
        yield
    finally:
        signal.signal(signal.SIGINT, previous)
