"""Problem files: Matrix Market (open standard), edge lists, GraphML (open standard), .npy/.npz, our JSON."""

from __future__ import annotations

import json

import networkx as nx
import numpy as np
import pytest
import scipy.io
import scipy.sparse as sp

import spinward
from spinward.adapters.files import read_problem, write_problem


def _same_objective(a, b, rng, n):
    s = np.where(rng.random(n) < 0.5, 1, -1)
    ca, cb = a.canonical(), b.canonical()
    assert ca.to_objective(ca.value(s)) == pytest.approx(cb.to_objective(cb.value(s)))


def test_matrix_market_written_by_scipy_reads_back(tmp_path, rng):
    # reference writer: scipy.io.mmwrite (symmetric storage is expanded to the full matrix)
    Q = rng.normal(size=(6, 6))
    Q = Q + Q.T
    scipy.io.mmwrite(tmp_path / "q.mtx", sp.coo_array(Q), symmetry="symmetric")
    form = read_problem(tmp_path / "q.mtx")
    np.testing.assert_allclose(form.Q.toarray(), Q, rtol=1e-15)
    write_problem(form, tmp_path / "back.mtx")
    again = scipy.io.mmread(tmp_path / "back.mtx", spmatrix=False)
    np.testing.assert_allclose(again.toarray(), Q, rtol=1e-15)


def test_matrix_market_malformed_has_line_number(tmp_path):
    p = tmp_path / "bad.mtx"
    p.write_text("%%MatrixMarket matrix coordinate real general\n% c\n3 3 2\n1 1 1.0\n2 x 1.0\n")
    with pytest.raises(spinward.FileFormatError, match=r"bad\.mtx:5:"):
        read_problem(p)


def test_edge_list_keeps_isolated_nodes_and_int_ids(tmp_path):
    g = nx.Graph()
    g.add_nodes_from(range(5))
    g.add_weighted_edges_from([(0, 1, 2.5), (1, 2, -1.0)])
    write_problem(spinward.MaxCut(g), tmp_path / "g.txt")
    form = read_problem(tmp_path / "g.txt")
    assert sorted(form.graph.nodes) == [0, 1, 2, 3, 4]
    assert spinward.solve(form).objective == pytest.approx(2.5)


def test_edge_list_bad_weight_line(tmp_path):
    p = tmp_path / "g.edges"
    p.write_text("0 1 1.0\n1 2 heavy\n")
    with pytest.raises(spinward.FileFormatError, match=r"g\.edges:2: weight 'heavy'"):
        read_problem(p)


def test_graphml_round_trip_and_entity_refused(tmp_path):
    g = nx.Graph()
    g.add_edge("north", "south", weight=3.0)
    g.add_edge("south", "east", weight=1.5)
    nx.write_graphml(g, tmp_path / "g.graphml")
    form = read_problem(tmp_path / "g.graphml")
    assert spinward.solve(form).objective == pytest.approx(4.5)
    bomb = tmp_path / "bomb.graphml"
    bomb.write_text('<?xml version="1.0"?>\n<!DOCTYPE lolz [<!ENTITY lol "lol">]>\n<graphml/>\n')
    with pytest.raises(spinward.FileFormatError, match=r"bomb\.graphml:2: .*DOCTYPE or ENTITY"):
        read_problem(bomb)


def test_npy_and_npz_never_unpickle(tmp_path, rng):
    Q = rng.normal(size=(5, 5))
    np.save(tmp_path / "q.npy", Q)
    assert np.array_equal(read_problem(tmp_path / "q.npy").Q, Q)
    np.savez(tmp_path / "ising.npz", J=np.triu(Q, 1), h=np.ones(5), offset=2.0)
    form = read_problem(tmp_path / "ising.npz")
    assert form.form == "ising" and form.offset == 2.0
    sp.save_npz(tmp_path / "s.npz", sp.csr_array(Q))
    assert read_problem(tmp_path / "s.npz").form == "qubo"
    np.save(tmp_path / "obj.npy", np.array([{"a": 1}], dtype=object), allow_pickle=True)
    with pytest.raises(spinward.FileFormatError, match="without pickle"):
        read_problem(tmp_path / "obj.npy")


