"""Ising: minimise E(s) = −Σ_{i<j} J_ij s_i s_j − Σ_i h_i s_i + offset over s ∈ {−1, +1}ⁿ.

Physics sign by default: J_ij > 0 is ferromagnetic.  ``energy_sign="hardware"`` reads the same
J and h in the opposite sign, common on annealing hardware: E(s) = +Σ_{i<j} J_ij s_i s_j +
Σ_i h_i s_i + offset (J_ij < 0 is ferromagnetic); the couplings and fields are kept as given.  A matrix J must be symmetric (pair
coefficient J_ij = J_ji) or upper-triangular (pair coefficient J_ij, i < j);
any other asymmetric matrix is an error unless ``symmetrize=True``, which uses
(J + Jᵀ)/2 and warns.  A dict J {(i, j): v} adds v to the pair {i, j}.  A
non-zero diagonal (s_i² = 1, a constant) is dropped with a warning.

A dense J that is exactly symmetric with a zero diagonal is used in place, never copied: a
float32 ``np.load(path, mmap_mode="r")`` of any size goes to the solver as it is, and every
check here reads it in tiles.  An upper-triangular J (J + Jᵀ), a non-zero diagonal or a
nearly symmetric J ((J + Jᵀ)/2) needs one copy of the input's dtype; its size is checked first.
A dask array J stays on its workers, in row blocks (adapters/distributed.py).
"""

from __future__ import annotations

import copy
import dataclasses
from typing import Any, Hashable, Iterable, Mapping

import numpy as np

from spinward.core.canonical import CanonicalProblem, dense_matvec, is_sparse
from spinward.core.errors import InputError

from ._base import CachedForm, build_canonical
from .distributed import is_dask_array
from .terms import dict_to_matrix
from .validate import (as_real_matrix, as_vector, check_dense_memory, check_number, dense_tiles, first_appearance,
                       labels_for)

SYMMETRY_RTOL = 1e-12
#: the two sign conventions of the energy, and the factor each puts on −(Σ J s s + Σ h s)
ENERGY_SIGNS = {"physics": 1.0, "hardware": -1.0}


