"""What a solver receives besides the problem: seed, clock, options, incumbent.

Solvers call :meth:`SolveContext.should_stop` in their loops and
:meth:`SolveContext.offer` whenever they hold a better state, so that a time
limit or Ctrl-C always leaves the best state so far with the core.
"""

from __future__ import annotations

import math
import signal
import threading
import time
import warnings
from contextlib import contextmanager
from dataclasses import dataclass, field
from typing import Any, Iterator

import numpy as np

from .errors import AssumptionWarning


def make_seed(seed: int | np.random.Generator | None) -> tuple[int | None, np.random.Generator]:
    """Normalise a seed: None draws a fresh one (recorded so the run can be repeated)."""
    if isinstance(seed, np.random.Generator):
        return None, seed
    if seed is None:
        seed = int(np.random.SeedSequence().generate_state(1, dtype=np.uint32)[0])
    if isinstance(seed, (bool, float)) or not isinstance(seed, (int, np.integer)) or seed < 0:
        from .errors import InputError

        raise InputError(f"seed must be a non-negative int or a numpy Generator, got {seed!r}")
    return int(seed), np.random.default_rng(int(seed))


@dataclass
class SolveContext:
    """Clock, randomness, options and incumbent for one solver run."""

    rng: np.random.Generator
    seed: int | None = None
    time_limit: float | None = None
    options: dict[str, Any] = field(default_factory=dict)
    start: float = field(default_factory=time.perf_counter)
    interrupted: bool = False
    warnings: list[str] = field(default_factory=list)
    best_sigma: np.ndarray | None = None
    best_value: float = -math.inf
    trace: list[tuple[float, float]] = field(default_factory=list)
    parent: "SolveContext | None" = None

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
        if self.parent is not None and self.parent.should_stop():
            self.interrupted = self.interrupted or self.parent.interrupted
            return True
        return self.interrupted or self.expired()

    def offer(self, sigma: np.ndarray, value: float) -> bool:
        """Record ``sigma`` (canonical value ``value``) if it beats the incumbent."""
        if value > self.best_value:
            self.best_value = float(value)
            self.best_sigma = np.array(sigma, dtype=np.int8, copy=True)
            self.trace.append((self.elapsed(), float(value)))
            return True
        return False

    def warn(self, message: str, category: type[Warning] = AssumptionWarning) -> None:
        """Attach a warning to the result and emit it once."""
        if message not in self.warnings:
            self.warnings.append(message)
            warnings.warn(message, category, stacklevel=3)

    def option(self, name: str, default: Any) -> Any:
        return self.options.get(name, default)

    def child(self, time_limit: float | None = None, **options: Any) -> "SolveContext":
        """A context for a sub-solver sharing the clock, rng, interrupt flag and incumbent view."""
        limit = self.remaining() if time_limit is None else min(time_limit, self.remaining())
        return SolveContext(rng=self.rng, seed=self.seed, time_limit=None if math.isinf(limit) else limit,
                            options=dict(options), interrupted=self.interrupted, parent=self)


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

