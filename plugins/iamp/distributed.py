"""IAMP's clean-up and polish on couplings held in row blocks elsewhere (core RowBlocks: a dask cluster).

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀.  The local fields h = Kσ + b (n floats)
travel with σ to the worker holding each block in turn; the worker flips only its own spins,
updating all of h from its own rows, and sends h and its spins back (2·n floats each way per
visit).  A greedy visit makes one first-improvement pass over the block, so passes over the
blocks in order make exactly the flips of the in-memory clean-up (plugins.common.flips).  A
polish visit runs a fixed number of Metropolis sweeps over the block's spins at the schedule's
next temperatures: one sweep per visit (the default) makes exactly the in-memory walk, longer
visits a block-sequential one (still a valid annealing, with fewer round trips; see
VISIT_SWEEPS).  The visit length does not depend on the clock, so a run depends on its seed alone.

The functions named ``*_visit`` run on the workers: module-level, so they pickle by reference
(the workers need spinward installed).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from spinward.core import CanonicalProblem
from spinward.core.canonical import RowBlocks

#: sweeps per polish visit of a block (option ``block_visit_sweeps``).  One sweep per visit
#: reproduces the in-memory walk exactly (the same proposals in the same order); longer visits
#: save round trips but freeze the other blocks meanwhile, which costs quality.  Measured on SK
#: n = 1000, four blocks, 3000 sweeps from random spins, six seeds (mean e after a greedy
#: climb): in memory and visits of 1 sweep 0.7532, visits of 2 sweeps 0.7514, of 5 sweeps 0.7515;
#: two blocks, 2000 sweeps, two seeds: visits of 25 sweeps lost 0.009 (0.7460 against 0.7551).
VISIT_SWEEPS = 1
#: greedy passes over all blocks before giving up (the in-memory clean-up's limit)
MAX_PASSES = 10_000


def greedy_visit(rows: np.ndarray, first: int, factor: float, h: np.ndarray, sigma: np.ndarray, tol: float
                 ) -> tuple[np.ndarray, np.ndarray, int]:
    """One greedy pass over the block's spins (K = factor·M on the block's rows); (h, the block's spins, flips)."""
    from spinward.plugins.common import _flip_kernels as kern

    h, sigma = h.copy(), sigma.copy()  # arguments may be shared between tasks on a worker
    flips = kern.sweep_rows(np.asarray(rows), first, factor, h, sigma, tol)
    return h, sigma[first:first + rows.shape[0]], int(flips)


def walk_visit(rows: np.ndarray, first: int, factor: float, h: np.ndarray, sigma: np.ndarray, betas: np.ndarray,
               state: np.ndarray) -> tuple[np.ndarray, np.ndarray, int, np.ndarray]:
    """Metropolis sweeps (one per β) over the block's spins; (h, the block's spins, moves, generator state)."""
    from spinward.plugins.common import _metropolis_kernels as kern

    h, sigma, state = h.copy(), sigma.copy(), state.copy()
    moves = kern.walk_rows(np.asarray(rows), first, factor, h, sigma, betas, state)
    return h, sigma[first:first + rows.shape[0]], int(moves), state


def flip_tolerance(problem: CanonicalProblem, K: RowBlocks) -> float:
    """The in-memory clean-up's tolerance (plugins.common.flips), from the blocks' largest entry."""
    big = max(K.max_abs(), float(np.abs(problem.b).max()) if problem.n else 0.0)
    return 1e-12 * max(big, 1e-300) * max(problem.n, 1)


def block_local_search(problem: CanonicalProblem, sigma: np.ndarray) -> tuple[np.ndarray, float]:
    """Greedy clean-up to a 1-flip local optimum, visiting the blocks in order; returns (σ, C(σ))."""
    K: Any = problem.K
    s = np.asarray(sigma, dtype=np.float64).copy()
    h = problem.local_fields(s)
    tol = flip_tolerance(problem, K)
    for _ in range(MAX_PASSES):
        flips = 0
        for k, (first, end) in enumerate(K.bounds):
            h, s[first:end], done = K.on_block(k, greedy_visit, 1.0 / K.scale, h, s, tol)
            flips += done
        if flips == 0:
            break
    out = s.astype(np.int8)
    return out, problem.value(out)


def block_walk(K: Any, h: np.ndarray, sigma: np.ndarray, betas: np.ndarray, state: np.ndarray,
               visit: int = VISIT_SWEEPS) -> int:
    """Sweeps ``betas`` in groups of ``visit``, each group visiting every block in order; in place."""
    moves = 0
    for start in range(0, betas.size, visit):
        group = np.ascontiguousarray(betas[start:start + visit])
        for k, (first, end) in enumerate(K.bounds):
            h_new, sigma[first:end], taken, state_new = K.on_block(k, walk_visit, 1.0 / K.scale, h, sigma, group, state)
            h[:] = h_new
            state[:] = state_new
            moves += taken
    return moves
