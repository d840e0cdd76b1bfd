"""NumPy .npy/.npz files, always with ``allow_pickle=False``.

A .npy holds one square matrix.  A .npz is either a scipy.sparse archive
(``scipy.sparse.save_npz``) or holds named arrays: ``Q`` [``offset``] for a QUBO,
``J`` [``h``, ``offset``] for an Ising model.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from spinward.core.errors import FileFormatError

SPARSE_KEYS = {"format", "shape", "data"}
#: numpy's header parser and zipfile raise many kinds of error on damaged input (ValueError, EOFError,
#: BadZipFile, zlib.error, SyntaxError and tokenize errors from the header, RuntimeError for encrypted
#: members...): any of them means the file cannot be read as a numeric array without pickle.
DAMAGED = (Exception,)


def read_npy(p: Path) -> np.ndarray:
    try:
        return np.load(p, allow_pickle=False)
    except DAMAGED as exc:
        raise FileFormatError(f"{p}: cannot read as .npy without pickle ({exc})") from None


def read_npz(p: Path) -> dict[str, Any]:
    """The archive's arrays by name; a sparse archive comes back as {'matrix': csr}."""
    try:
        with np.load(p, allow_pickle=False) as archive:
            keys = set(archive.files)
            if SPARSE_KEYS <= keys:
                import scipy.sparse as sp

                return {"matrix": sp.csr_array(sp.load_npz(p))}
            return {k: archive[k] for k in keys}
    except DAMAGED as exc:
        raise FileFormatError(f"{p}: cannot read as .npz without pickle ({exc})") from None
