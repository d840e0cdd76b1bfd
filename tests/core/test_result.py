"""The result model: frozen, JSON round trip, CSV, gap definition (docs/conventions.md, Bounds)."""

from __future__ import annotations

import networkx as nx
import pydantic
import pytest

import spinward
from spinward.core.result import relative_gap


def test_json_round_trip_with_tuple_labels(tmp_path):
    r = spinward.solve(nx.grid_2d_graph(3, 3))
    back = spinward.Result.from_json(r.to_json())
    assert back == r
    assert (0, 1) in back.assignment
    r.write_json(tmp_path / "r.json")
    assert spinward.Result.from_json((tmp_path / "r.json").read_text()) == r


def test_frozen_and_strict():
    r = spinward.solve(nx.path_graph(3))
    with pytest.raises(pydantic.ValidationError):
        r.objective = 0  # type: ignore[misc]
    with pytest.raises(pydantic.ValidationError):
        spinward.Result(**{**r.model_dump(), "surprise": 1})


def test_fields_and_csv(tmp_path):
    r = spinward.solve(spinward.QUBO({("a", "a"): -1.0, ("a", "b, c"): 2.0}))
    for name in ("assignment", "objective", "sense", "bound", "gap", "exact", "solver", "status",
                 "wall_time", "seed", "warnings", "info"):
        assert hasattr(r, name)
    r.write_csv(tmp_path / "x.csv")
    rows = (tmp_path / "x.csv").read_text().splitlines()
    assert rows[0] == "label,value" and rows[1] == "a,1" and rows[2] == '"b, c",0'


def test_gap_definition():
    # gap = |bound − objective| / max(|bound|, tiny)
    assert relative_gap(10.0, 9.0) == pytest.approx(0.1)
    assert relative_gap(None, 1.0) is None
    assert relative_gap(0.0, 0.0) == 0.0
