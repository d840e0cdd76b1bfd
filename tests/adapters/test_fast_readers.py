"""The fast readers agree with the line parsers on any text: same problem, or an error from both.

Matrix Market files go through ``scipy.io.mmread`` after our checks, edge lists and CSV through
``numpy.loadtxt``; the line parsers (our own, one line at a time) are the reference.  Bodies
are drawn from the characters numbers are made of, so that text scipy or numpy might read
leniently (a stray sign, a second point, a short symmetric array) is drawn often.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

import numpy as np
import pytest
import scipy.sparse as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import spinward
from spinward.adapters.files import read_problem
from spinward.adapters.files.edgelist import Layout, _build, _parse_lines
from spinward.adapters.files.matrix_market import parse_mtx, read_mtx

EXAMPLES = int(os.environ.get("SPINWARD_FUZZ_EXAMPLES", "12")) * 8
pytestmark = pytest.mark.filterwarnings("ignore::spinward.InputWarning")  # self-loops are dropped with a warning
NUMBER_TEXT = st.text(alphabet="0123456789.-+eE \n", max_size=60)
VALID_FIELD = st.one_of(st.integers(-10**6, 10**6).map(str), st.floats(-1e6, 1e6, allow_nan=False).map(repr))


@pytest.fixture(scope="module")
def tmp():
    with tempfile.TemporaryDirectory() as d:
        yield Path(d)


def _outcome(read, p: Path):
    try:
        m = read(p)
    except spinward.SpinwardError:
        return None
    return m.toarray() if sp.issparse(m) else np.asarray(m)


def _same(a, b) -> bool:
    return (a is None and b is None) or (a is not None and b is not None and a.shape == b.shape and np.array_equal(a, b))


@settings(max_examples=EXAMPLES, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(layout=st.sampled_from(["coordinate 3 3 2", "array 2 2", "array-symmetric 2 2", "coordinate-integer 3 3 2"]),
       body=st.one_of(NUMBER_TEXT, st.lists(st.tuples(st.integers(1, 3), st.integers(1, 3), VALID_FIELD), max_size=3)
                      .map(lambda rows: "\n".join(f"{i} {j} {v}" for i, j, v in rows) + "\n")))
def test_matrix_market_scipy_path_matches_our_parser(tmp, layout, body):
    kind, *size = layout.split()
    fmt, _, symmetry = kind.partition("-")
    field = "integer" if symmetry == "integer" else "real"
    symmetry = "symmetric" if symmetry == "symmetric" else "general"
    p = tmp / "m.mtx"
    p.write_text(f"%%MatrixMarket matrix {fmt} {field} {symmetry}\n{' '.join(size)}\n{body}", encoding="utf-8")
    assert _same(_outcome(read_mtx, p), _outcome(parse_mtx, p))


def _line_parser(p: Path, delimiter):
    text = p.read_text(encoding="utf-8")
    layout = Layout(delimiter=delimiter)
    from spinward.adapters.files.edgelist import _find_layout

    _find_layout(p, text, layout, None)
    return _build(p, _parse_lines(p, text, layout))


def _edges(read, p: Path):
    try:
        form = read(p)
    except spinward.SpinwardError:
        return None
    heads, tails, weights = form.edge_arrays()
    return form.labels, heads.tolist(), tails.tolist(), weights.tolist()


EDGE_LINE = st.tuples(st.integers(-3, 12), st.integers(-3, 12), st.one_of(st.none(), VALID_FIELD, st.sampled_from(
    ["nan", "inf", "1e999", "9007199254740993", "1.5.2", "x"])))


@settings(max_examples=EXAMPLES, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(lines=st.lists(EDGE_LINE, max_size=6), sep=st.sampled_from([" ", ",", "\t"]), comment=st.booleans(),
       noise=st.one_of(st.just(""), NUMBER_TEXT))
def test_edge_list_fast_path_matches_the_line_parser(tmp, lines, sep, comment, noise):
    rows = [sep.join(map(str, (u, v) if w is None else (u, v, w))) for u, v, w in lines]
    text = ("# header comment\n" if comment else "") + "\n".join(rows) + "\n" + noise
    for suffix, delimiter in ((".txt", None), (".csv", ",")):
        p = tmp / f"g{suffix}"
        p.write_text(text, encoding="utf-8")
        assert _edges(read_problem, p) == _edges(lambda q: _line_parser(q, delimiter), p), (suffix, text)
