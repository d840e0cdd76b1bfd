"""A dask array of couplings, kept in row blocks where it lives (the workers of a dask cluster).

``spinward.Ising(J)`` with a 2-D ``dask.array`` J builds a :class:`DaskCouplings`: the canonical
K (pair coefficients, zero diagonal) as a LinearOperator that follows the core's RowBlocks
protocol (core/canonical.py).  Nothing of size n² ever leaves the workers:

- checks run on the blocks: finite entries, the diagonal (dropped with a warning, by
  subtracting d∘x in every product), symmetry by two random probes (J x against Jᵀ x, each
  block computing its share of Jᵀ x from its own rows), and, when J is not symmetric, whether it
  is upper-triangular (then J + Jᵀ is formed once on the cluster, the one step that moves blocks
  between workers);
- a product K x sends x to each worker holding a block and brings back that block's slice of K x;
- moments, the largest entry and the coefficient mass are reduced from per-block numbers;
- :meth:`DaskCouplings.on_block` runs a function on a block where it lives (the IAMP plugin's
  clean-up and polish visit the blocks in turn with the local fields, 2·n floats each way).

With a ``dask.distributed`` client (the default client when one exists), blocks are persisted
on the workers and reached as futures; without one they are computed once into local memory.
dask is imported only when such an array is passed (``pip install spinward[dist]``).
"""

from __future__ import annotations

import math
from typing import Any, Callable

import numpy as np

from spinward.core.errors import InputError

#: probe vectors for the symmetry check; a non-symmetric J escapes both only on a null set
SYMMETRY_PROBES = 2
#: arrays above this size are scattered to the workers once per call instead of riding in each task
SCATTER_BYTES = 4 << 20


def is_dask_array(obj: Any) -> bool:
    """True for a dask.array.Array, without importing dask."""
    return type(obj).__module__.split(".")[0] == "dask" and hasattr(obj, "chunks") and hasattr(obj, "dask")


# ---------------------------------------------------------------- functions run where a block lives

def _block_checks(rows: np.ndarray, first: int) -> tuple[tuple[int, int] | None, np.ndarray]:
    """(first non-finite entry or None, the block's diagonal entries)."""
    rows = np.asarray(rows)
    bad = ~np.isfinite(rows)
    where = None
    if bad.any():
        i, j = (int(v) for v in np.argwhere(bad)[0])
        where = (first + i, j)
    k = np.arange(rows.shape[0])
    return where, np.asarray(rows[k, first + k], dtype=np.float64)


def _block_products(rows: np.ndarray, first: int, x: np.ndarray, dtype: Any, transposed: bool
                    ) -> tuple[np.ndarray, np.ndarray | None]:
    """(rows @ x, computed in ``dtype``; and rowsᵀ x[first:end] in float64 when asked: the block's share of Jᵀx)."""
    xs = np.asarray(x, dtype=dtype)
    own = np.asarray(np.asarray(rows, dtype=dtype) @ xs, dtype=np.float64)
    share = None
    if transposed:
        end = first + rows.shape[0]
        share = np.asarray(rows, dtype=np.float64).T @ np.asarray(x[first:end], dtype=np.float64)
    return own, share


def _block_lower_nonzeros(rows: np.ndarray, first: int) -> int:
    """Non-zero entries strictly below the diagonal of the full matrix, in this block."""
    cols = np.arange(rows.shape[1])
    below = cols[None, :] < (first + np.arange(rows.shape[0]))[:, None]
    return int(np.count_nonzero(np.asarray(rows)[below]))


def _block_sums(rows: np.ndarray, first: int) -> tuple[float, float, float, float, int, float, float]:
    """(Σx, Σx², Σx³, Σx⁴, #non-zero, max|x|, Σ|x|) over the block's off-diagonal entries."""
    x = np.array(rows, dtype=np.float64)
    k = np.arange(x.shape[0])
    x[k, first + k] = 0.0
    x2 = x * x
    return (float(x.sum()), float(x2.sum()), float((x2 * x).sum()), float((x2 * x2).sum()),
            int(np.count_nonzero(x)), float(np.sqrt(x2.max())) if x.size else 0.0, float(np.abs(x).sum()))


def _block_fraction_bits(rows: np.ndarray, first: int) -> int:
    from .validate import _fraction_bits

    return _fraction_bits(np.asarray(rows, dtype=np.float64).ravel())


# ---------------------------------------------------------------- where the blocks live

