"""Input validation shared by the adapters: shapes, dtypes, finiteness, magnitudes, memory.

Every failure is an :class:`~spinward.core.errors.InputError` whose message
names the defect and the fix.
"""

from __future__ import annotations

import math
from typing import Any, Hashable, Iterable, Sequence

import numpy as np

from spinward.core.canonical import ROW_BLOCK, is_sparse
from spinward.core.errors import InputError, ResourceError
from spinward.core.resources import memory_limit

#: largest integer magnitude a float64 holds exactly
EXACT_INT = 2**53
#: couplings beyond these magnitudes are rescaled by an exact power of two
RESCALE_ABOVE, RESCALE_BELOW = 2.0**64, 2.0**-64


def as_real_matrix(data: Any, name: str) -> Any:
    """A square real 2-D ndarray or CSR matrix; rejects ragged, complex, object, NaN/inf.

    Integer data is checked against 2**53 (the last integer float64 holds exactly) before
    any conversion, and duplicate sparse entries are summed in float64 only after a range
    check proves the sum exact.  A dense input's size is checked before anything of its
    size is allocated.
    """
    if is_sparse(data):
        return _as_real_sparse(data, name)
    arr = _to_ndarray(data, name)
    _check_square(arr.shape, name)
    if not isinstance(arr, np.memmap):  # a memmap is never copied here; the forms check before they copy
        check_dense_memory(arr.shape[0])
    arr = _exact_float(arr, name)
    _check_finite_dense(arr, name)
    return arr


def _as_real_sparse(data: Any, name: str) -> Any:
    import scipy.sparse as sp

    _check_dtype(data.dtype, name)
    _check_square(data.shape, name)
    coo = sp.coo_array(data)  # duplicates kept: they are summed below, after the range check
    if coo.dtype.kind in "biu":
        _check_integers(coo.data, name, lambda k: (int(coo.row[k]), int(coo.col[k])))
    values = np.asarray(coo.data, dtype=np.float64)
    at = inexact_sum(coo.row, coo.col, values, coo.shape)
    if at is not None:
        raise InputError(f"{name}[{at[0]}, {at[1]}]: its duplicate entries add up to 2**53 or more in magnitude, "
                         f"where float64 is no longer exact; sum them yourself or divide the data by a common factor")
    m = sp.csr_array((values, (coo.row, coo.col)), shape=coo.shape)
    m.sum_duplicates()
    _check_finite_sparse(m, name)
    return m


def inexact_sum(rows: np.ndarray, cols: np.ndarray, values: np.ndarray, shape: tuple[int, int]) -> tuple[int, int] | None:
    """The (row, col) of integer data whose duplicate entries add up to 2**53 or more in magnitude, else None.

    Integers up to 2**53 are exact in float64, and so is every partial sum while Σ|duplicates|
    stays below 2**53: only beyond that would float64 round a sum.  Data that is not all
    integers of at most 2**53 gives None (rounding floats is the caller's to accept).
    """
    with np.errstate(over="ignore", invalid="ignore"):
        total = float(np.abs(values).sum()) if values.size >= 2 else 0.0
    if not total >= EXACT_INT / 2:  # the float sum's error is far below a factor of two
        return None
    finite = values[np.isfinite(values)]
    if finite.size != values.size or float(np.abs(finite).max()) > EXACT_INT or np.any(finite != np.round(finite)):
        return None
    import scipy.sparse as sp

    span = sp.csr_array((np.abs(values), (rows, cols)), shape=shape)
    span.sum_duplicates()  # rounding is monotone: a true sum of 2**53 or more never comes out below it
    if span.nnz and float(span.data.max()) >= EXACT_INT:
        return _entry_of(span, int(np.argmax(span.data)))
    return None


def _entry_of(m: Any, k: int) -> tuple[int, int]:
    """(row, column) of stored entry k of a CSR matrix."""
    row = int(np.searchsorted(m.indptr, k, side="right") - 1)
    return row, int(m.indices[k])


