"""Text readers: byte-order marks, control characters, one graph per GraphML file, CSV, --format, weights, labels.

Reference values: the cut of a triangle with unit weights is 2 (elementary: a cut separates
one vertex from two, or none), and networkx's own cut_size recomputes every cut from the graph.
"""

from __future__ import annotations

import itertools

import networkx as nx
import numpy as np
import pytest
import scipy.io
import scipy.sparse as sp

import spinward
from spinward.adapters.files import FORMATS, read_problem

BOM = "\ufeff"


def _file(tmp_path, name, text):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


@pytest.mark.parametrize("name, text", [
    ("tri.txt", "a b\nb c\nc a\n"),
    ("tri.csv", "a,b\nb,c\nc,a\n"),
    ("tri_numbers.txt", "1 2\n2 3\n3 1\n"),
    ("tri.json", '{"form": "maxcut", "edges": [["a", "b"], ["b", "c"], ["c", "a"]]}'),
    ("tri.graphml", '<?xml version="1.0"?>\n<graphml xmlns="http://graphml.graphdrawing.org/xmlns">'
                    '<graph edgedefault="undirected"><node id="a"/><node id="b"/><node id="c"/>'
                    '<edge source="a" target="b"/><edge source="b" target="c"/><edge source="c" target="a"/>'
                    '</graph></graphml>'),
])
def test_a_byte_order_mark_is_ignored(tmp_path, name, text):
    form = read_problem(_file(tmp_path, name, BOM + text))
    assert len(form.labels) == 3 and not any(BOM in str(x) for x in form.labels)
    assert spinward.solve(form).objective == 2  # a triangle's maximum cut


def test_a_byte_order_mark_before_a_matrix_market_banner(tmp_path):
    p = _file(tmp_path, "q.mtx", BOM + "%%MatrixMarket matrix coordinate real general\n2 2 1\n1 2 -3\n")
    assert read_problem(p).Q.toarray()[0, 1] == -3


@pytest.mark.parametrize("name, text, line", [
    ("nul.txt", "a b\nb\x00x c\n", 2),
    ("escape.txt", "a b 1\n\x1bx c 2\n", 2),
    ("nul.csv", "u,v,weight\n1,2,1\nx\x00,2,1\n", 3),
    ("bell.csv", "a,b\n\"c\x07\",b\n", 2),
    ("c1.txt", "# nodes\na b\nb c\u0085d\n", 3),
])
def test_control_characters_in_labels_are_refused_naming_the_line(tmp_path, name, text, line):
    with pytest.raises(spinward.FileFormatError, match=rf"{name.replace('.', '[.]')}:{line}: the label .* control character"):
        read_problem(_file(tmp_path, name, text))


def test_control_characters_in_json_labels_and_graphml_ids(tmp_path):
    p = _file(tmp_path, "p.json", '{"form": "maxcut", "nodes": ["a\\u0000b"], "edges": []}')
    with pytest.raises(spinward.FileFormatError, match=r"nodes\[0\]: the label .* U\+0000"):
        read_problem(p)
    g = _file(tmp_path, "g.graphml", '<?xml version="1.0"?><graphml xmlns="http://graphml.graphdrawing.org/xmlns">'
                                     '<graph edgedefault="undirected"><node id="a&#10;b"/></graph></graphml>')
    with pytest.raises(spinward.FileFormatError, match=r"node id .* U\+000A"):
        read_problem(g)


def test_a_control_character_in_a_comment_is_harmless(tmp_path):
    form = read_problem(_file(tmp_path, "g.txt", "# made by a tool \x07\n1 2 3\n"))
    assert form.labels == (1, 2)


def test_graphml_with_two_graphs_is_refused_naming_the_count(tmp_path):
    graph = '<graph edgedefault="undirected"><node id="{0}"/></graph>'
    text = ('<?xml version="1.0"?><graphml xmlns="http://graphml.graphdrawing.org/xmlns">'
            + graph.format("a") + "<!-- <graph> in a comment does not count -->" + graph.format("b") + "</graphml>")
    with pytest.raises(spinward.FileFormatError, match="holds 2 graphs"):
        read_problem(_file(tmp_path, "two.graphml", text))


def test_csv_edge_lists_with_and_without_a_header(tmp_path):
    g = nx.Graph()
    g.add_weighted_edges_from([(1, 2, 0.5), (2, 3, -1.25), (3, 4, 2.0), (4, 1, 1.0)])
    best = max(nx.cut_size(g, s, weight="weight") for k in range(5) for s in itertools.combinations(g, k))
    for name, text in [("plain.csv", "1,2,0.5\n2,3,-1.25\n3,4,2\n4,1,1\n"),
                       ("header.csv", "source,target,weight\n1,2,0.5\n2,3,-1.25\n3,4,2\n4,1,1\n"),
                       ("spaces.csv", "# exported\nsource, target, weight\n1, 2, 0.5\n2, 3, -1.25\n3, 4, 2\n4, 1, 1\n")]:
        form = read_problem(_file(tmp_path, name, text))
        assert form.labels == (1, 2, 3, 4), name
        assert spinward.solve(form).objective == best, name