@pytest.mark.parametrize("make", ["qubo", "ising", "maxcut"])
def test_json_round_trip_each_form(tmp_path, rng, make):
    n = 7
    if make == "qubo":
        form = spinward.QUBO(rng.normal(size=(n, n)), offset=1.25)
    elif make == "ising":
        form = spinward.Ising(np.triu(rng.normal(size=(n, n)), 1), rng.normal(size=n), offset=-3.0)
    else:
        g = nx.gnp_random_graph(n, 0.6, seed=1)
        nx.set_edge_attributes(g, {e: float(rng.normal()) for e in g.edges}, "weight")
        form = spinward.MaxCut(g)
    write_problem(form, tmp_path / "p.json")
    back = read_problem(tmp_path / "p.json")
    assert back.form == make
    _same_objective(form, back, rng, n)


def test_json_errors_are_named(tmp_path):
    p = tmp_path / "p.json"
    p.write_text('{"form": "qubo",\n "terms": [[0, 1, "x"]]}')
    with pytest.raises(spinward.FileFormatError, match="terms"):
        read_problem(p)
    p.write_text('{"form": "qubo",\n "terms": [[0, 1, 2]')
    with pytest.raises(spinward.FileFormatError, match=r"p\.json:2: malformed JSON"):
        read_problem(p)
    p.write_text(json.dumps({"form": "potts", "q": 3}))
    with pytest.raises(spinward.FileFormatError):
        read_problem(p)


MALFORMED_DOCUMENTS = [
    # (document, the message fragment in the document's own terms)
    ({"form": "qubo", "terms": [[0, 1, 2.0], [1, 2]]}, "terms[1]: a coefficient is required (a number)"),
    ({"form": "qubo", "matrix": [[1, 2], [3]]}, "matrix[1]: has 1 entries, but a QUBO matrix is square"),
    ({"form": "qubo", "terms": [[0, 1.5, 2.0]]}, "terms[0][1]: a label is an integer, a string or an array"),
    ({"form": "ising", "couplings": [["a", "b", "strong"]]}, "couplings[0][2]: expected a number, got a string"),
    ({"form": "ising", "fields": [["a"]]}, "fields[0]: a field is a [label, h] pair, got 1 entries"),
    ({"form": "ising", "couplings": [], "field": []}, "field: unknown field in a ising document"),
    ({"form": "maxcut", "edges": [[0, 1, 2.5], [1, 2]]}, "edges[1]: a weight is required (a number)"),
    ({"form": "maxcut", "edges": [[0, 1, True]]}, "edges[0][2]: expected a number, got a boolean"),
    ({"form": "maxcut", "nodes": {"a": 1}}, "nodes: expected an array, got an object"),
]


@pytest.mark.parametrize("doc, fragment", MALFORMED_DOCUMENTS)
def test_malformed_documents_are_named_in_their_own_terms(tmp_path, doc, fragment):
    p = tmp_path / "p.json"
    p.write_text(json.dumps(doc))
    with pytest.raises(spinward.FileFormatError) as caught:
        read_problem(p)
    message = str(caught.value)
    assert fragment in message, message
    for typing_word in ("tuple[", "union[", "list[", "Field required"):
        assert typing_word not in message, message


def test_size_limit_and_unknown_extension(tmp_path, monkeypatch):
    p = tmp_path / "big.mtx"
    p.write_text("%%MatrixMarket matrix coordinate real general\n1 1 1\n1 1 1.0\n")
    monkeypatch.setenv("SPINWARD_MAX_FILE_BYTES", "10")
    with pytest.raises(spinward.FileFormatError, match="exceeds the limit"):
        read_problem(p)
    monkeypatch.delenv("SPINWARD_MAX_FILE_BYTES")
    (tmp_path / "x.xlsx").write_text("")
    with pytest.raises(spinward.FileFormatError, match="unknown extension"):
        read_problem(tmp_path / "x.xlsx")
