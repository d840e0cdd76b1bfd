"""A small table of file formats: pick a reader by name or extension, and turn what it read into a form.

Each :class:`FileFormat` names its extensions and a ``read(path, request)`` function
returning a problem form.  Adding a format is one :func:`register_format` call (the
CLI's ``--format`` choices come from this table).
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable

from spinward.core.errors import FileFormatError, InputError

from ..graph import MaxCut
from ..ising import Ising
from ..qubo import QUBO
from .safety import checked_path

FORMS = ("qubo", "ising", "maxcut")


@dataclass(frozen=True)
class ReadRequest:
    """What the caller asked of a reader: how to read a bare matrix, and which edge attribute is the weight."""

    form: str | None = None
    weight: str | None = None


@dataclass(frozen=True)
class FileFormat:
    """One readable format: its name (for ``format=`` and ``--format``), extensions and reader."""

    name: str
    suffixes: tuple[str, ...]
    read: Callable[[Path, ReadRequest], Any]
    summary: str


FORMATS: dict[str, FileFormat] = {}


def register_format(fmt: FileFormat) -> None:
    """Add a format to the table; its name and extensions must be new."""
    if fmt.name in FORMATS:
        raise InputError(f"a file format named {fmt.name!r} is already registered")
    taken = {s for f in FORMATS.values() for s in f.suffixes}
    clash = sorted(taken & set(fmt.suffixes))
    if clash:
        raise InputError(f"extension(s) {', '.join(clash)} already belong to another format")
    FORMATS[fmt.name] = fmt


def format_names() -> list[str]:
    return list(FORMATS)


def read_problem(path: str | os.PathLike[str], *, form: str | None = None, format: str | None = None,
                 weight: str | None = None) -> Any:
    """Read a problem file as a QUBO, Ising or MaxCut form.

    ``format`` forces a reader by name (see :data:`FORMATS`; default: by extension).
    ``form`` chooses how a bare matrix is read (.mtx/.npy/.npz: "qubo" by default,
    "ising" reads it as J, "maxcut" as a weighted adjacency matrix); for other files it
    is the form the file must hold.  ``weight`` names the edge attribute (GraphML) or
    the CSV column holding the weights.
    """
    if form is not None and form not in FORMS:
        raise InputError(f"form must be one of {', '.join(FORMS)}, got {form!r}")
    if weight is not None and (not isinstance(weight, str) or not weight):
        raise InputError(f"weight must name an edge attribute or a CSV column, got {weight!r}")
    p = checked_path(path)
    return _choose_format(p, format).read(p, ReadRequest(form=form, weight=weight))


def _choose_format(p: Path, name: str | None) -> FileFormat:
    if name is not None:
        if name not in FORMATS:
            raise InputError(f"unknown file format {name!r}; choose one of {', '.join(FORMATS)}")
        return FORMATS[name]
    suffix = p.suffix.lower()
    for fmt in FORMATS.values():
        if suffix in fmt.suffixes:
            return fmt
    known = ", ".join(s for f in FORMATS.values() for s in f.suffixes)
    raise FileFormatError(f"{p}: unknown extension {suffix!r}; use one of {known}, or name the format "
                          f"(format=... in Python, --format on the command line: {', '.join(FORMATS)})")


def _expect(obj: Any, request: ReadRequest, p: Path) -> Any:
    if request.form is not None and obj.form != request.form:
        raise InputError(f"{p} holds a {obj.form} problem, not {request.form}")
    return obj


def _no_weight(p: Path, request: ReadRequest, what: str) -> None:
    if request.weight is not None:
        raise InputError(f"{p}: weight={request.weight!r} names an edge attribute or a CSV column, but {what}; "
                         f"it applies to GraphML and to CSV edge lists with a header")


def matrix_form(matrix: Any, form: str, labels: Any = None) -> Any:
    """A bare matrix read as the requested form (labels default to 0..n−1)."""
    if form == "qubo":
        return QUBO(matrix, labels=labels)
    if form == "ising":
        return Ising(matrix, labels=labels)
    return adjacency_maxcut(matrix, labels)


def adjacency_maxcut(matrix: Any, labels: Any = None) -> MaxCut:
    """MaxCut on a symmetric weighted adjacency matrix (entry [u, v] = [v, u] = the edge's weight)."""
    import scipy.sparse as sp

    from ..validate import as_real_matrix

    m = sp.coo_array(as_real_matrix(matrix, "adjacency matrix"))
    if abs(m - m.T).sum() != 0:
        raise InputError("a MaxCut adjacency matrix must be symmetric; store each edge's weight at [u, v] and [v, u]")
    upper = m.row <= m.col
    return MaxCut.from_edges(m.row[upper], m.col[upper], m.data[upper], labels=labels, n=m.shape[0])


def _read_mtx(p: Path, request: ReadRequest) -> Any:
    from .matrix_market import read_mtx

    _no_weight(p, request, "a Matrix Market file holds a matrix")
    matrix = read_mtx(p)
    return matrix_form(matrix, request.form or "qubo", labels=range(1, matrix.shape[0] + 1))


def _read_npy(p: Path, request: ReadRequest) -> Any:
    from .numpy_io import read_npy

    _no_weight(p, request, "a .npy file holds a matrix")
    return matrix_form(read_npy(p), request.form or "qubo")


def _read_npz(p: Path, request: ReadRequest) -> Any:
    from .numpy_io import archive_offset, check_archive_keys, read_npz

    _no_weight(p, request, "a .npz file holds matrices")
    arrays = read_npz(p)
    check_archive_keys(p, arrays)
    form = request.form
    if "matrix" in arrays:
        if len(arrays) > 1:
            raise FileFormatError(f"{p}: 'matrix' comes alone; found {sorted(arrays)}")
        return matrix_form(arrays["matrix"], form or "qubo")
    if "Q" in arrays and "J" in arrays:
        raise FileFormatError(f"{p}: holds both 'Q' and 'J'; an archive holds one problem")
    offset = archive_offset(p, arrays)
    if "Q" in arrays and form in (None, "qubo"):
        if "h" in arrays:
            raise FileFormatError(f"{p}: 'h' belongs with 'J' (Ising); a QUBO keeps linear terms on Q's diagonal")
        return QUBO(arrays["Q"], offset=offset)
    if "J" in arrays and form in (None, "ising"):
        return Ising(arrays["J"], arrays.get("h"), offset=offset)
    raise FileFormatError(f"{p}: expected arrays 'Q' (QUBO) or 'J' and 'h' (Ising)"
                          f"{'' if form is None else f' for form {form!r}'}, found {sorted(arrays)}")


def _read_json(p: Path, request: ReadRequest) -> Any:
    from .json_doc import read_json_problem

    _no_weight(p, request, "a JSON document gives each edge's weight in place")
    return _expect(read_json_problem(p), request, p)


def _read_graphml(p: Path, request: ReadRequest) -> Any:
    from .graphml import read_graphml_problem

    return _expect(read_graphml_problem(p, weight=request.weight or "weight"), request, p)


def _read_edge_list(p: Path, request: ReadRequest) -> Any:
    from .edgelist import read_edge_list

    return _expect(read_edge_list(p, weight=request.weight), request, p)


def _read_csv(p: Path, request: ReadRequest) -> Any:
    from .edgelist import read_csv_edges

    return _expect(read_csv_edges(p, weight=request.weight), request, p)


def _read_lp(p: Path, request: ReadRequest) -> Any:
    from .lp import read_lp

    return _expect(read_lp(p), request, p)


for _fmt in (
    FileFormat("mtx", (".mtx",), _read_mtx, "Matrix Market matrix (coordinate or array), 1-based labels"),
    FileFormat("json", (".json",), _read_json, "spinward's JSON problem document"),
    FileFormat("graphml", (".graphml",), _read_graphml, "GraphML graph, read as a MaxCut"),
    FileFormat("edgelist", (".txt", ".edges", ".edgelist", ".wel", ".el"), _read_edge_list,
               "whitespace edge list 'u v [weight]', read as a MaxCut"),
    FileFormat("csv", (".csv",), _read_csv, "CSV edge list 'u,v[,weight]' with an optional header, read as a MaxCut"),
    FileFormat("npy", (".npy",), _read_npy, "NumPy array (never unpickled)"),
    FileFormat("npz", (".npz",), _read_npz, "NumPy archive: Q [offset], J [h, offset], or a scipy.sparse matrix"),
    FileFormat("lp", (".lp",), _read_lp, "the binary-quadratic subset of the plain-text LP format (equalities "
               "become constraint penalties)"),
):
    register_format(_fmt)

EDGE_LIST_SUFFIXES = set(FORMATS["edgelist"].suffixes)


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
        from .edgelist import write_edge_list

        return write_edge_list(form, p)
    raise FileFormatError(f"cannot write a {form.form} problem as {suffix!r}")


__all__ = ["FORMATS", "FORMS", "FileFormat", "ReadRequest", "format_names", "matrix_form", "read_problem",
           "register_format", "write_problem"]
