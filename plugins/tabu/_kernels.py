"""numba kernels for one-flip tabu search on the canonical form.

Canonical sense: maximise C(σ) = ½σᵀKσ + bᵀσ + k₀.  The gain of flipping spin
i is gᵢ = −2σᵢhᵢ with h = Kσ + b.  Each move flips the non-tabu spin of largest
gain (even when negative), or a tabu spin whose flip would beat the best value
seen (aspiration).  A flipped spin stays tabu for ``tenure + U{0..spread}`` moves.

Run state lives in caller-owned arrays so that a walk can be cut into chunks
without changing its course:
``ints = [move, last_improve, at_best, free_size, tabu_size, queue_head, queue_tail]``
and ``vals = [current, best]``.  ``best_sigma`` is written lazily (when the walk
leaves a best state, and at the end of a chunk), not at every improving move.
Random numbers come from the xorshift64* generator of :mod:`..common._random_kernels`.
"""

from __future__ import annotations

import numba as nb
import numpy as np

from ..common._random_kernels import uniform

MOVE, LAST_IMPROVE, AT_BEST, FREE_SIZE, TABU_SIZE, Q_HEAD, Q_TAIL = 0, 1, 2, 3, 4, 5, 6
CURRENT, BEST = 0, 1


@nb.njit(cache=True, inline="always")
def _randint(state, m):  # pragma: no cover - compiled
    """Uniform integer in 0..m (inclusive)."""
    return min(int(uniform(state) * (m + 1)), m)


@nb.njit(cache=True)
def _record_best(sigma, best_sigma, ints):  # pragma: no cover - compiled
    """Copy σ into best_sigma if the walk stands on its best state."""
    if ints[AT_BEST] == 1:
        best_sigma[:] = sigma
        ints[AT_BEST] = 0


@nb.njit(cache=True)
def _after_move(i, g, sigma, best_sigma, tabu_until, ints, vals, tenure, spread, state, tol):  # pragma: no cover
    """Book-keeping shared by both paths once spin i (gain g) is chosen, before it flips."""
    if ints[AT_BEST] == 1 and vals[CURRENT] + g <= vals[BEST] + tol:
        _record_best(sigma, best_sigma, ints)
    vals[CURRENT] += g
    tabu_until[i] = ints[MOVE] + 1 + tenure + _randint(state, spread)
    if vals[CURRENT] > vals[BEST] + tol:
        vals[BEST] = vals[CURRENT]
        ints[AT_BEST] = 1
        ints[LAST_IMPROVE] = ints[MOVE]


@nb.njit(cache=True)
def _pick_dense(sigma, h, tabu_until, ints, vals, state, tol):  # pragma: no cover - compiled
    """Best admissible spin by a full scan; ties broken uniformly at random."""
    n = sigma.shape[0]
    move = ints[MOVE]
    slack = vals[BEST] + tol - vals[CURRENT]  # aspiration: gain must exceed this
    choice, best_g, ties = -1, -np.inf, 0
    for i in range(n):
        g = -2.0 * sigma[i] * h[i]
        if tabu_until[i] > move and g <= slack:
            continue
        if g > best_g:
            choice, best_g, ties = i, g, 1
        elif g == best_g:
            ties += 1
            if uniform(state) * ties < 1.0:
                choice = i
    return choice, best_g


@nb.njit(cache=True)
def tabu_dense(K, sigma, h, tabu_until, best_sigma, ints, vals, state, moves, tenure, spread, stall, tol):  # pragma: no cover
    """Up to ``moves`` moves on dense K; stops early after ``stall`` moves without a new best.

    Returns the number of moves made.
    """
    n = sigma.shape[0]
    made = 0
    while made < moves and ints[MOVE] - ints[LAST_IMPROVE] < stall:
        i, g = _pick_dense(sigma, h, tabu_until, ints, vals, state, tol)
        if i < 0:  # every spin tabu and none aspirates: let time pass
            ints[MOVE] += 1
            made += 1
            continue
        _after_move(i, g, sigma, best_sigma, tabu_until, ints, vals, tenure, spread, state, tol)
        sigma[i] = -sigma[i]
        step = 2.0 * sigma[i]
        row = K[i]
        for j in range(n):
            h[j] += step * row[j]
        ints[MOVE] += 1
        made += 1
    _record_best(sigma, best_sigma, ints)
    return made


