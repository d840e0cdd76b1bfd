"""Matrix Market (.mtx) files: read by ``scipy.io.mmread``, validated here; written by our own code.

Supports ``matrix coordinate|array real|integer|pattern general|symmetric|skew-symmetric``;
symmetric storage is expanded to the full matrix.  Indices are 1-based (the standard's
rule), and the problem's labels keep that numbering (1..n).

Reading: the header and the size line are checked first, before anything of the declared
size is allocated (a problem matrix is square, and the file must be long enough to hold the
entries it declares).  ``scipy.io.mmread`` then parses the body in C++.  Its result is
checked against the text where scipy is lenient: an integer field holding decimals, a line
with too many fields, non-finite values, and integers beyond 2**53.  Whenever scipy fails or
a check is not met, our own line parser reads the file again: it reads what is valid and
names the line of anything that is not.
"""

from __future__ import annotations

import io
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..validate import EXACT_INT, check_dense_memory
from .safety import bad_line, decode_text, has_control_bytes, parse_number, read_bytes

FIELDS = {"real", "integer", "pattern", "double"}
SYMMETRIES = {"general", "symmetric", "skew-symmetric"}
#: the fewest bytes one value (array) or one entry (coordinate) takes on its line
MIN_VALUE_BYTES, MIN_ENTRY_BYTES = 2, 4
INTEGER = re.compile(r"[+-]?[0-9]+\Z")


@dataclass(frozen=True)
class Header:
    layout: str  # "coordinate" or "array"
    field: str
    symmetry: str
    n: int
    entries: int  # declared entries (coordinate) or stored values (array)
    size_line: int  # 1-based line number of the size line
    body_start: int  # byte offset of the first line after the size line

    @property
    def width(self) -> int:
        """Fields per body line."""
        if self.layout == "array":
            return 1
        return 2 if self.field == "pattern" else 3


def read_mtx(p: Path) -> Any:
    """A scipy.sparse COO array (coordinate) or ndarray (array) from a Matrix Market file."""
    data = read_bytes(p)
    head = read_header(p, data)
    matrix = _scipy_read(p, data, head)
    return matrix if matrix is not None else parse_mtx(p)


def read_header(p: Path, data: bytes) -> Header:
    """The banner and size line, checked before anything of the declared size is allocated."""
    end = _line_end(data, 0)
    kind = _banner(p, decode_text(p, data[:end]).strip())
    offset, lineno = end + 1, 2
    while offset <= len(data):
        end = _line_end(data, offset)
        text = decode_text(p, data[offset:end])
        if text.strip() and not text.lstrip().startswith("%"):
            return _size_line(p, lineno, text, kind, end + 1, len(data))
        offset, lineno = end + 1, lineno + 1
    raise bad_line(p, lineno - 1, "missing the size line")


def _line_end(data: bytes, start: int) -> int:
    end = data.find(b"\n", start)
    return len(data) if end < 0 else end


def _banner(p: Path, banner: str) -> tuple[str, str, str]:
    if not banner.lower().startswith("%%matrixmarket"):
        raise bad_line(p, 1, "missing the '%%MatrixMarket matrix ...' header line")
    head = banner.lower().split()
    if len(head) != 5 or head[1] != "matrix" or head[2] not in ("coordinate", "array") \
            or head[3] not in FIELDS or head[4] not in SYMMETRIES:
        raise bad_line(p, 1, f"unsupported header {banner!r}; expected '%%MatrixMarket matrix "
                             f"coordinate|array real|integer|pattern general|symmetric|skew-symmetric'")
    if head[2] == "array" and head[3] == "pattern":
        raise bad_line(p, 1, "an array file cannot have the 'pattern' field; use real or integer")
    return head[2], head[3], head[4]