class _LocalBlocks:
    """Blocks computed once into this process (a dask array without a distributed client)."""

    def __init__(self, array: Any) -> None:
        self.blocks = [np.asarray(array.blocks[k].compute()) for k in range(len(array.chunks[0]))]

    def run(self, k: int, first: int, fn: Callable[..., Any], args: tuple[Any, ...]) -> Any:
        return fn(self.blocks[k], first, *args)

    def run_all(self, firsts: list[int], fn: Callable[..., Any], args: tuple[Any, ...]) -> list[Any]:
        return [fn(block, first, *args) for block, first in zip(self.blocks, firsts)]


class _ClusterBlocks:
    """Blocks persisted on the workers of a dask.distributed client, reached as futures."""

    def __init__(self, array: Any, client: Any) -> None:
        from distributed import futures_of

        self.client = client
        persisted = client.persist(array)
        by_index = {f.key[1]: f for f in futures_of(persisted)}
        self.futures = [by_index[k] for k in range(len(array.chunks[0]))]

    def _scattered(self, args: tuple[Any, ...]) -> tuple[Any, ...]:
        """Large arrays go to the workers once per call, not once per block (small ones ride in the task)."""
        return tuple(self.client.scatter(a, broadcast=True, hash=False) if isinstance(a, np.ndarray) and a.nbytes > SCATTER_BYTES
                     else a for a in args)

    def run(self, k: int, first: int, fn: Callable[..., Any], args: tuple[Any, ...]) -> Any:
        return self.client.submit(fn, self.futures[k], first, *args, pure=False).result()

    def run_all(self, firsts: list[int], fn: Callable[..., Any], args: tuple[Any, ...]) -> list[Any]:
        shared = self._scattered(args)
        jobs = [self.client.submit(fn, f, first, *shared, pure=False) for f, first in zip(self.futures, firsts)]
        return self.client.gather(jobs)


def _default_client() -> Any | None:
    try:
        from distributed import get_client
    except ImportError:
        return None
    try:
        return get_client()
    except ValueError:
        return None


# ---------------------------------------------------------------- the couplings

