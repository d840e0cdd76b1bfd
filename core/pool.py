"""Several good answers: the best distinct states offered during one solve (``solutions=k``).

Two states count as the same when they are equal; with ``min_distance`` d, a state within
d − 1 flips of a kept one replaces it only when better.  Overlaps are |σ·τ|/n.
"""

from __future__ import annotations

from typing import Any

import numpy as np


class Pool:
    """The ``size`` best distinct states seen, best first."""

    def __init__(self, size: int, min_distance: int = 0) -> None:
        self.size, self.min_distance = size, max(int(min_distance), 1)
        self.states: list[tuple[np.ndarray, float]] = []

    def consider(self, sigma: np.ndarray, value: float) -> None:
        s = np.asarray(sigma, dtype=np.int8)
        close = [k for k, (t, _) in enumerate(self.states) if int(np.count_nonzero(t != s)) < self.min_distance]
        if close:
            if all(value > self.states[k][1] for k in close):
                for k in sorted(close, reverse=True):
                    del self.states[k]
            else:
                return
        if len(self.states) >= self.size and value <= self.states[-1][1]:
            return
        self.states.append((s.copy(), float(value)))
        self.states.sort(key=lambda item: -item[1])
        del self.states[self.size:]

    def best(self) -> list[tuple[np.ndarray, float]]:
        return list(self.states)

    def overlaps(self) -> list[list[float]]:
        if not self.states:
            return []
        S = np.stack([s for s, _ in self.states]).astype(np.float64)
        return (np.abs(S @ S.T) / S.shape[1]).round(6).tolist() if S.shape[1] else []

    def origin(self, parts: list[Any]) -> str:
        """Whether the states come from independent runs or were visited by one run."""
        several = [p for p in parts if p.candidates and p.candidates[0].capabilities.several]
        if several and len(parts) == 1:
            return f"independent runs of {parts[0].solver!r} (one state per run, best first)"
        return "states offered during one run (they may share most of their spins)"
