"""Pick a reader by file extension and turn what it read into a problem form."""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any, Callable

import numpy as np

from spinward.core.errors import FileFormatError, InputError

from ..graph import MaxCut
from ..ising import Ising
from ..qubo import QUBO
from .safety import checked_path

FORMS = ("qubo", "ising", "maxcut")
EDGE_LIST_SUFFIXES = {".txt", ".edges", ".edgelist", ".wel", ".el"}


def read_problem(path: str | os.PathLike[str], *, form: str | None = None) -> Any:
    """Read a problem file; ``form`` chooses how a bare matrix is read (default QUBO).

    .mtx/.npy/.npz: a matrix → QUBO (``form="ising"`` reads it as J; ``"maxcut"`` as
    a weighted adjacency).  .json: our documents.  .graphml and edge lists: MaxCut.
    """
    if form is not None and form not in FORMS:
        raise InputError(f"form must be one of {', '.join(FORMS)}, got {form!r}")
    p = checked_path(path)
    suffix = p.suffix.lower()
    if suffix == ".json":
        return _expect(_json(p), form, p)
    if suffix == ".graphml":
        from .graphml import read_graphml

        return _expect(MaxCut(read_graphml(p)), form, p)
    if suffix in EDGE_LIST_SUFFIXES:
        from .edgelist import read_edgelist

        return _expect(MaxCut(read_edgelist(p)), form, p)
    if suffix == ".mtx":
        from .matrix_market import read_mtx

        return matrix_form(read_mtx(p), form or "qubo")
    if suffix == ".npy":
        from .numpy_io import read_npy

        return matrix_form(read_npy(p), form or "qubo")
    if suffix == ".npz":
        return _npz(p, form)
    raise FileFormatError(f"{p}: unknown extension {suffix!r}; use .mtx, .json, .graphml, .npy, .npz, "
                          f"or an edge list ({', '.join(sorted(EDGE_LIST_SUFFIXES))})")


def _json(p: Path) -> Any:
    from .json_doc import read_json_problem

    return read_json_problem(p)


def _expect(obj: Any, form: str | None, p: Path) -> Any:
    if form is not None and obj.form != form:
        raise InputError(f"{p} holds a {obj.form} problem, not {form}")
    return obj


def matrix_form(matrix: Any, form: str) -> Any:
    """A bare matrix read as the requested form."""
    if form == "qubo":
        return QUBO(matrix)
    if form == "ising":
        return Ising(matrix)
    return MaxCut(_adjacency_graph(matrix))


def _adjacency_graph(matrix: Any) -> Any:
    import networkx as nx
    import scipy.sparse as sp

    from ..validate import as_real_matrix

    m = sp.coo_array(as_real_matrix(matrix, "adjacency matrix"))
    if abs(m - m.T).sum() != 0:
        raise InputError("a MaxCut adjacency matrix must be symmetric; store each edge's weight at [u, v] and [v, u]")
    g = nx.Graph()
    g.add_nodes_from(range(m.shape[0]))
    g.add_weighted_edges_from((int(i), int(j), float(v)) for i, j, v in zip(m.row, m.col, m.data) if i < j)
    return g


def _npz(p: Path, form: str | None) -> Any:
    from .numpy_io import read_npz

    arrays = read_npz(p)
    if "matrix" in arrays:
        return matrix_form(arrays["matrix"], form or "qubo")
    offset = float(np.asarray(arrays.get("offset", 0.0)))
    if "Q" in arrays and form in (None, "qubo"):
        return QUBO(arrays["Q"], offset=offset)
    if "J" in arrays and form in (None, "ising"):
        return Ising(arrays["J"], arrays.get("h"), offset=offset)
    raise FileFormatError(f"{p}: expected arrays 'Q' (QUBO) or 'J' and 'h' (Ising), found {sorted(arrays)}")


WRITERS: dict[str, Callable[[Any, Path], None]] = {}


def write_problem(form: Any, path: str | os.PathLike[str]) -> None:
    """Write a form: .json for any form, .mtx for QUBO/Ising matrices, .graphml or an edge list for MaxCut."""
    p = Path(path)
    suffix = p.suffix.lower()
    if suffix == ".json":
        from .json_doc import write_json_problem

        return write_json_problem(form, p)
    if suffix == ".mtx" and isinstance(form, (QUBO, Ising)):
        from .matrix_market import write_mtx

        return write_mtx(form.Q if isinstance(form, QUBO) else form.pairs, p, comment=f"spinward {form.form}")
    if suffix == ".graphml" and isinstance(form, MaxCut):
        from .graphml import write_graphml

        return write_graphml(form.graph, p)
    if suffix in EDGE_LIST_SUFFIXES and isinstance(form, MaxCut):
        from .edgelist import write_edgelist

        return write_edgelist(form.graph, p, form.weight)
    raise FileFormatError(f"cannot write a {form.form} problem as {suffix!r}")
