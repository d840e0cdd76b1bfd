"""The canonical problem every adapter produces and every solver consumes.

Convention (shared by all solvers): maximise

    C(σ) = ½ σᵀKσ + bᵀσ + k₀,   σ ∈ {−1, +1}ⁿ,

with K symmetric and zero on the diagonal.  The caller's objective is the exact
affine image ``objective = scale · C + shift`` (``scale ≠ 0``); ``sense`` is the
caller's sense ("min" or "max").  ``labels[i]`` is the caller's name of spin i.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Callable, Hashable, Literal, Protocol, Sequence

import numpy as np

from .errors import InputError

Sense = Literal["min", "max"]
ROW_BLOCK = 512  # rows per block when streaming a float32 or memory-mapped K
#: a dense K with more entries is dear to read (a tenth of a second or more): it remembers recent
#: states' values, and after Ctrl-C the caller's objective is not read from the input again
DEAR_READ_ENTRIES = 1 << 24
VALUE_MEMO_SIZE = 16
MATVEC_BLOCK_ENTRIES = 1 << 19  # entries per block of dense_matvec (a 4 MiB float64 temporary)


def dense_matvec(K: Any, x: np.ndarray) -> np.ndarray:
    """K @ x in float64 for a dense K of any float dtype (a memmap is fine), read in row blocks.

    A float64 in-memory K is multiplied directly; any other K is converted a block of about
    ``MATVEC_BLOCK_ENTRIES`` entries at a time, so no full float64 copy of K is ever made (numpy
    would make one to multiply a float32 matrix by a float64 vector).
    """
    x = np.asarray(x, dtype=np.float64)
    if K.dtype == np.float64 and not isinstance(K, np.memmap):
        return np.asarray(K @ x, dtype=np.float64)
    out = np.empty(K.shape[0])
    rows = max(1, MATVEC_BLOCK_ENTRIES // max(K.shape[1], 1))
    for start in range(0, K.shape[0], rows):
        out[start:start + rows] = np.asarray(K[start:start + rows], dtype=np.float64) @ x
    return out


class RowBlocks(Protocol):
    """Couplings held elsewhere in row blocks (the workers of a cluster, say): a LinearOperator-like K.

    Such a K has kind "operator", so only operator-capable solvers take it; those that know
    this protocol also get exact moments and can run a function where each block lives, so
    that only vectors of length n travel (adapters/distributed.py holds the dask version).
    ``bounds[k]`` is the (first, end) row range of block k; blocks are in row order.
    """

    shape: tuple[int, int]
    bounds: tuple[tuple[int, int], ...]
    scale: float  # K = (M − diag M) / scale, M the symmetric matrix whose rows the blocks hold

    def matvec(self, x: np.ndarray) -> np.ndarray: ...            # K x in float64

    def matvec_as(self, x: np.ndarray, dtype: Any) -> np.ndarray: ...  # K x computed in dtype, returned as float64

    def power_sums(self) -> tuple[float, float, float, float, int, float]: ...  # Σx..Σx⁴, #non-zero, max|x|, off-diagonal

    def max_abs(self) -> float: ...

    def on_block(self, k: int, fn: Callable[..., Any], *args: Any) -> Any: ...  # fn(rows of M, first row, *args) where block k lives


def row_blocks(K: Any) -> RowBlocks | None:
    """K itself when it follows the :class:`RowBlocks` protocol, else None."""
    return K if all(hasattr(K, name) for name in ("bounds", "matvec_as", "power_sums", "on_block")) else None


def is_sparse(K: Any) -> bool:
    """True for scipy.sparse arrays and matrices, without importing scipy."""
    return hasattr(K, "tocsr") and hasattr(K, "nnz")


def is_operator(K: Any) -> bool:
    """True for a scipy LinearOperator (matrix-free couplings)."""
    return hasattr(K, "matvec") and not isinstance(K, np.ndarray) and not is_sparse(K)


@dataclass(frozen=True, eq=False)
class CanonicalProblem:
    """Maximise ½σᵀKσ + bᵀσ + k₀ over σ ∈ {±1}ⁿ; see the module docstring.

    K is a dense ndarray (float32 or float64, a memmap is fine), a scipy.sparse
    CSR matrix, or a scipy LinearOperator (matrix-free; only operator-capable
    solvers accept it).  It must be symmetric with a zero diagonal.
    """

    K: Any
    b: np.ndarray
    k0: float = 0.0
    labels: tuple[Hashable, ...] = ()
    scale: float = 1.0
    shift: float = 0.0
    sense: Sense = "max"
    form: str = "canonical"
    meta: dict[Any, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        n = self.b.shape[0] if self.b.ndim == 1 else -1
        shape = getattr(self.K, "shape", None)
        if shape is None or len(shape) != 2 or shape[0] != shape[1] or shape[0] != n:
            raise InputError(f"canonical K must be square n×n with b of length n; got K {shape}, b {self.b.shape}")
        if not self.labels:
            object.__setattr__(self, "labels", tuple(range(n)))
        if len(self.labels) != n:
            raise InputError(f"{len(self.labels)} labels given for {n} variables")
        if self.scale == 0 or not np.isfinite(self.scale):
            raise InputError(f"scale must be finite and non-zero, got {self.scale!r}")

    @property
    def n(self) -> int:
        return int(self.b.shape[0])

    @property
    def kind(self) -> Literal["dense", "sparse", "operator"]:
        if is_sparse(self.K):
            return "sparse"
        return "operator" if is_operator(self.K) else "dense"

    @property
    def dear_to_read(self) -> bool:
        """A dense K of more than ``DEAR_READ_ENTRIES`` entries."""
        return self.kind == "dense" and self.n * self.n > DEAR_READ_ENTRIES

    @property
    def has_fields(self) -> bool:
        return bool(np.any(self.b != 0))

    def matvec(self, x: np.ndarray) -> np.ndarray:
        """K @ x for any of the three kinds of K, accumulated in float64.

        A float32 or memory-mapped dense K is streamed in row blocks, so no full
        float64 copy of K is ever made.
        """
        if self.kind == "operator":
            return np.asarray(self.K.matvec(x), dtype=np.float64)
        if self.kind == "dense":
            return dense_matvec(self.K, x)
        return np.asarray(self.K @ x, dtype=np.float64)

    def max_abs_coupling(self) -> float:
        """max |K_ij| (0 for an empty or operator K), computed once without an n² temporary."""
        cached = self.meta.get("_max_abs")
        if cached is None:
            if self.kind == "sparse":
                cached = float(abs(self.K).max()) if self.K.nnz else 0.0
            elif self.kind == "operator" or self.n == 0:
                cached = 0.0
            else:
                cached = max(max(float(np.max(K)), -float(np.min(K)))
                             for K in (self.K[s:s + ROW_BLOCK] for s in range(0, self.n, ROW_BLOCK)))
            self.meta["_max_abs"] = cached
        return cached

    def local_fields(self, sigma: np.ndarray) -> np.ndarray:
        """h = Kσ + b; flipping spin i changes C by −2σᵢhᵢ."""
        return self.matvec(np.asarray(sigma, dtype=np.float64)) + self.b

    def value(self, sigma: np.ndarray) -> float:
        """C(σ) in canonical units.

        On a big dense K (one read of it takes a tenth of a second or more), the values of the
        last few ±1 states are remembered: the run path asks for the same state's value several
        times (the step's record, the parts' totals, the result).
        """
        s = np.asarray(sigma, dtype=np.float64)
        key = None
        if self.dear_to_read and np.all(np.abs(s) == 1):
            key = np.packbits(s > 0).tobytes()
            memo = self.meta.setdefault("_values", {})
            if key in memo:
                return memo[key]
        value = float(0.5 * s @ self.matvec(s) + self.b @ s + self.k0)
        if key is not None:
            if len(memo) >= VALUE_MEMO_SIZE:
                memo.pop(next(iter(memo)))
            memo[key] = value
        return value

    def value_from_fields(self, sigma: np.ndarray, h: np.ndarray) -> float:
        """C(σ) from known local fields h = Kσ + b: ½σᵀh + ½bᵀσ + k₀ (no pass over K)."""
        s = np.asarray(sigma, dtype=np.float64)
        return float(0.5 * s @ h + 0.5 * self.b @ s + self.k0)

    def to_objective(self, canonical_value: float) -> float:
        """The caller's objective for a canonical value."""
        return self.scale * canonical_value + self.shift

    def bound_to_objective(self, canonical_upper: float) -> float:
        """Map an upper bound on C to a bound in the caller's sense and units."""
        return self.to_objective(canonical_upper)

    def dense_K(self) -> np.ndarray:
        """K as a dense float64 ndarray (allocates n² floats)."""
        if self.kind == "sparse":
            return np.asarray(self.K.toarray(), dtype=np.float64)
        if self.kind == "operator":
            return np.asarray(self.K.matmat(np.eye(self.n)), dtype=np.float64)
        return np.asarray(self.K, dtype=np.float64)

    def csr_K(self) -> Any:
        """K as a scipy.sparse CSR array of float64 (imports scipy lazily)."""
        import scipy.sparse as sp

        if self.kind == "sparse":
            return sp.csr_array(self.K, dtype=np.float64)
        return sp.csr_array(self.dense_K())

    def n_couplings(self) -> int:
        """Number of non-zero pairs (i < j)."""
        if self.kind == "sparse":
            return int(self.K.count_nonzero() // 2)
        if self.kind == "operator":
            return self.n * (self.n - 1) // 2
        return int(np.count_nonzero(self.K) // 2)

    def with_ghost_spin(self) -> "CanonicalProblem":
        """An equivalent field-free problem on n+1 spins (extra spin last, meant to be +1).

        C'(σ, σ₀) = ½σᵀKσ + σ₀ bᵀσ + k₀ equals C(σ₀σ); undo with :func:`drop_ghost_spin`.
        """
        n = self.n
        if self.kind == "sparse":
            import scipy.sparse as sp

            col = sp.csr_array(self.b.reshape(-1, 1))
            K2 = sp.block_array([[self.K, col], [col.T, None]], format="csr")
        else:
            K2 = np.zeros((n + 1, n + 1), dtype=np.float64)
            for start in range(0, n, ROW_BLOCK):  # cast block by block: no temporary copy of K
                end = min(start + ROW_BLOCK, n)
                K2[start:end, :n] = self.K[start:end]
            K2[:n, n] = self.b
            K2[n, :n] = self.b
        return CanonicalProblem(K2, np.zeros(n + 1), self.k0, tuple(range(n + 1)), form="ghost")


def drop_ghost_spin(sigma: np.ndarray) -> np.ndarray:
    """Remove the ghost spin (last) and flip all spins if it ended at −1."""
    s = np.asarray(sigma, dtype=np.int8)
    return (s[:-1] * s[-1]).astype(np.int8)


def spins(values: Sequence[int] | np.ndarray) -> np.ndarray:
    """Validate and return a ±1 int8 vector."""
    s = np.asarray(values)
    if s.size and not np.all(np.abs(s) == 1):
        raise InputError("spin vector must hold only −1 and +1")
    return s.astype(np.int8)