def _size_line(p: Path, lineno: int, text: str, kind: tuple[str, str, str], offset: int, size: int) -> Header:
    layout, field, symmetry = kind
    count = 3 if layout == "coordinate" else 2
    numbers = _ints(p, lineno, text.split(), count, "'rows cols entries'" if count == 3 else "'rows cols'")
    if any(v < 0 for v in numbers):
        raise bad_line(p, lineno, f"the size line declares a negative size ({text.strip()!r}); sizes count "
                                  f"rows, columns and entries, from 0 up")
    rows, cols = numbers[:2]
    if rows != cols:
        raise bad_line(p, lineno, f"a problem matrix is square, but the size line declares {rows}×{cols}")
    if layout == "coordinate":
        entries, least = numbers[2], numbers[2] * MIN_ENTRY_BYTES
    else:
        entries = rows * rows if symmetry == "general" else rows * (rows + (1 if symmetry == "symmetric" else -1)) // 2
        least = entries * MIN_VALUE_BYTES
    if least > size:
        raise bad_line(p, lineno, f"the size line declares {entries} {'entries' if layout == 'coordinate' else 'values'}, "
                                  f"more than a file of {size} bytes can hold; the file is truncated or the size is wrong")
    if layout == "array":
        check_dense_memory(rows, what=f"the dense {rows}×{rows} matrix of {p.name}")
    return Header(layout, field, symmetry, rows, entries, lineno, offset)


def _ints(p: Path, lineno: int, tokens: list[str], count: int, what: str) -> list[int]:
    if len(tokens) != count:
        raise bad_line(p, lineno, f"expected {what}, got {' '.join(tokens)!r}")
    try:
        return [int(t) for t in tokens]
    except ValueError:
        raise bad_line(p, lineno, f"expected integers for {what}, got {' '.join(tokens)!r}") from None


def _scipy_read(p: Path, data: bytes, head: Header) -> Any:
    """scipy's reading when the text is one scipy reads faithfully, else None (our parser then reads it).

    scipy reads the longest number at the start of each field and ignores the rest of the
    field ('1,5' as 1, '0x10' as 0, '1.2.3' as 1.2), fills a short symmetric array with
    zeros, and crashes on a NUL byte, on a last line holding two values or ending in blanks
    without a newline, and on an empty array; so the text is checked first, and scipy is
    given exactly the checked bytes.
    """
    import scipy.io

    if not _scipy_reads_faithfully(data, head):
        return None
    try:
        m = scipy.io.mmread(io.BytesIO(data if data.endswith(b"\n") else data + b"\n"), spmatrix=False)
    except Exception:  # noqa: BLE001 - any failure: our parser names the line, or reads what scipy refused
        return None
    if tuple(m.shape) != (head.n, head.n):
        return None
    values = m.data if hasattr(m, "row") else m
    if values.size and not (np.all(np.isfinite(values)) and float(np.abs(values).max()) < EXACT_INT):
        return None  # non-finite values, or integers our parser must check: it names the line
    return m


def _scipy_reads_faithfully(data: bytes, head: Header) -> bool:
    """Printable header, well-formed numbers, integers in an integer field, ``width`` fields on each entry's line."""
    start = head.body_start
    if head.n == 0 or head.entries == 0 or has_control_bytes(data[:start]):
        return False  # (an empty array makes scipy divide by zero; our parser reads empty files at once)
    skeleton = number_skeleton(data, start)
    if skeleton is None:
        return False
    if head.field != "real" and (skeleton == ord(".")).any() | (skeleton == ord("e")).any():
        return False  # a point or an exponent in an integer or pattern field, or in a real field's indices below
    if head.width == 1 and data.find(b" ", start) < 0 and data.find(b"\t", start) < 0:  # an array file
        if head.symmetry == "general":
            return True  # one field per line, and scipy counts the lines of a general array itself
        lines = data.count(b"\n", start) + (1 if len(data) > start and not data.endswith(b"\n") else 0)
        if lines == head.entries and data.find(b"\n\n", start) < 0 and not data.startswith(b"\n", start):
            return True  # one field per line, no blank line: as many fields as lines, with no need to count
    if head.width > 1 and _single_spaced_lines(data, start, skeleton, head.width):
        return True
    return _fields_per_line_are(data, start, head.width, head.entries)