# ---- sparse path: two indexed max-heaps keyed by gain (free spins, tabu spins) ----
# and a FIFO of (spin, expiry) that returns tabu spins to the free heap.  The FIFO
# releases in insertion order, so a spin may stay tabu a few moves past its expiry
# when an earlier entry drew a longer tenure; stale entries (re-tabu'd spins) are skipped.

@nb.njit(cache=True)
def _swap(heap, pos, a, b):  # pragma: no cover - compiled
    heap[a], heap[b] = heap[b], heap[a]
    pos[heap[a]] = a
    pos[heap[b]] = b


@nb.njit(cache=True)
def _sift_up(heap, pos, key, k):  # pragma: no cover - compiled
    while k > 0:
        parent = (k - 1) // 2
        if key[heap[parent]] >= key[heap[k]]:
            return
        _swap(heap, pos, parent, k)
        k = parent


@nb.njit(cache=True)
def _sift_down(heap, pos, key, k, size):  # pragma: no cover - compiled
    while True:
        left = 2 * k + 1
        if left >= size:
            return
        top = left
        if left + 1 < size and key[heap[left + 1]] > key[heap[left]]:
            top = left + 1
        if key[heap[k]] >= key[heap[top]]:
            return
        _swap(heap, pos, k, top)
        k = top


