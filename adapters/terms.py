"""Coefficient dicts {(i, j): v} → matrices, with label indexing and validation."""

from __future__ import annotations

from typing import Any, Hashable, Mapping

import numpy as np

from spinward.core.errors import InputError

from .validate import check_dense_memory, check_number, inexact_sum

#: below this fill a dict becomes a sparse matrix
SPARSE_FILL = 0.1


def dict_to_matrix(terms: Mapping[Any, Any], labels: tuple[Hashable, ...], name: str, *,
                   unordered: bool = False) -> Any:
    """Sum {(i, j): v} into an n×n matrix (entry [i, j], duplicates added), dense or CSR by fill.

    ``unordered``: (i, j) and (j, i) name the same pair (Ising couplings), so their integer
    values must add up exactly, below 2**53.
    """
    index = {label: k for k, label in enumerate(labels)}
    n = len(labels)
    rows = np.empty(len(terms), dtype=np.int64)
    cols = np.empty(len(terms), dtype=np.int64)
    vals = np.empty(len(terms), dtype=np.float64)
    for k, (key, v) in enumerate(terms.items()):
        i, j = key
        rows[k], cols[k] = index[i], index[j]
        vals[k] = check_number(v, f"{name}[{key!r}]")
    at = inexact_sum(np.minimum(rows, cols), np.maximum(rows, cols), vals, (n, n)) if unordered else None
    if at is not None:
        raise InputError(f"{name}: the couplings of the pair ({labels[at[0]]!r}, {labels[at[1]]!r}) add up to 2**53 "
                         f"or more in magnitude, where float64 is no longer exact; divide by a common factor")
    if n and len(terms) >= SPARSE_FILL * n * n:
        check_dense_memory(n)
        out = np.zeros((n, n))
        np.add.at(out, (rows, cols), vals)
        return out
    import scipy.sparse as sp

    m = sp.coo_array((vals, (rows, cols)), shape=(n, n)).tocsr()
    m.sum_duplicates()
    return m


def check_pairs(terms: Mapping[Any, Any], name: str) -> None:
    for key in terms:
        if not isinstance(key, tuple) or len(key) != 2:
            raise InputError(f"{name} keys must be pairs (i, j), got {key!r}")
