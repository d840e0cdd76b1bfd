"""Weighted edge lists, read as a MaxCut without building a networkx graph.

Two text layouts share this reader:

- an edge list (``.txt``, ``.edges``...): ``u v [weight]`` per line, separated by
  whitespace (commas are read as whitespace too); ``#`` and ``%`` start comments,
  also at the end of a line; a line with a single node declares an isolated node;
- CSV (``.csv``): ``u,v[,weight]`` per record, with an optional header line; lines
  starting with ``#`` or ``%`` are comments; fields may be quoted.  The first record
  is a header when its third field is not a number, or, in a two-column file whose
  labels are integers, when its two fields are not integers.  With a header, the
  weight is the column named by ``weight=`` (default: one named "weight", else the
  third column), and further columns are ignored.

A missing weight is 1; parallel lines add up.  Labels are integers when every label
is one (then in ascending order), else strings (in order of first appearance).  A
UTF-8 byte-order mark is ignored; a label holding a control character is refused.
Weights written as integers beyond 2**53 are refused (float64 would round them).

Speed: files of integer labels are parsed by numpy's C reader (``numpy.loadtxt``);
anything that reader refuses is read again line by line, which either reads it
(string labels, isolated nodes, mixed layouts) or names the offending line.
"""

from __future__ import annotations

import csv
import io
import re
import warnings
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Iterator

import numpy as np

from spinward.core.errors import FileFormatError

from ..graph import MaxCut
from ..validate import EXACT_INT
from .safety import bad_line, check_label, decode_text, has_control_bytes, parse_number, read_bytes

COMMENT_CHARS = ("#", "%")
SEPARATORS = re.compile(r"[ \t,]+")
INTEGER = re.compile(r"\s*[+-]?[0-9]+\s*\Z")  # ASCII digits only: int() would also take other scripts' digits


@dataclass
class Layout:
    """Where the records start and which columns hold the endpoints and the weight."""

    delimiter: str | None  # None: whitespace (an edge list); ",": CSV
    header_line: int = 0  # 1-based line of the header, 0 when there is none
    weight_column: int | None = 2  # None: unweighted
    width: int = 3  # fields per record on the first record (2 or 3 without a header)


@dataclass
class Parsed:
    """Edges as label tokens, before the labels are numbered."""

    nodes: list[str] = field(default_factory=list)
    heads: list[str] = field(default_factory=list)
    tails: list[str] = field(default_factory=list)
    weights: list[float] = field(default_factory=list)


def read_edge_list(p: Path, *, weight: str | None = None) -> MaxCut:
    """A whitespace-separated edge list (see the module docstring)."""
    if weight is not None:
        raise FileFormatError(f"{p}: an edge list has no column names, so weight={weight!r} cannot apply; "
                              f"put the weight third on each line, or use CSV with a header")
    return _read(p, Layout(delimiter=None), weight)


def read_csv_edges(p: Path, *, weight: str | None = None) -> MaxCut:
    """A CSV edge list ``u,v[,weight]`` with an optional header (see the module docstring)."""
    return _read(p, Layout(delimiter=","), weight)


def _read(p: Path, layout: Layout, weight: str | None) -> MaxCut:
    data = read_bytes(p)
    text = decode_text(p, data)
    _find_layout(p, text, layout, weight)
    fast = _numeric_fast(data, text, layout)
    if fast is not None:
        return fast
    return _build(p, _parse_lines(p, text, layout))


def _records(text: str, delimiter: str | None) -> Iterator[tuple[int, list[str]]]:
    """(line number, fields) of each record, comments and blank lines skipped."""
    lines = enumerate(io.StringIO(text, newline=None), start=1)
    if delimiter is None:
        for lineno, raw in lines:
            body = raw.split("#", 1)[0].split("%", 1)[0]
            fields = SEPARATORS.split(body.strip(" \t\r\n"))  # not str.split(): it also splits at control characters
            if fields != [""]:
                yield lineno, fields
        return
    at = [0]

    def data_lines() -> Iterator[str]:
        for lineno, raw in lines:
            if raw.strip() and not raw.lstrip().startswith(COMMENT_CHARS):
                at[0] = lineno
                yield raw

    for fields in csv.reader(data_lines(), delimiter=delimiter, strict=True):
        yield at[0], [f.strip(" \t") for f in fields]  # not str.strip(): it would drop control characters


