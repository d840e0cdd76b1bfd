"""Exact integers on every input path: no wrapped sums, nothing beyond 2**53 rounded in silence.

The facts checked are IEEE 754 binary64 arithmetic (common practice): every integer up to
2**53 is exact, 2**53 + 1 is not, and an int64 sum of two 2**62 wraps to −2**63.  Each
expected value is computed here with Python integers, which never overflow.
"""

from __future__ import annotations

import json

import networkx as nx
import numpy as np
import pytest
import scipy.sparse as sp

import spinward

BIG = 2**53 + 1  # the first integer float64 cannot hold
EDGE = 2**53  # the largest magnitude accepted


def _write(tmp_path, name, text):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def _npz(tmp_path, **arrays):
    p = tmp_path / "p.npz"
    np.savez_compressed(p, **arrays)
    return p


def _npy(tmp_path, array):
    p = tmp_path / "p.npy"
    np.save(p, array)
    return p


def _mtx(tmp_path, field, *entries):
    body = "\n".join(" ".join(map(str, e)) for e in entries)
    return _write(tmp_path, "p.mtx", f"%%MatrixMarket matrix coordinate {field} general\n3 3 {len(entries)}\n{body}\n")


def _graph(value):
    g = nx.Graph()
    g.add_edge("a", "b", weight=value)
    return g


# (path, how to make the input, the message fragment naming the entry)
BEYOND = [
    ("dense int64", lambda t: spinward.QUBO(np.array([[0, BIG], [0, 0]], dtype=np.int64)), r"Q\[0, 1\] = 9007199254740993"),
    ("dense int64 minimum", lambda t: spinward.QUBO(np.array([[0, 0], [-2**63, 0]], dtype=np.int64)),
     r"Q\[1, 0\] = -9223372036854775808"),
    ("dense uint64", lambda t: spinward.Ising(np.array([[0, 2**64 - 1], [0, 0]], dtype=np.uint64)), r"J\[0, 1\]"),
    ("nested lists", lambda t: spinward.QUBO([[0, BIG], [0, 0]]), r"Q\[0, 1\]"),
    ("list beyond int64", lambda t: spinward.QUBO([[0, 2**70], [0, 0]]), r"Q\[0, 1\] = 1180591620717411303424"),
    ("field vector", lambda t: spinward.Ising(np.zeros((2, 2)), np.array([0, BIG])), r"h\[1\] = 9007199254740993"),
    ("sparse COO", lambda t: spinward.QUBO(sp.coo_array((np.array([BIG]), ([0], [1])), shape=(2, 2))), r"Q\[0, 1\]"),
    ("dict", lambda t: spinward.QUBO({("x", "y"): BIG}), r"Q\[\('x', 'y'\)\]"),
    ("Ising dict field", lambda t: spinward.Ising({}, {"s": -BIG}), r"h\['s'\]"),
    ("offset", lambda t: spinward.QUBO(np.zeros((1, 1)), offset=BIG), "offset"),
    ("edge list", lambda t: spinward.read_problem(_write(t, "g.txt", f"1 2 3\n2 3 {BIG}\n")), r"g\.txt:2: the weight 9007199254740993"),
    ("CSV", lambda t: spinward.read_problem(_write(t, "g.csv", f"u,v,weight\n1,2,{-BIG}\n")), r"g\.csv:2:"),
    ("JSON", lambda t: spinward.read_problem(_write(t, "p.json", json.dumps({"form": "ising", "couplings": [["a", "b", BIG]]}))),
     r"couplings\[0\]\[2\]"),
    ("Matrix Market integer", lambda t: spinward.read_problem(_mtx(t, "integer", (1, 2, 5), (2, 3, BIG))), r"p\.mtx:4: the integer"),
    ("Matrix Market beyond int64", lambda t: spinward.read_problem(_mtx(t, "integer", (1, 2, 10**20))), r"p\.mtx:3:"),
    ("Matrix Market real field", lambda t: spinward.read_problem(_mtx(t, "real", (1, 2, BIG))), r"p\.mtx:3: the integer"),
    (".npy", lambda t: spinward.read_problem(_npy(t, np.array([[0, BIG], [0, 0]], dtype=np.int64))), r"Q\[0, 1\]"),
    (".npz Q", lambda t: spinward.read_problem(_npz(t, Q=np.array([[0, -BIG], [0, 0]], dtype=np.int64))), r"Q\[0, 1\]"),
    (".npz offset", lambda t: spinward.read_problem(_npz(t, Q=np.eye(2), offset=np.int64(BIG))), "offset"),
    (".npz h", lambda t: spinward.read_problem(_npz(t, J=np.zeros((2, 2)), h=np.array([BIG, 0]))), r"h\[0\]"),
    ("graph attribute", lambda t: spinward.MaxCut(_graph(BIG)), r"weight of edge \('a', 'b'\)"),
    ("graph attribute numpy", lambda t: spinward.MaxCut(_graph(np.int64(-BIG))), r"weight of edge \('a', 'b'\)"),
    ("GraphML long", lambda t: spinward.read_problem(_graphml(t, BIG)), r"weight of edge"),
    ("edge arrays", lambda t: spinward.MaxCut.from_edges([0], [1], np.array([BIG], dtype=np.int64)), r"weights\[0\]"),
]


def _graphml(tmp_path, value):
    g = _graph(value)
    p = tmp_path / "g.graphml"
    nx.write_graphml(g, p)
    return p


