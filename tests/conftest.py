"""Test configuration: keep numba quiet and the default registry fresh per test module."""

from __future__ import annotations

import os

import pytest

os.environ.setdefault("NUMBA_NUM_THREADS", "2")


@pytest.fixture
def rng():
    import numpy as np

    return np.random.default_rng(12345)