def _is_number(token: str) -> bool:
    return parse_number(token) is not None


def _find_layout(p: Path, text: str, layout: Layout, weight: str | None) -> None:
    """Detect a CSV header and choose the weight column; a plain edge list has neither."""
    records = _records(text, layout.delimiter)
    try:
        first = next(records, None)
        second = next(records, None) if first else None
    except csv.Error as exc:
        raise FileFormatError(f"{p}: malformed CSV ({exc})") from None
    if first is None:
        if weight is not None:
            raise FileFormatError(f"{p}: weight={weight!r} names a column, but the file has no header line")
        return
    lineno, fields = first
    layout.width = len(fields)
    layout.weight_column = 2 if len(fields) >= 3 else None
    if layout.delimiter is not None and _is_header(fields, second):
        layout.header_line = lineno
        layout.weight_column = _weight_column(p, lineno, fields, weight)
    elif weight is not None:
        raise FileFormatError(f"{p}: weight={weight!r} names a column, but the file has no header line "
                              f"(line {lineno} holds data)")


def _is_header(fields: list[str], second: tuple[int, list[str]] | None) -> bool:
    if len(fields) >= 3:
        return not _is_number(fields[2])
    if len(fields) == 2 and not any(INTEGER.match(f) for f in fields):
        return second is not None and len(second[1]) >= 2 and all(INTEGER.match(f) for f in second[1][:2])
    return False


def _weight_column(p: Path, lineno: int, names: list[str], weight: str | None) -> int | None:
    if len(names) < 2:
        raise bad_line(p, lineno, f"a header names at least the two endpoint columns, got {names!r}")
    if weight is not None:
        if weight not in names[2:]:
            raise bad_line(p, lineno, f"no column named {weight!r} after the two endpoints; the header "
                                      f"names {', '.join(map(repr, names))}")
        return names.index(weight, 2)
    if "weight" in names[2:]:
        return names.index("weight", 2)
    return 2 if len(names) >= 3 else None


def _numeric_fast(data: bytes, text: str, layout: Layout) -> MaxCut | None:
    """numpy's C parser for integer labels; None whenever the line parser must look instead."""
    if (layout.width not in (2, 3) and not layout.header_line) or b'"' in data or has_control_bytes(data):
        return None
    columns = (0, 1) if layout.weight_column is None else (0, 1, layout.weight_column)
    dtype = [("u", np.int64), ("v", np.int64)] + ([("w", np.float64)] if len(columns) == 3 else [])
    # numpy parses one comment character in C, but several through a Python loop per line
    comments = [c for c in COMMENT_CHARS if c.encode() in data] or "#"
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # "no data" and parsing warnings: the line parser decides
            rec = np.loadtxt(io.StringIO(text), dtype=dtype, comments=comments,
                             delimiter=layout.delimiter, skiprows=layout.header_line, ndmin=1,
                             usecols=columns if layout.header_line else None)
    except (ValueError, IndexError, OverflowError):
        return None
    if rec.size == 0:
        return None
    w = rec["w"] if len(columns) == 3 else None
    if w is not None and not (np.all(np.isfinite(w)) and float(np.abs(w).max()) < EXACT_INT):
        return None  # the line parser names a non-finite weight, or checks an integer beyond 2**53
    labels, heads, tails = _number_integers(rec["u"], rec["v"])
    return MaxCut.from_edges(heads, tails, w, labels=labels)


def _number_integers(u: np.ndarray, v: np.ndarray) -> tuple[tuple[int, ...], np.ndarray, np.ndarray]:
    """Distinct integer labels in ascending order, and each endpoint's index among them."""
    ends = np.concatenate([u, v])
    lo, hi = int(ends.min()), int(ends.max())
    if hi - lo <= 4 * ends.size + 1024:  # a presence table: linear time, no sort
        present = np.zeros(hi - lo + 1, dtype=bool)
        present[ends - lo] = True
        position = np.cumsum(present) - 1
        labels = np.flatnonzero(present) + lo
        return tuple(labels.tolist()), position[u - lo], position[v - lo]
    labels, inverse = np.unique(ends, return_inverse=True)
    return tuple(labels.tolist()), inverse[:u.size], inverse[u.size:]