@nb.njit(cache=True)
def heap_build(heap, pos, key, members, ints, slot):  # pragma: no cover - compiled
    """Heapify the spins listed in ``members`` into ``heap``; its size goes to ``ints[slot]``."""
    pos[:] = -1
    size = members.shape[0]
    for k in range(size):
        heap[k] = members[k]
        pos[members[k]] = k
    for k in range(size // 2 - 1, -1, -1):
        _sift_down(heap, pos, key, k, size)
    ints[slot] = size


@nb.njit(cache=True)
def _heap_push(heap, pos, key, i, ints, slot):  # pragma: no cover - compiled
    k = ints[slot]
    heap[k] = i
    pos[i] = k
    ints[slot] = k + 1
    _sift_up(heap, pos, key, k)


@nb.njit(cache=True)
def _heap_remove(heap, pos, key, i, ints, slot):  # pragma: no cover - compiled
    k = pos[i]
    last = ints[slot] - 1
    if k != last:
        _swap(heap, pos, k, last)
    pos[i] = -1
    ints[slot] = last
    if k != last:
        _sift_up(heap, pos, key, k)
        _sift_down(heap, pos, key, pos[heap[k]], last)


@nb.njit(cache=True)
def _heap_fix(heap, pos, key, i, old, size):  # pragma: no cover - compiled
    """Restore heap order after key[i] changed from ``old``."""
    if key[i] > old:
        _sift_up(heap, pos, key, pos[i])
    else:
        _sift_down(heap, pos, key, pos[i], size)


@nb.njit(cache=True)
def _release_expired(heaps, poss, gain, tabu_until, queue, ints):  # pragma: no cover - compiled
    """Move spins whose tenure ran out from the tabu heap (1) back to the free heap (0)."""
    cap = queue.shape[0]
    while ints[Q_HEAD] != ints[Q_TAIL] and queue[ints[Q_HEAD], 1] <= ints[MOVE]:
        i, expiry = queue[ints[Q_HEAD], 0], queue[ints[Q_HEAD], 1]
        ints[Q_HEAD] = (ints[Q_HEAD] + 1) % cap
        if tabu_until[i] == expiry and poss[1, i] >= 0:
            _heap_remove(heaps[1], poss[1], gain, i, ints, TABU_SIZE)
            _heap_push(heaps[0], poss[0], gain, i, ints, FREE_SIZE)


@nb.njit(cache=True)
def make_tabu(i, heaps, poss, gain, tabu_until, queue, ints):  # pragma: no cover - compiled
    """Put spin i (tabu until ``tabu_until[i]``) in the tabu heap and the expiry FIFO."""
    if poss[0, i] >= 0:
        _heap_remove(heaps[0], poss[0], gain, i, ints, FREE_SIZE)
        _heap_push(heaps[1], poss[1], gain, i, ints, TABU_SIZE)
    queue[ints[Q_TAIL], 0] = i
    queue[ints[Q_TAIL], 1] = tabu_until[i]
    ints[Q_TAIL] = (ints[Q_TAIL] + 1) % queue.shape[0]


@nb.njit(cache=True)
def _pick_csr(heaps, gain, ints, vals, tol):  # pragma: no cover - compiled
    """Top of the free heap, unless the top tabu spin aspirates with a larger gain."""
    choice, best_g = -1, -np.inf
    if ints[FREE_SIZE] > 0:
        choice = heaps[0, 0]
        best_g = gain[choice]
    if ints[TABU_SIZE] > 0:
        j = heaps[1, 0]
        if gain[j] > vals[BEST] + tol - vals[CURRENT] and gain[j] > best_g:
            choice, best_g = j, gain[j]
    return choice, best_g


@nb.njit(cache=True)
def _flip_csr(i, indptr, indices, data, sigma, h, gain, heaps, poss, ints):  # pragma: no cover - compiled
    """Flip spin i and update fields, gains and heap positions of its neighbours."""
    sigma[i] = -sigma[i]
    gain[i] = -gain[i]
    _fix_either(heaps, poss, gain, i, -gain[i], ints)
    step = 2.0 * sigma[i]
    for p in range(indptr[i], indptr[i + 1]):
        j = indices[p]
        h[j] += step * data[p]
        _fix_either(heaps, poss, gain, j, gain[j], ints, -2.0 * sigma[j] * h[j])


@nb.njit(cache=True)
def _fix_either(heaps, poss, gain, j, old, ints, new=np.nan):  # pragma: no cover - compiled
    """Set gain[j] to ``new`` (unless NaN) and restore the order of whichever heap holds j."""
    if not np.isnan(new):
        gain[j] = new
    if poss[0, j] >= 0:
        _heap_fix(heaps[0], poss[0], gain, j, old, ints[FREE_SIZE])
    elif poss[1, j] >= 0:
        _heap_fix(heaps[1], poss[1], gain, j, old, ints[TABU_SIZE])



@nb.njit(cache=True)
def tabu_csr(indptr, indices, data, sigma, h, gain, tabu_until, heaps, poss, queue, best_sigma, ints, vals,
             state, moves, tenure, spread, stall, tol):  # pragma: no cover - compiled
    """CSR version of :func:`tabu_dense`: O(degree · log n) a move.

    ``gain`` must equal −2σ∘h; ``heaps[0]``/``heaps[1]`` (positions ``poss[0]``/``poss[1]``)
    hold the free and the tabu spins, and ``queue`` (rows (spin, expiry), a ring of
    capacity > 2·(tenure + spread) + 2) the pending releases.
    """
    made = 0
    while made < moves and ints[MOVE] - ints[LAST_IMPROVE] < stall:
        _release_expired(heaps, poss, gain, tabu_until, queue, ints)
        i, g = _pick_csr(heaps, gain, ints, vals, tol)
        if i >= 0:
            _after_move(i, g, sigma, best_sigma, tabu_until, ints, vals, tenure, spread, state, tol)
            make_tabu(i, heaps, poss, gain, tabu_until, queue, ints)
            _flip_csr(i, indptr, indices, data, sigma, h, gain, heaps, poss, ints)
        ints[MOVE] += 1
        made += 1
    _record_best(sigma, best_sigma, ints)
    return made
