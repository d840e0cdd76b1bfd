"""Matrix Market (.mtx) coordinate and array files, read and written by our own code.

Supports ``matrix coordinate|array real|integer|pattern general|symmetric|skew-symmetric``;
symmetric storage is expanded to the full matrix.  Indices are 1-based (the standard's rule).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from .safety import bad_line, read_text

FIELDS = {"real", "integer", "pattern", "double"}
SYMMETRIES = {"general", "symmetric", "skew-symmetric"}


def read_mtx(p: Path) -> Any:
    """A scipy.sparse CSR array (coordinate) or ndarray (array) from a Matrix Market file."""
    lines = read_text(p).splitlines()
    if not lines or not lines[0].lower().startswith("%%matrixmarket"):
        raise bad_line(p, 1, "missing the '%%MatrixMarket matrix ...' header line")
    head = lines[0].lower().split()
    if len(head) != 5 or head[1] != "matrix" or head[2] not in ("coordinate", "array") \
            or head[3] not in FIELDS or head[4] not in SYMMETRIES:
        raise bad_line(p, 1, f"unsupported header {lines[0]!r}; expected "
                              "'%%MatrixMarket matrix coordinate|array real|integer|pattern general|symmetric'")
    body = [(k + 1, ln) for k, ln in enumerate(lines[1:], start=1) if ln.strip() and not ln.lstrip().startswith("%")]
    if not body:
        raise bad_line(p, len(lines), "missing the size line")
    if head[2] == "coordinate":
        return _coordinate(p, body, head[3], head[4])
    return _array(p, body, head[4])


def _ints(p: Path, lineno: int, tokens: list[str], count: int, what: str) -> list[int]:
    if len(tokens) != count:
        raise bad_line(p, lineno, f"expected {what}, got {' '.join(tokens)!r}")
    try:
        return [int(t) for t in tokens]
    except ValueError:
        raise bad_line(p, lineno, f"expected integers for {what}, got {' '.join(tokens)!r}") from None


def _coordinate(p: Path, body: list[tuple[int, str]], field: str, symmetry: str) -> Any:
    import scipy.sparse as sp

    lineno, size = body[0]
    rows_n, cols_n, nnz = _ints(p, lineno, size.split(), 3, "'rows cols entries'")
    entries = body[1:]
    if len(entries) != nnz:
        raise bad_line(p, entries[-1][0] if entries else lineno, f"the size line promises {nnz} entries, found {len(entries)}")
    width = 2 if field == "pattern" else 3
    r = np.empty(nnz, dtype=np.int64)
    c = np.empty(nnz, dtype=np.int64)
    v = np.ones(nnz)
    for k, (ln, text) in enumerate(entries):
        tok = text.split()
        if len(tok) != width:
            raise bad_line(p, ln, f"expected {width} values per entry, got {text.strip()!r}")
        i, j = _ints(p, ln, tok[:2], 2, "'row col'")
        if not (1 <= i <= rows_n and 1 <= j <= cols_n):
            raise bad_line(p, ln, f"index ({i}, {j}) outside the {rows_n}×{cols_n} matrix (indices are 1-based)")
        r[k], c[k] = i - 1, j - 1
        if width == 3:
            v[k] = _number(p, ln, tok[2])
    m = sp.coo_array((v, (r, c)), shape=(rows_n, cols_n))
    if symmetry != "general":
        sign = 1.0 if symmetry == "symmetric" else -1.0
        off = r != c
        m = sp.coo_array((np.concatenate([v, sign * v[off]]), (np.concatenate([r, c[off]]), np.concatenate([c, r[off]]))),
                         shape=(rows_n, cols_n))
    out = sp.csr_array(m)
    out.sum_duplicates()
    return out


def _number(p: Path, lineno: int, token: str) -> float:
    try:
        value = float(token)
    except ValueError:
        raise bad_line(p, lineno, f"{token!r} is not a number") from None
    if not np.isfinite(value):
        raise bad_line(p, lineno, f"{token!r} is not finite")
    return value


def _array(p: Path, body: list[tuple[int, str]], symmetry: str) -> np.ndarray:
    lineno, size = body[0]
    rows_n, cols_n = _ints(p, lineno, size.split(), 2, "'rows cols'")
    values = [_number(p, ln, t) for ln, text in body[1:] for t in text.split()]
    if symmetry == "general":
        if len(values) != rows_n * cols_n:
            raise bad_line(p, body[-1][0], f"expected {rows_n * cols_n} values, found {len(values)}")
        return np.array(values).reshape(cols_n, rows_n).T.copy()  # column-major by the standard
    n = rows_n
    need = n * (n + 1) // 2 if symmetry == "symmetric" else n * (n - 1) // 2
    if rows_n != cols_n or len(values) != need:
        raise bad_line(p, body[-1][0], f"expected {need} values of a {n}×{n} {symmetry} matrix, found {len(values)}")
    out = np.zeros((n, n))
    it = iter(values)
    for j in range(n):
        for i in range(j if symmetry == "symmetric" else j + 1, n):
            out[i, j] = next(it)
            out[j, i] = out[i, j] if symmetry == "symmetric" else -out[i, j]
    return out


def write_mtx(matrix: Any, path: Path, comment: str = "") -> None:
    """Write a matrix in coordinate real general form (full precision)."""
    import scipy.sparse as sp

    m = sp.coo_array(matrix)
    lines = ["%%MatrixMarket matrix coordinate real general"]
    if comment:
        lines += [f"% {c}" for c in comment.splitlines()]
    lines.append(f"{m.shape[0]} {m.shape[1]} {m.nnz}")
    lines += [f"{i + 1} {j + 1} {v!r}" for i, j, v in zip(m.row.tolist(), m.col.tolist(), m.data.tolist())]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