def _single_spaced_lines(data: bytes, start: int, skeleton: np.ndarray, width: int) -> bool:
    """Coordinate lines 'i j [v]' with one space between fields: checked on the skeleton alone.

    With single spaces and no blanks at the ends of lines, the skeleton of a line (digits and
    signs deleted) is width − 1 spaces and then the value's points and exponents: so the two
    integer indices hold neither, and no line holds a field too many or too few.
    """
    if any(data.find(x, start) >= 0 for x in (b"\t", b"\r", b"  ", b" \n", b"\n ")) or data.startswith(b" ", start):
        return False
    sk = skeleton if not data.endswith(b"\n") else skeleton[:-1]
    line_starts = np.concatenate(([0], np.flatnonzero(sk == ord("\n")) + 1))
    padded = np.concatenate((sk, np.full(width, ord("\n"), dtype=np.uint8)))
    for k in range(width - 1):
        if not np.all(padded[line_starts + k] == ord(" ")):
            return False
    return not np.any(padded[line_starts + width - 1] == ord(" "))


DIGIT, BLANK, DOT, SIGN, EXPONENT, OTHER = range(6)
_CLASSES = bytes(DIGIT if 48 <= b <= 57 else BLANK if b in b" \t\r\n" else DOT if b == 46 else SIGN if b in b"+-"
                 else EXPONENT if b in b"eE" else OTHER for b in range(256))


_E_AS_e = bytes.maketrans(b"E", b"e")


def number_skeleton(data: bytes, start: int = 0) -> np.ndarray | None:
    """The skeleton of ``data[start:]`` (digits and signs deleted, e as e) when every field is a well-formed
    number that scipy would not read in part; else None.

    At C speed, without copying the text: only number bytes; a sign opens a field or follows
    an exponent, and precedes a digit or point; an exponent follows a digit or point and
    precedes a digit or sign; within a field at most one point and one exponent, the point
    first (checked on the skeleton).  Fields without digits ('.', '-', 'e5') are left to
    scipy, which refuses them.
    """
    cls = np.frombuffer(data.translate(_CLASSES), dtype=np.uint8)[start:]
    special = np.flatnonzero(cls >= SIGN)
    if special.size:
        c = cls[special]
        if (c == OTHER).any():
            return None
        prev = np.where(special > 0, cls[np.maximum(special - 1, 0)], BLANK)
        nxt = np.where(special < cls.size - 1, cls[np.minimum(special + 1, cls.size - 1)], BLANK)
        sign, exponent = c == SIGN, c == EXPONENT
        if (sign & (((prev != BLANK) & (prev != EXPONENT)) | ((nxt != DIGIT) & (nxt != DOT)))).any():
            return None
        if (exponent & (((prev != DIGIT) & (prev != DOT)) | ((nxt != DIGIT) & (nxt != SIGN)))).any():
            return None
    skip = len(data[:start].translate(_E_AS_e, b"0123456789+-"))
    skeleton = np.frombuffer(data.translate(_E_AS_e, b"0123456789+-"), dtype=np.uint8)[skip:]
    a, b = skeleton[:-1], skeleton[1:]  # neighbours in the skeleton: blanks between fields are kept
    if (((b == ord(".")) & ((a == ord(".")) | (a == ord("e")))) | ((a == ord("e")) & (b == ord("e")))).any():
        return None
    return skeleton


def well_formed_numbers(data: bytes, start: int = 0) -> bool:
    """Whether every blank-separated field of ``data[start:]`` is a number scipy reads whole (see number_skeleton)."""
    return number_skeleton(data, start) is not None


