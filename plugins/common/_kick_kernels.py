"""numba kernel for ball kicks on sparse couplings (canonical: maximise ½σᵀKσ + bᵀσ + k₀).

Flipping spin i changes C by gᵢ = −2σᵢhᵢ with h = Kσ + b.  A kick flips every spin of a
breadth-first ball around a random spin, then repairs greedily (any spin of the ball or
next to a flipped spin whose gain exceeds ``tol`` is flipped, until none is); the kicked
and repaired state is kept when C did not drop by more than ``tol`` (or, at a temperature
T > 0, with the Metropolis probability of its drop), else every flip is undone.  Random
numbers come from numba's generator seeded per call, so a call is a pure
function of its arguments.  Imported lazily; compiled on first call and cached on disk.
"""

from __future__ import annotations

import numba as nb
import numpy as np


@nb.njit(cache=True, inline="always")
def _flip(i, indptr, indices, data, sigma, h):  # pragma: no cover - compiled
    sigma[i] = -sigma[i]
    step = 2.0 * sigma[i]
    for p in range(indptr[i], indptr[i + 1]):
        h[indices[p]] += step * data[p]


@nb.njit(cache=True, inline="always")
def _note(i, journal, jstate, sigma, best_sigma):  # pragma: no cover - compiled
    """Record flip i while the best state is kept lazily (the current state minus the journal).

    A full journal is replayed once onto a copy (O(n)), so a new best costs O(1) instead of
    copying all n spins: on a million spins with thousands of improving kicks per call, the
    copies alone took seconds.
    """
    if jstate[1] == 0:
        return
    journal[jstate[0]] = i
    jstate[0] += 1
    if jstate[0] == journal.shape[0]:
        _materialise(journal, jstate, sigma, best_sigma)


@nb.njit(cache=True)
def _materialise(journal, jstate, sigma, best_sigma):  # pragma: no cover - compiled
    """best_sigma ← the current state with the journal's flips undone; the journal empties."""
    if jstate[1] == 0:
        return
    best_sigma[:] = sigma
    for a in range(jstate[0] - 1, -1, -1):
        best_sigma[journal[a]] = -best_sigma[journal[a]]
    jstate[0] = 0
    jstate[1] = 0


@nb.njit(cache=True)
def ball_kicks(indptr, indices, data, sigma, h, best_sigma, value, best, kicks, ball, seed, tol, temp):  # pragma: no cover
    """Run ``kicks`` kicks with balls of up to ``ball`` spins; returns (value, best, kept).

    A kick that lowers C by Δ > ``tol`` is kept with probability exp(−Δ/``temp``) when
    ``temp`` > 0 (Metropolis on whole kicks), and always undone when ``temp`` = 0.

    ``sigma``/``h`` are updated in place; ``best_sigma`` receives the state whenever
    ``value`` beats ``best`` by more than ``tol``.  ``kept`` counts kicks that gained.
    """
    np.random.seed(seed)
    n = sigma.shape[0]
    cap = 64 * ball + 4096
    seen = np.zeros(n, np.int64)
    queued = np.zeros(n, np.bool_)
    members = np.empty(ball, np.int64)
    work = np.empty(cap, np.int64)
    log = np.empty(cap, np.int64)
    journal = np.empty(max(4096, n), np.int64)
    jstate = np.zeros(2, np.int64)  # journal length; 1 while the best is kept lazily
    kept = 0
    for stamp in range(1, kicks + 1):
        size = 1
        members[0] = np.random.randint(n)
        seen[members[0]] = stamp
        head = 0
        while head < size and size < ball:
            u = members[head]
            head += 1
            for p in range(indptr[u], indptr[u + 1]):
                v = indices[p]
                if seen[v] != stamp and size < ball:
                    seen[v] = stamp
                    members[size] = v
                    size += 1
        delta, flips, wn = 0.0, 0, 0
        for a in range(size):
            i = members[a]
            delta -= 2.0 * sigma[i] * h[i]
            _flip(i, indptr, indices, data, sigma, h)
            _note(i, journal, jstate, sigma, best_sigma)
            log[flips] = i
            flips += 1
        for a in range(size):
            i = members[a]
            for p in range(indptr[i], indptr[i + 1] + 1):
                v = i if p == indptr[i + 1] else indices[p]
                if not queued[v] and wn < cap:
                    queued[v] = True
                    work[wn] = v
                    wn += 1
        wh = 0
        while wh < wn:
            i = work[wh]
            wh += 1
            queued[i] = False
            gain = -2.0 * sigma[i] * h[i]
            if gain > tol and flips < cap:
                delta += gain
                _flip(i, indptr, indices, data, sigma, h)
                _note(i, journal, jstate, sigma, best_sigma)
                log[flips] = i
                flips += 1
                for p in range(indptr[i], indptr[i + 1]):
                    v = indices[p]
                    if not queued[v] and wn < cap:
                        queued[v] = True
                        work[wn] = v
                        wn += 1
        if delta >= -tol or (temp > 0.0 and np.random.random() < np.exp(delta / temp)):
            value += delta
            if delta > tol:
                kept += 1
            if value > best + tol:  # the best is now the current state: keep it lazily
                best = value
                jstate[0] = 0
                jstate[1] = 1
        else:
            for a in range(flips - 1, -1, -1):
                _flip(log[a], indptr, indices, data, sigma, h)
                _note(log[a], journal, jstate, sigma, best_sigma)
    _materialise(journal, jstate, sigma, best_sigma)
    return value, best, kept