def _check_integers(values: np.ndarray, name: str, where: Any) -> None:
    """Refuse integers beyond ±2**53 (no abs(): it overflows at the int64 minimum)."""
    if values.size == 0 or values.dtype.kind not in "iu":
        return
    if int(values.max()) <= EXACT_INT and int(values.min()) >= -EXACT_INT:
        return
    k = int(np.flatnonzero((values > EXACT_INT) | (values < -EXACT_INT))[0])
    at = where(k)
    index = ", ".join(map(str, at)) if isinstance(at, tuple) else str(at)
    raise InputError(f"{name}[{index}] = {int(values[k])} is beyond 2**53, where float64 is no longer exact; "
                     f"divide by a common factor, or pass floats if rounding is acceptable")


def _to_ndarray(data: Any, name: str) -> np.ndarray:
    """A plain ndarray (a memmap stays one; np.matrix and other subclasses become plain arrays)."""
    if isinstance(data, np.memmap) or type(data) is np.ndarray:
        arr = data
    else:
        try:
            arr = np.asarray(data)
        except (ValueError, TypeError) as exc:
            raise InputError(f"{name} must be a rectangular array of numbers; it looks ragged ({exc})") from None
    if arr.dtype.kind == "O":
        _check_object_integers(arr, name)
    _check_dtype(arr.dtype, name)
    return arr


def _check_object_integers(arr: np.ndarray, name: str) -> None:
    """Python integers too large for int64 make numpy fall back to object arrays: name the first one."""
    for k, x in enumerate(arr.flat):
        if isinstance(x, (int, np.integer)) and not isinstance(x, bool) and abs(int(x)) > EXACT_INT:
            where = ", ".join(map(str, np.unravel_index(k, arr.shape)))
            raise InputError(f"{name}[{where}] = {int(x)} is beyond 2**53, where float64 is no longer exact; "
                             f"divide by a common factor, or pass floats if rounding is acceptable")