def test_csv_weight_column_by_name(tmp_path):
    p = _file(tmp_path, "g.csv", "u,v,capacity,cost\na,b,1,7\nb,c,1,5\n")
    assert spinward.solve(read_problem(p, weight="cost")).objective == 12
    assert spinward.solve(read_problem(p)).objective == 2  # no "weight" column: the third one
    with pytest.raises(spinward.FileFormatError, match=r"g\.csv:1: no column named 'price'.*'capacity', 'cost'"):
        read_problem(p, weight="price")
    plain = _file(tmp_path, "plain.csv", "a,b,1\n")
    with pytest.raises(spinward.FileFormatError, match="no header line"):
        read_problem(plain, weight="cost")


def test_format_overrides_the_extension(tmp_path):
    p = _file(tmp_path, "edges.dat", "1,2,3\n")
    with pytest.raises(spinward.FileFormatError, match="unknown extension '.dat'.*--format"):
        read_problem(p)
    assert spinward.solve(read_problem(p, format="csv")).objective == 3
    with pytest.raises(spinward.InputError, match="unknown file format 'xls'; choose one of mtx"):
        read_problem(p, format="xls")
    assert set(FORMATS) >= {"mtx", "json", "graphml", "edgelist", "csv", "npy", "npz"}


def test_matrix_market_labels_keep_the_files_numbering(tmp_path):
    Q = np.array([[1.0, -3.0, 0.0], [0.0, 1.0, 2.0], [0.0, 0.0, -1.0]])
    scipy.io.mmwrite(tmp_path / "q.mtx", sp.coo_array(Q))  # reference writer: scipy, 1-based by the standard
    r = spinward.solve(read_problem(tmp_path / "q.mtx"))
    assert list(r.assignment) == [1, 2, 3]
    r.write_csv(tmp_path / "spins.csv")
    assert (tmp_path / "spins.csv").read_text().splitlines()[1].startswith("1,")
    cut = read_problem(tmp_path / "q.mtx", form="ising")
    assert cut.labels == (1, 2, 3)


def test_graph_weights_under_another_name_warn_and_weight_picks_them(tmp_path):
    g = nx.Graph()
    g.add_edge("x", "y", capacity=5.0)
    g.add_edge("y", "z", capacity=2.0, colour="red")
    with pytest.warns(spinward.InputWarning, match="'capacity'"):
        r = spinward.solve(g)
    assert r.objective == 2 and any("capacity" in w for w in r.warnings)
    assert spinward.solve(spinward.MaxCut(g, weight="capacity")).objective == 7
    nx.write_graphml(g, tmp_path / "g.graphml")
    assert spinward.solve(read_problem(tmp_path / "g.graphml", weight="capacity")).objective == 7
    with pytest.raises(spinward.InputError, match="weight='capacity' names an edge attribute"):
        read_problem(_file(tmp_path, "g.mtx", "%%MatrixMarket matrix coordinate real general\n1 1 0\n"), weight="capacity")


def test_edge_arrays_build_a_maxcut_without_a_graph():
    heads, tails = np.array([0, 1, 2, 0]), np.array([1, 2, 0, 0])
    form = spinward.MaxCut.from_edges(heads, tails, [1.0, 2.0, 3.0, 9.0], labels=["a", "b", "c", "lonely"])
    assert form.labels == ("a", "b", "c", "lonely") and any("self-loop" in n for n in form.notes)
    g = nx.MultiGraph([("a", "b", {"weight": 1.0}), ("b", "c", {"weight": 2.0}), ("c", "a", {"weight": 3.0})])
    g.add_node("lonely")
    r = spinward.solve(form)
    assert r.objective == max(nx.cut_size(g, s, weight="weight") for s in (["a"], ["b"], ["c"]))
    assert sorted(form.graph.nodes) == sorted(g.nodes)
    with pytest.raises(spinward.InputError, match="only 2 nodes"):
        spinward.MaxCut.from_edges([0], [2], labels=["p", "q"])


def test_sums_of_decimal_weights_are_correctly_rounded():
    w = [0.1] * 10 + [0.01] * 7  # float addition in order gives 1.0699999999999998
    n = len(w)
    form = spinward.MaxCut.from_edges(np.zeros(n, dtype=int), np.arange(1, n + 1), w)
    values = np.array([0] + [1] * n)
    assert form.evaluate(values) == 1.07  # math.fsum: the correctly rounded sum
