"""How a result reads: a one-line repr, the summary, notebook HTML, a plot, and numbers without float noise."""

from __future__ import annotations

import json
import sys
from html.parser import HTMLParser

import networkx as nx
import pytest

import spinward
from spinward.core.errors import MissingDependencyError, SpinwardError
from spinward.core.result import shown


def two_decimal_path() -> nx.Graph:
    """A path a–b–c with weights 0.1 and 0.2: both edges cut, objective 0.1 + 0.2, which float64 sums to
    0.30000000000000004 (IEEE 754 double arithmetic, common practice)."""
    g = nx.Graph()
    g.add_edge("a", "b", weight=0.1)
    g.add_edge("b", "c", weight=0.2)
    return g


def test_objectives_show_the_inputs_digits_and_json_keeps_the_exact_float():
    r = spinward.solve(two_decimal_path(), seed=0)
    assert r.objective == 0.1 + 0.2 == 0.30000000000000004
    assert "objective: 0.3  (maximise, maxcut)" in r.summary()
    assert "objective=0.3 (max)" in repr(r)
    text = r.to_json()
    # the shortest text that reads back to the same double (Python's float repr, common practice)
    assert '"objective": 0.30000000000000004' in text
    assert json.loads(text)["objective"] == r.objective
    assert spinward.Result.from_json(text).objective == r.objective
    # 784.01 as a float sum of two-decimal weights (the example) shows as 784.01
    assert shown(784.0099999999999) == "784.01" and shown(-1.5) == "-1.5" and shown(12.0) == "12"


def big_result() -> spinward.Result:
    g = nx.random_regular_graph(3, 2000, seed=1)
    return spinward.solve(g, method="local", seed=3, restarts=2, bound=False)


def test_repr_is_one_short_line_and_str_is_the_summary():
    r = big_result()
    text = repr(r)
    assert "\n" not in text and len(text) < 250
    for part in (f"n={2000}", "objective=", "status='feasible'", "solver='local'", "(max)"):
        assert part in text
    assert str(r) == r.summary()
    exact = spinward.solve(nx.petersen_graph(), seed=0)
    # a proved optimum: bound meets the objective, and the gap shows 0, not float noise like 2e-16
    assert "exact=True" in repr(exact) and "gap 0)" in repr(exact) and "gap: 0" in exact.summary()


class Parsed(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.tags: list[str] = []
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)

    def handle_data(self, data):
        self.text.append(data)


def test_notebook_html_shows_summary_bound_gap_warnings_and_a_folded_assignment():
    with pytest.warns(spinward.InputWarning):  # the diagonal pair is dropped with a warning
        model = spinward.Ising({("<b>x&y</b>", "q"): 1.0, ("q", 'r"'): -2.0, ("<b>x&y</b>", "<b>x&y</b>"): 0.5})
    r = spinward.solve(model, seed=0)
    page = r._repr_html_()
    parsed = Parsed()
    parsed.feed(page)
    words = " ".join(parsed.text)
    for fact in ("objective", "status", "bound", "gap", "time", "warnings", "assignment (3 variables)"):
        assert fact in words, fact
    assert any("dropped" in w or "diagonal" in w for w in r.warnings) and r.warnings[0][:20] in words
    assert {"details", "summary", "table"} <= set(parsed.tags)
    assert "<b>x&y</b>" not in page and "&lt;b&gt;x&amp;y&lt;/b&gt;" in page  # labels are text, not markup
    assert "<b>x&y</b>" in words  # ...and read back as written


def test_notebook_html_lists_at_most_2000_assignment_rows():
    r = spinward.solve(nx.path_graph(2500), method="local", seed=0, restarts=1, bound=False)
    page = r._repr_html_()
    assert page.count("<tr><td>") == 2000 and "… and 500 more" in page


def test_plot_draws_the_trace_and_the_bound():
    pytest.importorskip("matplotlib", reason="Result.plot needs the [plot] extra")
    from matplotlib.figure import Figure

    r = spinward.solve(nx.random_regular_graph(3, 300, seed=2), method="anneal", seed=1, time_limit=0.3)
    assert r.info["trace"] and r.bound is not None
    ax = Figure().subplots()
    assert r.plot(ax) is ax
    labels = [line.get_label() for line in ax.get_lines()]
    assert "best state so far" in labels and any(l.startswith("bound ") for l in labels)
    steps = ax.get_lines()[0].get_ydata()
    assert steps[-1] == pytest.approx(r.info["trace"][-1][1]) and ax.get_xscale() == "log"


def test_plot_without_matplotlib_names_the_extra(monkeypatch):
    r = spinward.solve(nx.path_graph(3), seed=0)
    monkeypatch.setitem(sys.modules, "matplotlib", None)  # as if not installed: importing it fails
    with pytest.raises(MissingDependencyError, match=r"pip install 'spinward\[plot\]'") as info:
        r.plot()
    assert isinstance(info.value, SpinwardError) and isinstance(info.value, ImportError)
