"""Our JSON problem documents, one schema per form, validated by pydantic.

``{"form": "qubo", "terms": [[i, j, q], ...] | "matrix": [[...]], "labels": [...], "offset": c}``
``{"form": "ising", "fields": [[label, h], ...], "couplings": [[i, j, J], ...], "offset": c, "energy_sign": "physics"}``
``{"form": "maxcut", "nodes": [...], "edges": [[u, v, w], ...]}``

Labels are JSON scalars or arrays (read back as tuples).  Ising couplings follow
the Ising convention: each listed pair adds J to the pair's coefficient; ``energy_sign``
(optional) is "physics" (E = −ΣJss − Σhs, the default) or "hardware" (E = +ΣJss + Σhs).
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any, Hashable

import numpy as np

from spinward.core.errors import FileFormatError

from ..graph import MaxCut
from ..ising import Ising
from ..qubo import QUBO
from .safety import control_character, read_text

SCHEMA = "spinward.problem/1"
#: fields each form's document may hold (besides "schema" and "form")
FIELDS = {"qubo": ("matrix", "terms", "labels", "offset"),
          "ising": ("fields", "couplings", "offset", "energy_sign"),
          "maxcut": ("nodes", "edges")}
#: largest integer magnitude a float64 holds exactly
EXACT_INT = 2**53
#: tuple labels may nest this deep (a guard against pathological documents)
MAX_LABEL_DEPTH = 16


class DocumentError(Exception):
    """A defect at a place in the document; the reader adds the file name."""

    def __init__(self, where: str, message: str) -> None:
        super().__init__(f"{where}: {message}" if where else message)


def read_json_problem(p: Path) -> Any:
    text = read_text(p)
    try:
        raw = json.loads(text)
    except json.JSONDecodeError as exc:
        raise FileFormatError(f"{p}:{exc.lineno}: malformed JSON ({exc.msg})") from None
    except RecursionError:
        raise FileFormatError(f"{p}: the JSON nests too deeply to be a problem document") from None
    try:
        return from_document(raw)
    except DocumentError as exc:
        raise FileFormatError(f"{p}: invalid problem document: {exc}") from None


def from_document(raw: Any) -> Any:
    """The form a parsed JSON document describes; :class:`DocumentError` names the first defect."""
    if not isinstance(raw, dict):
        raise DocumentError("", f"a problem document is a JSON object, got {_kind(raw)}")
    form = raw.get("form")
    if form not in FIELDS:
        raise DocumentError("form", f"must be one of {', '.join(map(repr, FIELDS))}, got {form!r}")
    if raw.get("schema", SCHEMA) != SCHEMA:
        raise DocumentError("schema", f"must be {SCHEMA!r} (or left out), got {raw['schema']!r}")
    unknown = sorted(set(raw) - {"schema", "form", *FIELDS[form]})
    if unknown:
        raise DocumentError(unknown[0], f"unknown field in a {form} document (it may hold: "
                                        f"{', '.join(FIELDS[form])})")
    return {"qubo": _qubo, "ising": _ising, "maxcut": _maxcut}[form](raw)


def _qubo(doc: dict[str, Any]) -> QUBO:
    offset = _number(doc.get("offset", 0), "offset")
    if ("matrix" in doc) == ("terms" in doc):
        raise DocumentError("", "a qubo document gives exactly one of 'matrix' (rows of numbers) or "
                                "'terms' (a list of [i, j, q])")
    if "matrix" in doc:
        rows = _array(doc["matrix"], "matrix")
        for r, row in enumerate(rows):
            if len(_array(row, f"matrix[{r}]", "a row (an array of numbers)")) != len(rows):
                raise DocumentError(f"matrix[{r}]", f"has {len(row)} entries, but a QUBO matrix is square "
                                                    f"({len(rows)} rows)")
        matrix = [[_number(v, f"matrix[{i}][{j}]") for j, v in enumerate(row)] for i, row in enumerate(rows)]
        labels = None
        if "labels" in doc:
            labels = [_label(x, f"labels[{k}]") for k, x in enumerate(_array(doc["labels"], "labels"))]
        return QUBO(np.array(matrix, dtype=np.float64).reshape(len(matrix), len(matrix)), offset=offset,
                    labels=labels)
    # With 'labels', every listed variable exists (in that order), even one that no term names.
    declared = [_label(x, f"labels[{k}]") for k, x in enumerate(_array(doc.get("labels", []), "labels"))]
    terms: dict[Any, float] = {(label, label): 0.0 for label in declared}
    known = set(declared)
    for k, (i, j, q) in enumerate(_triples(doc["terms"], "terms", "a coefficient")):
        for side, name in enumerate((i, j)):
            if known and name not in known:
                raise DocumentError(f"terms[{k}][{side}]", f"label {name!r} is not among 'labels'")
        _add(terms, (i, j), q, f"terms[{k}]")
    return QUBO(terms, offset=offset)


def _ising(doc: dict[str, Any]) -> Ising:
    offset = _number(doc.get("offset", 0), "offset")
    fields: dict[Any, float] = {}
    for k, entry in enumerate(_array(doc.get("fields", []), "fields")):
        where = f"fields[{k}]"
        pair = _array(entry, where, "a [label, h] pair")
        if len(pair) != 2:
            raise DocumentError(where, f"a field is a [label, h] pair, got {len(pair)} entries")
        label = _label(pair[0], f"{where}[0]")
        _add(fields, label, _number(pair[1], f"{where}[1]"), f"{where}[1]")
    J: dict[Any, float] = {}
    for k, (i, j, v) in enumerate(_triples(doc.get("couplings", []), "couplings", "a coupling J")):
        _add(J, (i, j), v, f"couplings[{k}]")
    sign = doc.get("energy_sign", "physics")
    if sign not in ("physics", "hardware"):
        raise DocumentError("energy_sign", f"must be 'physics' (E = −ΣJss − Σhs) or 'hardware' (E = +ΣJss + Σhs), "
                                           f"got {_kind(sign)}")
    form = Ising(J, fields, offset=offset, energy_sign=sign)
    form.energy_sign_stated = "energy_sign" in doc
    return form


def _maxcut(doc: dict[str, Any]) -> MaxCut:
    import networkx as nx

    g = nx.MultiGraph()
    g.add_nodes_from(_label(x, f"nodes[{k}]") for k, x in enumerate(_array(doc.get("nodes", []), "nodes")))
    edges = _array(doc.get("edges", []), "edges")
    weighted = any(isinstance(e, list) and len(e) == 3 for e in edges)
    for k, entry in enumerate(edges):
        where = f"edges[{k}]"
        edge = _array(entry, where, "an edge [u, v] or [u, v, weight]")
        if len(edge) == 2 and weighted:
            raise DocumentError(where, "a weight is required (a number): other edges carry one, so every edge must")
        if len(edge) not in (2, 3):
            raise DocumentError(where, f"an edge is [u, v] or [u, v, weight], got {len(edge)} entries")
        u, v = _label(edge[0], f"{where}[0]"), _label(edge[1], f"{where}[1]")
        g.add_edge(u, v, weight=_number(edge[2], f"{where}[2]") if weighted else 1.0)
    return MaxCut(g)


def _add(totals: dict[Any, Any], key: Any, value: float, where: str) -> None:
    """Add a repeated entry exactly: integers as Python integers, refused when the sum passes 2**53."""
    total = totals.get(key, 0) + value
    if isinstance(total, int) and abs(total) > EXACT_INT:
        raise DocumentError(where, f"this entry repeats an earlier one, and together they add up to {total}, beyond "
                                   f"2**53, where float64 is no longer exact; divide the data by a common factor")
    totals[key] = total


def _triples(value: Any, name: str, what: str) -> list[tuple[Hashable, Hashable, float]]:
    out = []
    for k, entry in enumerate(_array(value, name)):
        where = f"{name}[{k}]"
        triple = _array(entry, where, "an [i, j, value] triple")
        if len(triple) == 2:
            raise DocumentError(where, f"{what} is required (a number) after the two labels")
        if len(triple) != 3:
            raise DocumentError(where, f"an entry is [i, j, value], got {len(triple)} entries")
        out.append((_label(triple[0], f"{where}[0]"), _label(triple[1], f"{where}[1]"),
                    _number(triple[2], f"{where}[2]")))
    return out


def _kind(value: Any) -> str:
    if isinstance(value, bool):
        return f"a boolean ({str(value).lower()})"
    if isinstance(value, (int, float)):
        return f"a number ({value!r})"
    if isinstance(value, str):
        return f"a string ({value!r})"
    if value is None:
        return "null"
    return "an array" if isinstance(value, list) else "an object"


def _array(value: Any, where: str, what: str = "an array") -> list[Any]:
    if not isinstance(value, list):
        raise DocumentError(where, f"expected {what}, got {_kind(value)}")
    return value


def _number(value: Any, where: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise DocumentError(where, f"expected a number, got {_kind(value)}")
    if isinstance(value, int) and abs(value) > EXACT_INT:
        raise DocumentError(where, f"the integer {value} is beyond 2**53, where float64 is no longer exact; "
                                   f"divide the data by a common factor")
    if not np.isfinite(value):
        raise DocumentError(where, f"{value!r} is not a finite number")
    return value  # an int stays exact, so repeated entries add up exactly


def _label(value: Any, where: str, depth: int = 0) -> Hashable:
    """A label: an integer, a string, or an array of labels (read back as a tuple)."""
    if isinstance(value, list):
        if depth >= MAX_LABEL_DEPTH:
            raise DocumentError(where, f"a label nests deeper than {MAX_LABEL_DEPTH} arrays")
        return tuple(_label(v, f"{where}[{k}]", depth + 1) for k, v in enumerate(value))
    if isinstance(value, bool) or not isinstance(value, (int, str)):
        raise DocumentError(where, f"a label is an integer, a string or an array of labels, got {_kind(value)}")
    ch = control_character(value) if isinstance(value, str) else None
    if ch is not None:
        raise DocumentError(where, f"the label {value!r} holds the control character U+{ord(ch):04X}; labels must "
                                   f"be printable text")
    return value


def _jlabel(x: Hashable) -> Any:
    if isinstance(x, tuple):
        return [_jlabel(v) for v in x]
    if isinstance(x, np.integer):
        return int(x)
    if isinstance(x, (int, str)):
        return x
    raise FileFormatError(f"label {x!r} cannot be written to JSON; use int, str or tuple labels")


def to_document(form: Any) -> dict[str, Any]:
    """A JSON-ready document that reads back to an equivalent form."""
    if isinstance(form, MaxCut):
        edges = [[_jlabel(u), _jlabel(v), float(d.get(form.weight, 1))] for u, v, d in form.graph.edges(data=True)]
        return {"schema": SCHEMA, "form": "maxcut", "nodes": [_jlabel(x) for x in form.graph.nodes], "edges": edges}
    import scipy.sparse as sp

    c = form.canonical()
    labels = [_jlabel(x) for x in c.labels]
    if isinstance(form, QUBO):
        m = sp.coo_array(form.Q)
        terms = [[labels[i], labels[j], float(v)] for i, j, v in zip(m.row, m.col, m.data)]
        return {"schema": SCHEMA, "form": "qubo", "terms": terms, "offset": form.offset,
                **({"labels": labels} if not form._terms else {})}
    if isinstance(form, Ising):
        m = sp.coo_array(sp.triu(sp.csr_array(form.pairs), k=1))
        couplings = [[labels[i], labels[j], float(v)] for i, j, v in zip(m.row, m.col, m.data)]
        fields = [[labels[i], float(v)] for i, v in enumerate(form.h)]
        sign = {"energy_sign": form.energy_sign} if form.energy_sign != "physics" else {}
        return {"schema": SCHEMA, "form": "ising", "fields": fields, "couplings": couplings, "offset": form.offset,
                **sign}
    raise FileFormatError(f"cannot write a {type(form).__name__} as a problem document")


def write_json_problem(form: Any, path: Path) -> None:
    path.write_text(json.dumps(to_document(form)) + "\n", encoding="utf-8")
