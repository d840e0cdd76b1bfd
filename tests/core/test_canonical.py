"""The canonical form: values, local fields, the ghost spin, validation."""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from spinward.core import CanonicalProblem, InputError, drop_ghost_spin


def _random(n, rng, fields=True):
    A = np.triu(rng.normal(size=(n, n)), 1)
    return CanonicalProblem(A + A.T, rng.normal(size=n) if fields else np.zeros(n), 0.7)


def test_value_and_flip_gain(rng):
    p = _random(8, rng)
    s = np.where(rng.random(8) < 0.5, 1, -1)
    direct = sum(p.K[i, j] * s[i] * s[j] for i in range(8) for j in range(i + 1, 8)) + p.b @ s + 0.7
    assert p.value(s) == pytest.approx(direct)
    h = p.local_fields(s)
    for i in range(8):
        t = s.copy(); t[i] = -t[i]
        assert p.value(t) - p.value(s) == pytest.approx(-2 * s[i] * h[i])


def test_gauge_spin_is_equivalent(rng):
    p = _random(6, rng)
    g = p.with_ghost_spin()
    assert not g.has_fields and g.n == 7
    for bits in itertools.product((-1, 1), repeat=7):
        s = np.array(bits)
        assert g.value(s) == pytest.approx(p.value(drop_ghost_spin(s)))


def test_shapes_checked():
    with pytest.raises(InputError, match="square"):
        CanonicalProblem(np.zeros((2, 3)), np.zeros(2))
    with pytest.raises(InputError, match="labels"):
        CanonicalProblem(np.zeros((2, 2)), np.zeros(2), labels=("a",))
