"""Turn whatever the caller passed to ``solve()`` into a problem form."""

from __future__ import annotations

from typing import Any

import numpy as np

from spinward.core.canonical import is_sparse
from spinward.core.errors import InputError
from spinward.core.model import ProblemForm


def as_form(obj: Any) -> ProblemForm:
    """A form as is; a networkx graph as MaxCut; a square array, sparse matrix or {(i, j): q} dict as QUBO."""
    if isinstance(obj, ProblemForm):
        return obj
    if hasattr(obj, "nodes") and hasattr(obj, "edges") and hasattr(obj, "is_directed"):
        from .graph import MaxCut

        return MaxCut(obj)
    if isinstance(obj, (np.ndarray, list, tuple, dict)) or is_sparse(obj):
        from .qubo import QUBO

        return QUBO(obj)
    raise InputError(f"cannot solve a {type(obj).__name__}: pass spinward.QUBO(Q), spinward.Ising(J, h), "
                     f"spinward.MaxCut(graph), a networkx graph, or a square matrix (read as a QUBO)")