def _exact_float(arr: np.ndarray, name: str) -> np.ndarray:
    """float32/float64 as given; integers and booleans as float64 after the 2**53 check."""
    if arr.dtype.kind in "iu":
        width = arr.shape[1] if arr.ndim == 2 else 1
        for start in range(0, arr.shape[0], ROW_BLOCK):  # row blocks: no temporary of the array's size
            block = np.asarray(arr[start:start + ROW_BLOCK]).reshape(-1)
            _check_integers(block, name, lambda k: (start + k // width, k % width) if arr.ndim == 2 else start + k)
    if arr.dtype not in (np.float32, np.float64):
        arr = arr.astype(np.float64)
    return arr


def _check_dtype(dtype: np.dtype, name: str) -> None:
    if dtype.kind == "O":
        raise InputError(f"{name} has object dtype (mixed or ragged entries); pass a numeric array")
    if dtype.kind == "c":
        raise InputError(f"{name} is complex; couplings must be real numbers")
    if dtype.kind not in "biuf":
        raise InputError(f"{name} must be numeric, got dtype {dtype}")


def _check_square(shape: Sequence[int], name: str) -> None:
    if len(shape) != 2 or shape[0] != shape[1]:
        raise InputError(f"{name} must be square, got shape {tuple(shape)}")


def _check_finite_dense(arr: np.ndarray, name: str) -> None:
    """In row blocks, so no n² temporary of booleans is made."""
    for start in range(0, arr.shape[0], ROW_BLOCK):
        block = arr[start:start + ROW_BLOCK]
        bad = ~np.isfinite(block)
        if bad.any():
            i, j = (int(v) for v in np.argwhere(bad)[0])
            raise InputError(f"{name}[{start + i}, {j}] is {float(block[i, j])}; every entry must be finite")


#: side of the square tiles in which dense checks read a matrix (a 1024² float64 tile is 8 MiB)
TILE = 1024


def dense_tiles(n: int, size: int | None = None) -> Iterable[tuple[slice, slice]]:
    """(rows, cols) slices of the tiles on and above the diagonal of an n×n matrix.

    Reading a tile and its mirror [cols, rows] together visits every entry once per pair, in
    pieces that a memory-mapped file serves page by page (a column strip would touch every page).
    """
    size = size or TILE
    for r in range(0, n, size):
        for c in range(r, n, size):
            yield slice(r, min(r + size, n)), slice(c, min(c + size, n))


def _check_finite_sparse(m: Any, name: str) -> None:
    bad = ~np.isfinite(m.data)
    if bad.any():
        i, j = _entry_of(m, int(np.flatnonzero(bad)[0]))
        raise InputError(f"{name}[{i}, {j}] is {float(m[i, j])} (after adding up duplicate entries, if any); "
                         f"every entry must be finite")


def check_number(value: Any, what: str) -> float:
    """A finite real scalar (bools and complex refused)."""
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, (int, float, np.integer, np.floating)):
        raise InputError(f"{what} must be a real number, got {value!r}")
    if isinstance(value, (int, np.integer)) and abs(int(value)) > EXACT_INT:
        raise InputError(f"{what} = {value} is beyond 2**53, where float64 is no longer exact")
    out = float(value)
    if not math.isfinite(out):
        raise InputError(f"{what} is {value!r}; it must be finite")
    return out


def as_vector(data: Any, n: int, name: str) -> np.ndarray:
    """A length-n finite float64 vector."""
    arr = _to_ndarray(data, name)
    if arr.shape != (n,):
        raise InputError(f"{name} must have shape ({n},), got {arr.shape}")
    arr = _exact_float(arr, name).astype(np.float64, copy=False)
    if arr.shape != (n,):
        raise InputError(f"{name} must have shape ({n},), got {arr.shape}")
    bad = ~np.isfinite(arr)
    if bad.any():
        k = int(np.flatnonzero(bad)[0])
        raise InputError(f"{name}[{k}] is {float(arr[k])}; every entry must be finite")
    return arr


def power_of_two_scale(*magnitudes: float) -> float:
    """An exact power of two that brings the largest magnitude near 1, or 1.0 when not needed.

    Dividing by a power of two is exact in binary floating point, so huge or tiny
    inputs are rescaled without changing which state is optimal.
    """
    big = max((abs(m) for m in magnitudes if m), default=0.0)
    if big == 0.0 or RESCALE_BELOW <= big <= RESCALE_ABOVE:
        return 1.0
    return math.ldexp(1.0, math.frexp(big)[1])


def correctly_rounded_sum(values: np.ndarray) -> float:
    """Σ values rounded once (math.fsum); ±inf when the sum leaves float64 range."""
    try:
        return math.fsum(values.tolist())
    except OverflowError:  # an intermediate sum passed float64's range
        return math.copysign(math.inf, float(np.sum(values, dtype=np.float64)))


def check_total(total: float, what: str) -> None:
    if not math.isfinite(total) or total > 1e307:
        raise InputError(f"{what} sums to about {total:.3g}, beyond float64 range for objective values; "
                         f"divide the coefficients by a common factor")


def labels_for(n: int, labels: Iterable[Hashable] | None, name: str) -> tuple[Hashable, ...]:
    if labels is None:
        return tuple(range(n))
    out = tuple(labels)
    if len(out) != n:
        raise InputError(f"{name}: {len(out)} labels for {n} variables")
    try:
        if len(set(out)) != n:
            raise InputError(f"{name}: labels must be distinct")
    except TypeError:
        raise InputError(f"{name}: labels must be hashable") from None
    return out


#: bytes per n² entry that a dense solve allocates beyond the caller's matrix, and a fixed part.
#: Measured (extra peak RSS, VmHWM, of spinward.solve on a dense float64 QUBO, fresh process):
#: n = 4000: 296 MB ("auto" and "iamp"), 314 MB ("sdp"), 270 MB ("anneal", "tabu"); n = 8000:
#: 1014 MB ("auto").  The canonical K (8 bytes), the solver's float32 and int16 working copies
#: (6, freed before the bound) and the spectral bound's float64 copy of the lift (8) make it.
DENSE_SOLVE_BYTES_PER_ENTRY = 17
DENSE_SOLVE_FIXED_BYTES = 32 << 20


def dense_solve_estimate(n: int) -> int:
    """Bytes a dense solve of n spins allocates beyond the caller's input (see DENSE_SOLVE_BYTES_PER_ENTRY)."""
    return DENSE_SOLVE_BYTES_PER_ENTRY * n * n + DENSE_SOLVE_FIXED_BYTES


def check_dense_memory(n: int, copies: int | None = None, itemsize: int = 8,
                       what: str = "a dense solve") -> None:
    """Refuse before allocating when dense storage for n spins would not fit in memory.

    ``copies`` n×n arrays of ``itemsize`` bytes when given; else the whole solve's measured need,
    :func:`dense_solve_estimate`.  The error suggests the out-of-core path with its own numbers.
    """
    need = dense_solve_estimate(n) if copies is None else copies * n * n * itemsize
    limit = memory_limit()
    if need > limit:
        raise ResourceError(f"{what} for n = {n} needs about {need / 2**30:.1f} GiB, more than the "
                            f"{limit / 2**30:.1f} GiB available. For sparse couplings pass a scipy.sparse matrix; "
                            f"for dense ones, save the symmetric J once as a float32 memmap (n² × 4 bytes = "
                            f"{4 * n * n / 2**30:.1f} GiB on disk: np.save(path, J.astype(np.float32))) and solve "
                            f"spinward.Ising(np.load(path, mmap_mode='r')) with method='iamp' and bound=False: "
                            f"J is then read from the file in blocks, never copied, and the solve needs about "
                            f"{out_of_core_estimate(n) / 2**30:.2f} GiB of memory besides the file's page cache")


#: anonymous memory of the out-of-core iamp path (bound=False): a fixed part (Python, numpy, numba,
#: scipy) and vectors of length n.  Measured peak RssAnon (examples/benchmarks/dense.py, float32
#: memmap, whole path from np.load to the Result): 142 MB at n = 24 000, 181 MB at n = 50 000.
OUT_OF_CORE_FIXED_BYTES = 128 << 20
OUT_OF_CORE_VECTORS = 256


def out_of_core_estimate(n: int) -> int:
    """Bytes of memory (not page cache) that ``method='iamp'`` needs on a memory-mapped float32 J."""
    return OUT_OF_CORE_FIXED_BYTES + OUT_OF_CORE_VECTORS * 8 * n


def first_appearance(keys: Iterable[Hashable]) -> list[Hashable]:
    """Distinct keys in first-appearance order (works for mixed, unorderable label types)."""
    seen: dict[Hashable, None] = {}
    for k in keys:
        try:
            seen.setdefault(k, None)
        except TypeError:
            raise InputError(f"variable label {k!r} is not hashable") from None
    return list(seen)


def dyadic_resolution(*parts: Any) -> float | None:
    """The largest 2^-k (k ≥ 0) that divides every given coefficient exactly, or None.

    ``parts`` are arrays (dense, memmap or scipy.sparse) or scalars.  Integer data gives 1.0;
    data in halves gives 0.5; data like 0.1 (not a short binary fraction) gives None.  Any
    objective built from such coefficients by sums and products with 0/1 or ±1 values is a
    multiple of the result, so two states' objectives differ by 0 or at least that much
    (docs/conventions.md, "When a bound proves optimality").
    """
    need = 0
    for part in parts:
        for block in _blocks(part):
            need = max(need, _fraction_bits(block))
            if need > MAX_FRACTION_BITS:
                return None
    return math.ldexp(1.0, -need)


#: coefficients needing more binary fraction digits than this count as non-dyadic
MAX_FRACTION_BITS = 40


def _blocks(part: Any) -> Iterable[np.ndarray]:
    if hasattr(part, "fraction_bits"):  # couplings held elsewhere: the blocks report their own digits
        bits = int(part.fraction_bits())
        yield np.array([math.ldexp(1.0, -bits)]) if bits else np.zeros(0)
        return
    if is_sparse(part):
        yield np.asarray(part.data if hasattr(part, "data") else part.tocoo().data, dtype=np.float64)
        return
    arr = np.asarray(part)
    if arr.ndim < 2:
        yield np.asarray(arr, dtype=np.float64).ravel()
        return
    for start in range(0, arr.shape[0], 256):  # row blocks: no n² temporary
        yield np.asarray(arr[start:start + 256], dtype=np.float64).ravel()


def _fraction_bits(values: np.ndarray) -> int:
    """How many binary digits after the point the entries of ``values`` need (0 for integers)."""
    v = values[values != 0]
    if v.size == 0:
        return 0
    if np.all(v == np.round(v)):
        return 0
    mantissa, exponent = np.frexp(v)  # v = mantissa · 2^exponent, 0.5 ≤ |mantissa| < 1
    digits = np.abs(mantissa * 2.0**53).astype(np.int64)  # the exact 53-bit significand
    lowest = np.log2((digits & -digits).astype(np.float64)).astype(np.int64)  # its trailing zero bits
    return int(max(0, np.max(53 - exponent - lowest)))