def _parse_lines(p: Path, text: str, layout: Layout) -> Parsed:
    out = Parsed()
    try:
        for lineno, fields in _records(text, layout.delimiter):
            if lineno == layout.header_line:
                continue
            _add_record(p, lineno, fields, layout, out)
    except csv.Error as exc:
        raise FileFormatError(f"{p}: malformed CSV ({exc})") from None
    return out


def _add_record(p: Path, lineno: int, fields: list[str], layout: Layout, out: Parsed) -> None:
    if len(fields) == 1 and layout.delimiter is not None and re.search(r"[;\t|]", fields[0]):
        raise bad_line(p, lineno, f"one field {fields[0]!r}: CSV fields are separated by commas (read a "
                                  f"whitespace-separated file with format 'edgelist')")
    for token in fields[:2]:
        check_label(p, lineno, token)
        if not token:
            raise bad_line(p, lineno, "an empty label; every endpoint needs a name")
    if len(fields) == 1:
        out.nodes.append(fields[0])
        return
    if not layout.header_line and len(fields) > 3:
        what = "'u v [weight]'" if layout.delimiter is None else "'u,v[,weight]'"
        raise bad_line(p, lineno, f"expected {what}, got {len(fields)} fields")
    col = layout.weight_column if layout.header_line else (2 if len(fields) == 3 else None)
    if col is not None and col >= len(fields):
        raise bad_line(p, lineno, f"expected a weight in column {col + 1}, got {len(fields)} fields")
    out.heads.append(fields[0])
    out.tails.append(fields[1])
    out.weights.append(1.0 if col is None else _weight(p, lineno, fields[col]))


def _weight(p: Path, lineno: int, token: str) -> float:
    if INTEGER.match(token):
        value = int(token)
        if abs(value) > EXACT_INT:
            raise bad_line(p, lineno, f"the weight {token.strip()} is an integer beyond 2**53, where float64 is "
                                      f"no longer exact; divide the weights by a common factor")
        return float(value)
    w = parse_number(token)
    if w is None:
        raise bad_line(p, lineno, f"weight {token!r} is not a number")
    if not np.isfinite(w):
        raise bad_line(p, lineno, f"weight {token!r} is not finite")
    return w


def _build(p: Path, parsed: Parsed) -> MaxCut:
    tokens = parsed.nodes + parsed.heads + parsed.tails
    if tokens and all(INTEGER.match(t) for t in tokens):
        ints = [int(t) for t in tokens]
        labels: list[Any] = sorted(set(ints))
        keys: list[Any] = ints
    else:
        labels = list(dict.fromkeys(tokens))
        keys = tokens
    index = {label: k for k, label in enumerate(labels)}
    m = len(parsed.heads)
    start = len(parsed.nodes)
    heads = np.fromiter((index[k] for k in keys[start:start + m]), dtype=np.int64, count=m)
    tails = np.fromiter((index[k] for k in keys[start + m:]), dtype=np.int64, count=m)
    return MaxCut.from_edges(heads, tails, np.asarray(parsed.weights, dtype=np.float64), labels=labels)


def write_edge_list(form: MaxCut, path: Path) -> None:
    """Write ``u v weight`` lines (weights at full precision) and a line per isolated node."""
    labels = [str(x) for x in form.labels]
    for label in labels:
        if not label or re.search(r"[\s#%,]", label) or re.search("[\x00-\x1f\x7f-\x9f]", label):
            raise FileFormatError(f"the label {label!r} cannot be written to an edge list (it is empty or holds "
                                  f"whitespace, a comma, '#', '%' or a control character); write JSON instead")
    heads, tails, weights = form.edge_arrays()
    degree = np.bincount(np.concatenate([heads, tails]), minlength=len(labels))
    lines = [f"# {len(labels)} nodes, {len(weights)} edges: u v weight"]
    lines += [labels[k] for k in np.flatnonzero(degree == 0).tolist()]
    lines += [f"{labels[a]} {labels[b]} {c!r}" for a, b, c in zip(heads.tolist(), tails.tolist(), weights.tolist())]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
