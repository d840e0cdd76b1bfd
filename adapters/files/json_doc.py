"""Our JSON problem documents, one schema per form, validated by pydantic.

``{"form": "qubo", "terms": [[i, j, q], ...] | "matrix": [[...]], "labels": [...], "offset": c}``
``{"form": "ising", "fields": [[label, h], ...], "couplings": [[i, j, J], ...], "offset": c}``
``{"form": "maxcut", "nodes": [...], "edges": [[u, v, w], ...]}``

Labels are JSON scalars or arrays (read back as tuples).  Ising couplings follow
the Ising convention: each listed pair adds J to the pair's coefficient.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Annotated, Any, Hashable, Literal, Union

import numpy as np
from pydantic import BaseModel, ConfigDict, Field, ValidationError, model_validator

from spinward.core.errors import FileFormatError

from ..graph import MaxCut
from ..ising import Ising
from ..qubo import QUBO
from .safety import read_text

Label = Union[int, str, list[Any]]
SCHEMA = "spinward.problem/1"


class _Doc(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)
    schema_: str = Field(SCHEMA, alias="schema")


class QuboDoc(_Doc):
    form: Literal["qubo"]
    matrix: list[list[float]] | None = None
    terms: list[tuple[Label, Label, float]] | None = None
    labels: list[Label] | None = None
    offset: float = 0.0

    @model_validator(mode="after")
    def _one_of(self) -> "QuboDoc":
        if (self.matrix is None) == (self.terms is None):
            raise ValueError("give exactly one of 'matrix' or 'terms'")
        return self


class IsingDoc(_Doc):
    form: Literal["ising"]
    fields: list[tuple[Label, float]] = []
    couplings: list[tuple[Label, Label, float]] = []
    offset: float = 0.0


class MaxCutDoc(_Doc):
    form: Literal["maxcut"]
    nodes: list[Label] = []
    edges: list[tuple[Label, Label, float]] | list[tuple[Label, Label]] = []


Document = Annotated[Union[QuboDoc, IsingDoc, MaxCutDoc], Field(discriminator="form")]


class _Wrapper(BaseModel):
    doc: Document


def _label(x: Any) -> Hashable:
    return tuple(_label(v) for v in x) if isinstance(x, list) else x


def read_json_problem(p: Path) -> Any:
    text = read_text(p)
    try:
        raw = json.loads(text)
    except json.JSONDecodeError as exc:
        raise FileFormatError(f"{p}:{exc.lineno}: malformed JSON ({exc.msg})") from None
    try:
        doc = _Wrapper(doc=raw).doc
    except ValidationError as exc:
        first = exc.errors()[0]
        where = ".".join(str(x) for x in first["loc"][1:])
        raise FileFormatError(f"{p}: invalid problem document at {where or 'top level'}: {first['msg']}") from None
    return from_document(doc)


def from_document(doc: Any) -> Any:
    if isinstance(doc, QuboDoc):
        if doc.matrix is not None:
            labels = None if doc.labels is None else [_label(x) for x in doc.labels]
            return QUBO(doc.matrix, offset=doc.offset, labels=labels)
        terms: dict[Any, float] = {}
        for i, j, q in doc.terms or []:
            key = (_label(i), _label(j))
            terms[key] = terms.get(key, 0.0) + q
        return QUBO(terms, offset=doc.offset)
    if isinstance(doc, IsingDoc):
        J: dict[Any, float] = {}
        for i, j, v in doc.couplings:
            key = (_label(i), _label(j))
            J[key] = J.get(key, 0.0) + v
        return Ising(J, {_label(k): v for k, v in doc.fields}, offset=doc.offset)
    import networkx as nx

    g = nx.MultiGraph()
    g.add_nodes_from(_label(x) for x in doc.nodes)
    for e in doc.edges:
        g.add_edge(_label(e[0]), _label(e[1]), weight=e[2] if len(e) == 3 else 1.0)
    return MaxCut(g)


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
        return {"schema": SCHEMA, "form": "ising", "fields": fields, "couplings": couplings, "offset": form.offset}
    raise FileFormatError(f"cannot write a {type(form).__name__} as a problem document")


def write_json_problem(form: Any, path: Path) -> None:
    path.write_text(json.dumps(to_document(form)) + "\n", encoding="utf-8")