class Ising(CachedForm):
    """Minimise −Σ_{i<j} J_ij s_i s_j − Σ h_i s_i + offset (``energy_sign="physics"``, the default) or
    +Σ_{i<j} J_ij s_i s_j + Σ h_i s_i + offset (``energy_sign="hardware"``); values come back as ±1.

    Examples
    --------
    >>> import spinward
    >>> physics = spinward.Ising({("a", "b"): 1.0}, {"a": 0.5})           # J > 0 aligns a and b
    >>> spinward.solve(physics).assignment
    {'a': 1, 'b': 1}
    >>> hardware = spinward.Ising({("a", "b"): 1.0}, {"a": 0.5}, energy_sign="hardware")  # J > 0 opposes
    >>> spinward.solve(hardware).assignment
    {'a': -1, 'b': 1}
    """

    form = "ising"
    sense = "min"
    domain = (1, -1)

    def __init__(self, J: Any, h: Any = None, *, offset: float = 0.0, labels: Iterable[Hashable] | None = None,
                 symmetrize: bool = False, energy_sign: str = "physics") -> None:
        super().__init__()
        if energy_sign not in ENERGY_SIGNS:
            raise InputError(f"energy_sign must be 'physics' (E = −ΣJss − Σhs) or 'hardware' (E = +ΣJss + Σhs), "
                             f"got {energy_sign!r}")
        self.energy_sign = energy_sign
        #: True when a file stated the convention itself (the CLI's --energy-sign must then agree)
        self.energy_sign_stated = False
        self.offset = check_number(offset, "offset")
        if isinstance(J, Mapping) or (J is None and isinstance(h, Mapping)):
            self._init_dicts(dict(J or {}), h, labels)
        elif is_dask_array(J):
            self._init_distributed(J, h, labels, symmetrize)
        else:
            self._init_matrix(J, h, labels, symmetrize)

    def _init_dicts(self, J: dict[Any, Any], h: Any, labels: Iterable[Hashable] | None) -> None:
        if labels is not None:
            raise InputError("labels cannot be given with a dict J: the dict's keys are the labels")
        h_dict = dict(h or {}) if not isinstance(h, (np.ndarray, list, tuple)) else None
        if h_dict is None:
            raise InputError("with a dict J, give h as a dict {label: value} too")
        for key in J:
            if not isinstance(key, tuple) or len(key) != 2:
                raise InputError(f"J dict keys must be pairs (i, j), got {key!r}")
        loops = [k for k in J if k[0] == k[1]]
        if loops:
            self.note(f"dropped {len(loops)} self-coupling(s) J[(i, i)] such as {loops[0]!r}: s_i² = 1 is a constant")
        self._terms: dict[Any, Any] | None = {k: v for k, v in J.items() if k[0] != k[1]}
        self._fields = {k: check_number(v, f"h[{k!r}]") for k, v in h_dict.items()}
        self._labels = tuple(first_appearance([*self._fields, *(v for key in self._terms for v in key)]))
        M = dict_to_matrix(self._terms, self._labels, "J", unordered=True)
        self.pairs = M + M.T
        self.h = np.array([self._fields.get(label, 0.0) for label in self._labels])

    def _init_matrix(self, J: Any, h: Any, labels: Iterable[Hashable] | None, symmetrize: bool) -> None:
        self._terms = None
        M = as_real_matrix(J, "J")
        n = M.shape[0]
        M = self._drop_diagonal(M)
        self._raw = M
        self.pairs = self._pair_matrix(M, symmetrize)
        self.h = np.zeros(n) if h is None else as_vector(h, n, "h")
        self._labels = labels_for(n, labels, "Ising")

    def _init_distributed(self, J: Any, h: Any, labels: Iterable[Hashable] | None, symmetrize: bool) -> None:
        """J as a dask array in row blocks: checked and multiplied where it lives (adapters/distributed.py)."""
        from .distributed import DaskCouplings

        self._terms = None
        notes: list[str] = []
        couplings = DaskCouplings(J, notes=notes)
        mode, repairs = couplings.check(symmetrize, SYMMETRY_RTOL, np.random.default_rng(0))
        for message in notes + repairs:
            self.note(message)
        n = couplings.shape[0]
        self._raw = couplings
        self._triangular = mode == "triangular"
        self.pairs = couplings
        self.h = np.zeros(n) if h is None else as_vector(h, n, "h")
        self._labels = labels_for(n, labels, "Ising")

    def _drop_diagonal(self, M: Any) -> Any:
        diag = M.diagonal()
        if np.any(diag != 0):
            self.note(f"dropped {int(np.count_nonzero(diag))} non-zero diagonal entries of J: s_i² = 1 is a constant")
            if is_sparse(M):
                import scipy.sparse as sp

                M = sp.csr_array(M - sp.diags_array(diag))
                M.eliminate_zeros()
            else:
                check_dense_memory(M.shape[0], copies=1, itemsize=M.dtype.itemsize,
                                   what="a copy of J without its diagonal")
                M = np.array(M)
                np.fill_diagonal(M, 0.0)
        return M

    def _pair_matrix(self, M: Any, symmetrize: bool) -> Any:
        """Symmetric pair-coefficient matrix P (P_ij = coefficient of s_i s_j, i ≠ j)."""
        asym, lower, big = _symmetry(M)
        self._triangular = lower == 0
        if self._triangular:
            _check_copy(M, "J + Jᵀ for an upper-triangular J (pass a symmetric J to use it in place)")
            return M + M.T  # upper-triangular: pair coefficient is J_ij
        if asym == 0:
            return M  # exactly symmetric: used in place (a memmap stays on disk)
        if asym <= SYMMETRY_RTOL * max(big, 1e-300):
            _check_copy(M, "(J + Jᵀ)/2 for a nearly symmetric J")
            return _half_sum(M)
        if not symmetrize:
            raise InputError(f"J is neither symmetric nor upper-triangular (max |J_ij − J_ji| = {asym:.3g}); "
                             f"pass symmetrize=True to use (J + Jᵀ)/2")
        self.note(f"J was asymmetric (max |J_ij − J_ji| = {asym:.3g}); used (J + Jᵀ)/2 as requested")
        _check_copy(M, "(J + Jᵀ)/2")
        return _half_sum(M)

    def _build(self) -> CanonicalProblem:
        factor = ENERGY_SIGNS[self.energy_sign]  # the hardware sign negates J and h
        pairs = self.pairs if factor == 1.0 else _negated(self.pairs)
        return build_canonical(pairs, self.h * factor, 0.0, sign=-1.0, shift=self.offset,
                               labels=self._labels, form="ising", sense="min")

    def with_energy_sign(self, energy_sign: str) -> "Ising":
        """The same J, h, offset and constraints read in the other (or the same) sign convention."""
        if energy_sign not in ENERGY_SIGNS:
            raise InputError(f"energy_sign must be 'physics' or 'hardware', got {energy_sign!r}")
        other = copy.copy(self)
        other.energy_sign = energy_sign
        other._base, other._canonical, other.notes = None, None, list(self.notes)
        other._constraints = [dataclasses.replace(c) for c in self._constraints]
        if other._constraints:
            other._relayout()  # constraints re-derived on the re-signed base problem
        return other

    def describe(self) -> dict[str, Any]:
        return {**super().describe(), "energy_sign": self.energy_sign}

    def _coefficients(self) -> tuple[Any, ...]:
        return self.pairs, self.h, self.offset

    def phrase(self, topic: str, values: dict[str, float]) -> str | None:
        if topic != "mean-part":
            return None
        mean = -abs(values["mean"] * values["scale"]) * ENERGY_SIGNS[self.energy_sign]  # canonical K = ±J
        return (f"the couplings have an antiferromagnetic mean ({mean:.4g} per pair): this rank-one part favours "
                f"states with zero magnetisation")

    def _objective(self, values: np.ndarray) -> float:
        """E(s) from the caller's terms (dicts summed directly, matrices as pair sums), in its energy sign."""
        s = np.asarray(values, dtype=np.float64)
        factor = ENERGY_SIGNS[self.energy_sign]
        if self._terms is not None:
            index = {label: k for k, label in enumerate(self._labels)}
            total = -sum(float(v) * s[index[i]] * s[index[j]] for (i, j), v in self._terms.items())
            total -= sum(v * s[index[k]] for k, v in self._fields.items())
            return factor * float(total) + self.offset
        if is_dask_array(getattr(self._raw, "array", None)):  # K s on the cluster: E = −½sᵀKs − hᵀs
            return factor * float(-0.5 * s @ self._raw.matvec(s) - self.h @ s) + self.offset
        weight = 1.0 if self._triangular else 0.5  # sᵀJs counts each pair once or twice
        Js = np.asarray(self._raw @ s, dtype=np.float64) if is_sparse(self._raw) else dense_matvec(self._raw, s)
        return factor * float(-weight * s @ Js - self.h @ s) + self.offset