class DaskCouplings:
    """K of the canonical form (kind "operator") from a dask array J held in row blocks.

    The blocks hold a symmetric matrix M and K = M − diag M: M is J itself, or J + Jᵀ formed once
    on the cluster when J is upper-triangular (``mode`` "triangular").  ``scale`` divides every
    entry (the adapters' exact power-of-two rescaling).  Functions given to :meth:`on_block` see
    the rows of M and must skip its diagonal (``diagonal`` holds it).
    """

    ndim = 2

    def __init__(self, J: Any, *, client: Any = None, notes: list[str] | None = None) -> None:
        import dask.array as da

        if J.ndim != 2 or J.shape[0] != J.shape[1]:
            raise InputError(f"J must be square, got shape {tuple(J.shape)}")
        if np.dtype(J.dtype).kind not in "biuf":
            raise InputError(f"J must hold real numbers, got dtype {J.dtype}")
        if len(J.chunks[1]) != 1:
            J = J.rechunk({1: -1})
            (notes if notes is not None else []).append(
                "J was rechunked into row blocks (whole rows per block): each block must hold complete rows")
        self.array: Any = da.asarray(J)
        self.shape = (int(J.shape[0]), int(J.shape[1]))
        self.dtype = np.dtype(np.float64)
        starts = np.concatenate([[0], np.cumsum(J.chunks[0])]).astype(int)
        self.bounds = tuple((int(a), int(b)) for a, b in zip(starts[:-1], starts[1:]))
        client = client if client is not None else _default_client()
        self.where: Any = _ClusterBlocks(self.array, client) if client is not None else _LocalBlocks(self.array)
        self.mode, self.scale = "symmetric", 1.0
        self.diagonal = np.zeros(self.shape[0])
        self._sums: tuple[float, ...] | None = None

    # -- the RowBlocks protocol
    def on_block(self, k: int, fn: Callable[..., Any], *args: Any) -> Any:
        """``fn(rows of M, first row, *args)`` run where block k lives (K = M − diag M; see the class)."""
        return self.where.run(k, self.bounds[k][0], fn, args)

    def _all(self, fn: Callable[..., Any], *args: Any) -> list[Any]:
        return self.where.run_all([b[0] for b in self.bounds], fn, args)

    def matvec_as(self, x: np.ndarray, dtype: Any) -> np.ndarray:
        """K x: each block computes its rows' products in ``dtype``; the result is float64."""
        x = np.asarray(x, dtype=np.float64).reshape(-1)
        parts = self._all(_block_products, x, np.dtype(dtype), False)
        y = np.concatenate([own for own, _ in parts])
        y -= self.diagonal * x
        return y / self.scale if self.scale != 1.0 else y

    def matvec(self, x: np.ndarray) -> np.ndarray:
        return self.matvec_as(np.asarray(x).reshape(-1), np.float64)

    def transposed_product(self, x: np.ndarray) -> np.ndarray:
        """Jᵀ x from the blocks' shares (used by the symmetry check)."""
        parts = self._all(_block_products, np.asarray(x, dtype=np.float64), np.dtype(np.float64), True)
        return np.sum([share for _, share in parts], axis=0)

    def _block_sums(self) -> tuple[float, ...]:
        if self._sums is None:
            per = self._all(_block_sums)
            s = [sum(p[i] for p in per) for i in (0, 1, 2, 3, 4, 6)]
            big = max((p[5] for p in per), default=0.0)
            self._sums = (s[0], s[1], s[2], s[3], int(s[4]), big, s[5])
        return self._sums

    def power_sums(self) -> tuple[float, float, float, float, int, float]:
        s1, s2, s3, s4, nonzero, big, _ = self._block_sums()
        t = self.scale
        return s1 / t, s2 / t**2, s3 / t**3, s4 / t**4, int(nonzero), big / abs(t)

    def max_abs(self) -> float:
        return self._block_sums()[5] / abs(self.scale)

    def abs_sum(self) -> float:
        return self._block_sums()[6] / abs(self.scale)

    def fraction_bits(self) -> int:
        """Binary fraction digits the entries of K need (adapters.validate.dyadic_resolution)."""
        bits = max(self._all(_block_fraction_bits), default=0)
        return bits + int(round(math.log2(abs(self.scale))))

    def __truediv__(self, t: float) -> "DaskCouplings":
        """The same blocks with every entry divided by ``t`` (an exact power of two, or −1 for a sign)."""
        other = object.__new__(DaskCouplings)
        other.__dict__.update(self.__dict__)
        other.scale = self.scale * float(t)
        other._sums = self._sums
        return other

    # -- the checks, run once on the blocks
    def check(self, symmetrize: bool, rtol: float, rng: np.random.Generator) -> tuple[str, list[str]]:
        """Finite entries, diagonal, symmetry or upper-triangularity; returns (mode, repair notes)."""
        notes: list[str] = []
        per = self._all(_block_checks)
        for where, _ in per:
            if where is not None:
                i, j = where
                raise InputError(f"J[{i}, {j}] is not finite; every entry must be finite")
        self.diagonal = np.concatenate([d for _, d in per]) if per else np.zeros(0)
        if np.any(self.diagonal != 0):
            notes.append(f"dropped {int(np.count_nonzero(self.diagonal))} non-zero diagonal entries of J: "
                         f"s_i² = 1 is a constant")
        asym = self._asymmetry(rng)
        big = max(self._block_sums()[5], float(np.abs(self.diagonal).max()) if self.diagonal.size else 0.0)
        n = self.shape[0]
        if asym <= rtol * big + 8 * n * np.finfo(float).eps * max(big, 1e-300):
            self.mode = "symmetric"
        elif sum(self._all(_block_lower_nonzeros)) == 0:
            self._symmetrise_triangular()
            notes.append("J is upper-triangular: J + Jᵀ was formed on the cluster (its blocks moved between "
                         "workers once); pass a symmetric J to avoid it")
        else:
            hint = ("(J + Jᵀ)/2 is not formed on a cluster here: compute it with dask first, e.g. J = (J + J.T) / 2"
                    if symmetrize else "pass a symmetric J, e.g. J = (J + J.T) / 2 computed with dask")
            raise InputError(f"J is neither symmetric nor upper-triangular (a random probe found "
                             f"|(J − Jᵀ)x| up to {asym:.3g}); {hint}")
        return self.mode, notes

    def _symmetrise_triangular(self) -> None:
        """K = J + Jᵀ for an upper-triangular J, formed by dask and kept in the same row blocks."""
        rows = self.array.chunks[0]
        self.array = (self.array + self.array.T).rechunk((rows, -1))
        client = getattr(self.where, "client", None)
        self.where = _ClusterBlocks(self.array, client) if client is not None else _LocalBlocks(self.array)
        self.mode, self._sums = "triangular", None
        self.diagonal = 2.0 * self.diagonal

    def _asymmetry(self, rng: np.random.Generator) -> float:
        worst = 0.0
        for _ in range(SYMMETRY_PROBES):
            x = rng.choice([-1.0, 1.0], size=self.shape[0])
            own = np.concatenate([o for o, _ in self._all(_block_products, x, np.dtype(np.float64), False)])
            worst = max(worst, float(np.abs(own - self.transposed_product(x)).max()) if x.size else 0.0)
        return worst
