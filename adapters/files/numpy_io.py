"""NumPy .npy/.npz files, always with ``allow_pickle=False``.

A .npy holds one square matrix.  A .npz is either a scipy.sparse archive
(``scipy.sparse.save_npz``) or holds named arrays: ``Q`` [``offset``] for a QUBO,
``J`` [``h``, ``offset``] for an Ising model.
"""

from __future__ import annotations

import zipfile
import zlib
from pathlib import Path
from typing import Any

import numpy as np

from spinward.core.errors import FileFormatError

SPARSE_KEYS = {"format", "shape", "data"}
#: what numpy and zipfile raise on damaged files
DAMAGED = (ValueError, OSError, EOFError, KeyError, TypeError, zipfile.BadZipFile, zlib.error)


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