def _symmetry(M: Any) -> tuple[float, int, float]:
    """(max |M_ij − M_ji|, non-zeros below the diagonal, max |M_ij|), a dense M read tile by tile."""
    if is_sparse(M):
        coo = M.tocoo()
        lower = int(np.count_nonzero(coo.data[coo.row > coo.col]))
        asym = abs(M - M.T)
        return (float(asym.max()) if asym.nnz else 0.0), lower, (float(abs(M).max()) if M.nnz else 0.0)
    asym, lower, big = 0.0, 0, 0.0
    for rows, cols in dense_tiles(M.shape[0]):
        upper = np.asarray(M[rows, cols], dtype=np.float64)
        mirror = np.asarray(M[cols, rows], dtype=np.float64)  # the same tile when rows == cols
        if upper.size:
            asym = max(asym, float(np.abs(upper - mirror.T).max()))
            big = max(big, float(np.abs(upper).max()), float(np.abs(mirror).max()))
        lower += int(np.count_nonzero(np.tril(mirror, -1) if rows == cols else mirror))
    return asym, lower, big


def _negated(M: Any) -> Any:
    """−M: couplings held elsewhere stay there (a scale of −1); a dense M is copied once, after a size check."""
    if hasattr(M, "abs_sum"):
        return M / -1.0
    _check_copy(M, "−J for the hardware sign convention")
    return -M


def _check_copy(M: Any, what: str) -> None:
    if not is_sparse(M):
        check_dense_memory(M.shape[0], copies=1, itemsize=M.dtype.itemsize, what=what)


def _half_sum(M: Any) -> Any:
    """(M + Mᵀ)/2 with one n×n allocation (of M's dtype) when M is dense."""
    if is_sparse(M):
        return (M + M.T) * 0.5
    out = np.array(M)
    out += M.T
    out *= 0.5
    return out
