"""QUBO: minimise f(x) = xᵀQx + offset over x ∈ {0, 1}ⁿ.

Q is taken as written (any square matrix; xᵀQx counts Q_ij and Q_ji alike; the
diagonal holds the linear terms).  Q may be a 2-D numpy array, a scipy.sparse
matrix, or a dict {(i, j): q} whose keys are variable labels (pairs add up).
"""

from __future__ import annotations

from typing import Any, Hashable, Iterable, Mapping

import numpy as np

from spinward.core.canonical import CanonicalProblem, dense_matvec, is_sparse
from spinward.core.errors import InputError

from ._base import CachedForm, build_canonical
from .validate import as_real_matrix, check_dense_memory, check_number, dense_tiles, first_appearance, labels_for
from .terms import dict_to_matrix


class QUBO(CachedForm):
    """Minimise xᵀQx + offset, x ∈ {0,1}ⁿ; values come back as 0/1.

    Examples
    --------
    >>> import numpy as np, spinward
    >>> r = spinward.solve(spinward.QUBO(np.array([[1.0, -3.0], [0.0, 1.0]])))
    >>> r.assignment, r.objective
    ({0: 1, 1: 1}, -1.0)
    """

    form = "qubo"
    sense = "min"
    domain = (1, 0)

    def __init__(self, Q: Any, *, offset: float = 0.0, labels: Iterable[Hashable] | None = None) -> None:
        super().__init__()
        self.offset = check_number(offset, "offset")
        if isinstance(Q, Mapping):
            if labels is not None:
                raise InputError("labels cannot be given with a dict Q: the dict's keys are the labels")
            self._terms: dict[Any, Any] | None = dict(Q)
            self._labels = tuple(first_appearance(v for key in self._terms for v in _pair(key)))
            self.Q = dict_to_matrix(self._terms, self._labels, "Q")
        else:
            self._terms = None
            self.Q = as_real_matrix(Q, "Q")
            self._labels = labels_for(self.Q.shape[0], labels, "QUBO")

    def _build(self) -> CanonicalProblem:
        Q = self.Q
        if is_sparse(Q):
            import scipy.sparse as sp

            S = sp.csr_array(Q * 0.5 + Q.T * 0.5)
            d = S.diagonal()
            off = sp.csr_array(S - sp.diags_array(d))
            off.eliminate_zeros()
            row = np.asarray(off.sum(axis=1)).ravel()
            off_total = float(row.sum())
            K = -off / 2
        else:
            K, d, row = _dense_parts(Q)
            off_total = float(row.sum())
        linear = -(d / 2 + row / 2)
        constant = -(float(d.sum()) / 2 + off_total / 4)
        return build_canonical(K, linear, constant, sign=-1.0, shift=self.offset,
                               labels=self._labels, form="qubo", sense="min")

    def _coefficients(self) -> tuple[Any, ...]:
        return self.Q, self.offset

    def phrase(self, topic: str, values: dict[str, float]) -> str | None:
        if topic != "mean-part":
            return None
        pair = 4 * abs(values["mean"] * values["scale"])  # canonical K = −(Q + Qᵀ)/4 off the diagonal
        return (f"the QUBO's off-diagonal entries have a positive mean ({pair:.4g} per pair, Q_ij + Q_ji): this "
                f"rank-one part favours assignments with about as many 1s as 0s")

    def _objective(self, values: np.ndarray) -> float:
        """xᵀQx + offset from the caller's own Q (dict terms summed directly)."""
        x = np.asarray(values, dtype=np.float64)
        if self._terms is not None:
            index = {label: k for k, label in enumerate(self._labels)}
            total = 0.0
            for key, q in self._terms.items():
                i, j = _pair(key)
                total += float(q) * x[index[i]] * x[index[j]]
            return total + self.offset
        Qx = np.asarray(self.Q @ x, dtype=np.float64) if is_sparse(self.Q) else dense_matvec(self.Q, x)
        return float(x @ Qx) + self.offset


def _dense_parts(Q: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(K, d, r) of a dense Q: S = (Q + Qᵀ)/2, d = diag S, K = −(S − diag d)/2 (float64), r = row sums of S − diag d.

    Built tile by tile into the one n×n output (Q, a memmap say, is read in place); halves are
    taken before the sum, so entries near the float64 limit cannot overflow.
    """
    n = Q.shape[0]
    check_dense_memory(n, what="a dense QUBO solve")
    K = np.empty((n, n), dtype=np.float64)
    d = np.zeros(n)
    row = np.zeros(n)
    for rows, cols in dense_tiles(n):
        S = np.asarray(Q[rows, cols], dtype=np.float64) * 0.5 + np.asarray(Q[cols, rows], dtype=np.float64).T * 0.5
        if rows == cols:
            d[rows] = np.diag(S)
            np.fill_diagonal(S, 0.0)
        row[rows] += S.sum(axis=1)
        K[rows, cols] = S * -0.5
        if rows != cols:
            row[cols] += S.sum(axis=0)
            K[cols, rows] = K[rows, cols].T
    return K, d, row


def _pair(key: Any) -> tuple[Hashable, Hashable]:
    if not isinstance(key, tuple) or len(key) != 2:
        raise InputError(f"QUBO dict keys must be pairs (i, j), got {key!r}; use (i, i) for a linear term")
    return key