def _fields_per_line_are(data: bytes, start: int, width: int, lines: int) -> bool:
    """Whether ``data[start:]`` holds ``lines`` non-blank lines of exactly ``width`` fields each (vectorised)."""
    arr = np.frombuffer(data, dtype=np.uint8)[start:]
    printable = arr > 32
    if not printable.any():
        return lines == 0
    starts = np.flatnonzero(printable[1:] & ~printable[:-1]) + 1
    if printable[0]:
        starts = np.concatenate(([0], starts))
    if starts.size != width * lines:
        return False
    line_of = np.searchsorted(np.flatnonzero(arr == 10), starts)
    per_line = np.bincount(line_of)
    per_line = per_line[per_line > 0]
    if per_line.size != lines or not np.all(per_line == width):
        return False
    if width == 1:
        return True
    # every line holds `width` fields, so field k is column k % width: the two index columns hold integers
    decimal = np.flatnonzero((arr == ord(".")) | (arr == ord("e")) | (arr == ord("E")))
    column = (np.searchsorted(starts, decimal, side="right") - 1) % width
    return not np.any(column < 2)


def parse_mtx(p: Path) -> Any:
    """Our line parser: reads a valid file, or names the line of the first defect."""
    lines = decode_text(p, read_bytes(p)).splitlines()
    head = read_header(p, "\n".join(lines).encode())
    body = [(k, ln) for k, ln in enumerate(lines[head.size_line:], start=head.size_line + 1)
            if ln.strip() and not ln.lstrip().startswith("%")]
    if head.layout == "coordinate":
        return _coordinate(p, head, body)
    return _array(p, head, body)


def _coordinate(p: Path, head: Header, entries: list[tuple[int, str]]) -> Any:
    import scipy.sparse as sp

    if len(entries) != head.entries:
        last = entries[-1][0] if entries else head.size_line
        raise bad_line(p, last, f"the size line promises {head.entries} entries, found {len(entries)}")
    n = head.n
    r = np.empty(len(entries), dtype=np.int64)
    c = np.empty(len(entries), dtype=np.int64)
    v = np.ones(len(entries))
    for k, (ln, text) in enumerate(entries):
        tok = text.split()
        if len(tok) != head.width:
            raise bad_line(p, ln, f"expected {head.width} values per entry, got {text.strip()!r}")
        i, j = _ints(p, ln, tok[:2], 2, "'row col'")
        if not (1 <= i <= n and 1 <= j <= n):
            raise bad_line(p, ln, f"index ({i}, {j}) outside the {n}×{n} matrix (indices are 1-based)")
        r[k], c[k] = i - 1, j - 1
        if head.width == 3:
            v[k] = _number(p, ln, tok[2], head.field)
    if head.symmetry != "general":
        sign = 1.0 if head.symmetry == "symmetric" else -1.0
        off = r != c
        r, c, v = np.concatenate([r, c[off]]), np.concatenate([c, r[off]]), np.concatenate([v, sign * v[off]])
    return sp.coo_array((v, (r, c)), shape=(n, n))


def _number(p: Path, lineno: int, token: str, field: str) -> float:
    if field == "integer" or INTEGER.match(token):
        try:
            value = int(token)
        except ValueError:
            raise bad_line(p, lineno, f"{token!r} is not an integer (the header declares the integer field)") from None
        if abs(value) > EXACT_INT:
            raise bad_line(p, lineno, f"the integer {token} is beyond 2**53, where float64 is no longer exact; "
                                      f"divide the matrix by a common factor")
        return float(value)
    number = parse_number(token)
    if number is None:
        raise bad_line(p, lineno, f"{token!r} is not a number")
    if not np.isfinite(number):
        raise bad_line(p, lineno, f"{token!r} is not finite")
    return number


def _array(p: Path, head: Header, body: list[tuple[int, str]]) -> np.ndarray:
    values = [_number(p, ln, t, head.field) for ln, text in body for t in text.split()]
    n = head.n
    if len(values) != head.entries:
        last = body[-1][0] if body else head.size_line
        raise bad_line(p, last, f"expected {head.entries} values of a {n}×{n} {head.symmetry} matrix, "
                                f"found {len(values)}")
    if head.symmetry == "general":
        return np.array(values).reshape(n, n).T.copy()  # column-major by the standard
    out = np.zeros((n, n))
    it = iter(values)
    for j in range(n):
        for i in range(j if head.symmetry == "symmetric" else j + 1, n):
            out[i, j] = next(it)
            out[j, i] = out[i, j] if head.symmetry == "symmetric" else -out[i, j]
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
