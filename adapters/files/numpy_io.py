"""NumPy .npy/.npz files, always with ``allow_pickle=False``.

A .npy holds one square matrix.  A .npz is either a scipy.sparse archive
(``scipy.sparse.save_npz``) or holds named arrays: ``Q`` [``offset``] for a QUBO,
``J`` [``h``, ``offset``] for an Ising model, or ``matrix`` alone.

Every array's header is read first, and its declared shape and type are checked
against the file and the memory limits before any data is read or decompressed: a
small compressed entry may declare an array of any size.
"""

from __future__ import annotations

import zipfile
from pathlib import Path
from typing import IO, Any

import numpy as np

from spinward.core.errors import FileFormatError

from ..validate import check_dense_memory, memory_limit

SPARSE_KEYS = {"format", "shape", "data"}
ARCHIVE_KEYS = {"matrix", "Q", "J", "h", "offset"}
#: numpy's header parser and zipfile raise many kinds of error on damaged input (ValueError, EOFError,
#: BadZipFile, zlib.error, SyntaxError and tokenize errors from the header, RuntimeError for encrypted
#: members...): any of them means the file cannot be read as a numeric array without pickle.
DAMAGED = (Exception,)


def _header(fh: IO[bytes]) -> tuple[tuple[int, ...], np.dtype]:
    """The declared shape and dtype of the .npy stream ``fh`` (nothing else is read)."""
    version = np.lib.format.read_magic(fh)
    if version == (1, 0):
        shape, _, dtype = np.lib.format.read_array_header_1_0(fh)
    else:
        shape, _, dtype = np.lib.format.read_array_header_2_0(fh)
    return tuple(int(s) for s in shape), dtype


def _check_declared(p: Path, name: str, shape: tuple[int, ...], dtype: np.dtype) -> int:
    """Refuse object arrays and arrays larger than memory; the declared size in bytes."""
    if dtype.hasobject:
        raise FileFormatError(f"{p}: {name} holds Python objects, which cannot be read without pickle (never used here); save a numeric array")
    size = int(np.prod(shape, dtype=object)) * dtype.itemsize
    limit = memory_limit()
    if size > limit:
        raise FileFormatError(f"{p}: {name} declares a {'×'.join(map(str, shape))} array of {dtype} "
                              f"({size / 2**30:.1f} GiB), more than the {limit / 2**30:.1f} GiB available; "
                              f"the file is damaged, or the problem needs a sparse matrix")
    if len(shape) == 2 and shape[0] == shape[1] and shape[0] > 0:
        check_dense_memory(shape[0], what=f"{name} ({shape[0]}×{shape[1]})")
    return size


def read_npy(p: Path) -> np.ndarray:
    try:
        with open(p, "rb") as fh:
            shape, dtype = _header(fh)
            left = p.stat().st_size - fh.tell()
    except DAMAGED as exc:
        raise FileFormatError(f"{p}: cannot read as .npy without pickle ({exc})") from None
    declared = _check_declared(p, "the array", shape, dtype)
    if declared > left:
        raise FileFormatError(f"{p}: the header declares {declared} bytes of data, but the file holds {left}; "
                              f"the file is truncated")
    try:
        return np.load(p, allow_pickle=False)
    except DAMAGED as exc:
        raise FileFormatError(f"{p}: cannot read as .npy without pickle ({exc})") from None


def read_npz(p: Path) -> dict[str, Any]:
    """The archive's arrays by name (a sparse archive comes back as {'matrix': csr}), checked before reading."""
    try:
        with zipfile.ZipFile(p) as archive:
            members = {info.filename: info for info in archive.infolist()}
            for member in members:
                if not member.endswith(".npy"):
                    raise FileFormatError(f"{p}: the archive member {member!r} is not a .npy array")
                with archive.open(member) as fh:
                    shape, dtype = _header(fh)
                _check_declared(p, f"array {member[:-4]!r}", shape, dtype)
        keys = {m[:-4] for m in members}
        if SPARSE_KEYS <= keys:
            import scipy.sparse as sp

            matrix = sp.csr_array(sp.load_npz(p))
            matrix.check_format(full_check=True)  # indices within the shape, pointers in order
            return {"matrix": matrix}
        with np.load(p, allow_pickle=False) as loaded:
            return {k: loaded[k] for k in keys}
    except FileFormatError:
        raise
    except DAMAGED as exc:
        raise FileFormatError(f"{p}: cannot read as .npz without pickle ({exc})") from None


def archive_offset(p: Path, arrays: dict[str, Any]) -> Any:
    """The archive's 'offset': one real number (0 when absent), as a Python int or float."""
    if "offset" not in arrays:
        return 0.0
    raw = np.asarray(arrays["offset"])
    if raw.dtype.kind not in "biuf":
        raise FileFormatError(f"{p}: 'offset' must be a number, got an array of dtype {raw.dtype}")
    if raw.size != 1 or raw.ndim > 1:
        raise FileFormatError(f"{p}: 'offset' must be one number (shape ()), got shape {raw.shape}")
    return raw.reshape(()).item()


def check_archive_keys(p: Path, arrays: dict[str, Any]) -> None:
    unknown = sorted(set(arrays) - ARCHIVE_KEYS)
    if unknown:
        raise FileFormatError(f"{p}: unknown array(s) {', '.join(map(repr, unknown))}; an archive holds 'Q' "
                              f"[and 'offset'] for a QUBO, 'J' [and 'h', 'offset'] for an Ising model, or 'matrix'")
