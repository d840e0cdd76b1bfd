"""Fuzzing every file format: any bytes either read as a problem or fail with the project's own error.

Inputs are random text, random bytes and single-character mutations of valid
files of each format.  A file that reads is then solved (when small) and its
objective must equal the form's own evaluation.
"""

from __future__ import annotations

import io
import os
import tempfile
from pathlib import Path

import networkx as nx
import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import spinward
from spinward.adapters.files import read_problem, write_problem

EXAMPLES = int(os.environ.get("SPINWARD_FUZZ_EXAMPLES", "12")) * 2


def _valid_files() -> dict[str, bytes]:
    rng = np.random.default_rng(0)
    g = nx.gnp_random_graph(6, 0.5, seed=1)
    nx.set_edge_attributes(g, {e: float(rng.normal()) for e in g.edges}, "weight")
    forms = {".json": spinward.Ising(np.triu(rng.normal(size=(5, 5)), 1), rng.normal(size=5)),
             ".mtx": spinward.QUBO(rng.normal(size=(5, 5))), ".graphml": spinward.MaxCut(g),
             ".txt": spinward.MaxCut(g)}
    out = {}
    with tempfile.TemporaryDirectory() as d:
        for suffix, form in forms.items():
            p = Path(d) / f"x{suffix}"
            write_problem(form, p)
            out[suffix] = p.read_bytes()
        buf = io.BytesIO()
        np.save(buf, rng.normal(size=(4, 4)))
        out[".npy"] = buf.getvalue()
        buf = io.BytesIO()
        np.savez(buf, J=np.triu(rng.normal(size=(4, 4)), 1), h=np.ones(4))
        out[".npz"] = buf.getvalue()
    return out


VALID = _valid_files()
SUFFIXES = sorted(VALID)


def _read_and_check(tmp: Path, suffix: str, data: bytes) -> None:
    p = tmp / f"fuzz{suffix}"
    p.write_bytes(data)
    try:
        form = read_problem(p)
    except spinward.SpinwardError:
        return
    c = form.canonical()
    if c.n <= 12:
        r = spinward.solve(form, seed=0)
        assert r.objective == pytest.approx(form.evaluate(r.values), rel=1e-9, abs=1e-9)


@pytest.fixture(scope="module")
def tmp(tmp_path_factory):
    return tmp_path_factory.mktemp("fuzz")


@settings(max_examples=EXAMPLES, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(suffix=st.sampled_from(SUFFIXES), position=st.floats(0, 1), char=st.binary(min_size=1, max_size=3),
       cut=st.booleans())
def test_mutated_valid_files(tmp, suffix, position, char, cut):
    data = VALID[suffix]
    k = int(position * (len(data) - 1))
    data = data[:k] if cut else data[:k] + char + data[k + 1:]
    _read_and_check(tmp, suffix, data)


@settings(max_examples=EXAMPLES, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(suffix=st.sampled_from(SUFFIXES), text=st.text(max_size=200))
def test_random_text(tmp, suffix, text):
    _read_and_check(tmp, suffix, text.encode("utf-8", "replace"))


@settings(max_examples=EXAMPLES, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(suffix=st.sampled_from(SUFFIXES), data=st.binary(max_size=300))
def test_random_bytes(tmp, suffix, data):
    _read_and_check(tmp, suffix, data)