@pytest.mark.parametrize("path, make, fragment", BEYOND, ids=[b[0] for b in BEYOND])
def test_integers_beyond_2_53_are_refused_naming_the_entry(tmp_path, path, make, fragment):
    with pytest.raises(spinward.InputError, match=fragment) as caught:
        make(tmp_path)
    assert "2**53" in str(caught.value) or "too large" in str(caught.value)


# (path, input with duplicates of integers, the exact pair coefficient as a Python int, or None when refused)
DUPLICATES = [
    ("int64 COO of two 2**62", lambda t: spinward.QUBO(sp.coo_array(
        (np.array([2**62, 2**62], dtype=np.int64), ([0, 0], [1, 1])), shape=(2, 2))), None),
    ("int32 COO near 2**31", lambda t: spinward.QUBO(sp.coo_array(
        (np.array([2**31 - 1, 2**31 - 1], dtype=np.int32), ([0, 0], [1, 1])), shape=(2, 2))), 2 * (2**31 - 1)),
    ("int64 COO summing past 2**53", lambda t: spinward.QUBO(sp.coo_array(
        (np.array([2**52, 2**52, 1], dtype=np.int64), ([0, 0, 0], [1, 1, 1])), shape=(2, 2))), None),
    ("float COO of integers summing past 2**53", lambda t: spinward.QUBO(sp.coo_array(
        (np.array([2.0**52, 2.0**52, 1.0]), ([0, 0, 0], [1, 1, 1])), shape=(2, 2))), None),
    ("int64 COO summing to 2**53 - 1", lambda t: spinward.QUBO(sp.coo_array(
        (np.array([2**52, 2**52 - 1], dtype=np.int64), ([0, 0], [1, 1])), shape=(2, 2))), 2**53 - 1),
    ("edge list parallel lines", lambda t: spinward.read_problem(_write(t, "g.txt", f"0 1 {2**52}\n1 0 {2**52 + 1}\n")), None),
    ("edge list parallel, exact", lambda t: spinward.read_problem(_write(t, "g.txt", f"0 1 {2**52}\n1 0 {2**52 - 7}\n")),
     2**53 - 7),
    ("CSV parallel lines", lambda t: spinward.read_problem(_write(t, "g.csv", f"0,1,{-2**52}\n0,1,{-2**52 - 1}\n")), None),
    ("JSON repeated terms", lambda t: spinward.read_problem(_write(t, "p.json", json.dumps(
        {"form": "qubo", "terms": [[0, 1, 2**52], [0, 1, 2**52 + 1]]}))), None),
    ("JSON repeated terms, exact", lambda t: spinward.read_problem(_write(t, "p.json", json.dumps(
        {"form": "qubo", "terms": [[0, 1, 2**52], [0, 1, 2**52 - 1]]}))), 2**53 - 1),
    ("Ising dict, both orders", lambda t: spinward.Ising({("a", "b"): 2**52, ("b", "a"): 2**52 + 1}, {}), None),
    ("JSON couplings, both orders", lambda t: spinward.read_problem(_write(t, "p.json", json.dumps(
        {"form": "ising", "couplings": [["a", "b", -2**52], ["b", "a", -2**52 - 1]]}))), None),
    ("Matrix Market duplicates", lambda t: spinward.read_problem(_mtx(t, "integer", (1, 2, 2**52), (1, 2, 2**52 + 1))), None),
    ("multigraph attributes", lambda t: spinward.MaxCut(nx.MultiGraph([(0, 1, {"weight": 2**52}), (1, 0, {"weight": 2**52 + 1})])),
     None),
    ("edge arrays", lambda t: spinward.MaxCut.from_edges(np.array([0, 1]), np.array([1, 0]),
                                                         np.array([2**52, 2**52 + 1], dtype=np.int64)), None),
]


@pytest.mark.parametrize("path, make, expected", DUPLICATES, ids=[d[0] for d in DUPLICATES])
def test_duplicate_entries_add_up_exactly_or_are_refused(tmp_path, path, make, expected):
    if expected is None:
        with pytest.raises(spinward.InputError, match="2\\*\\*53"):
            make(tmp_path)
        return
    form = make(tmp_path)
    if isinstance(form, spinward.MaxCut):
        _, _, w = form.edge_arrays()
        assert int(w.sum()) == expected  # every partial sum is exact below 2**53
        return
    Q = form.Q.toarray() if sp.issparse(form.Q) else np.asarray(form.Q)
    assert Q[0, 1] + Q[1, 0] == expected and float(expected) == expected  # Python int == float: no rounding


def test_the_largest_exact_integer_is_accepted_everywhere(tmp_path):
    assert spinward.QUBO(np.array([[0, EDGE], [-EDGE, 0]], dtype=np.int64)).Q[0, 1] == EDGE
    assert spinward.read_problem(_write(tmp_path, "g.txt", f"1 2 {EDGE}\n")).edge_arrays()[2][0] == EDGE
    form = spinward.read_problem(_mtx(tmp_path, "integer", (1, 2, -EDGE)))
    assert form.Q.toarray()[0, 1] == -EDGE
    r = spinward.solve(spinward.QUBO({(0, 1): -EDGE, (1, 1): 1}))
    assert r.objective == -EDGE + 1 and r.exact  # x = (1, 1): −2**53 + 1, exact in float64
