"""MaxCut on a weighted graph: maximise Σ_{(u,v)∈E} w_uv · [side_u ≠ side_v].

Weights of any sign; parallel edges (MultiGraph) add up; a missing weight is 1;
self-loops never cross a cut and are dropped with a warning.  A DiGraph is an
error unless ``symmetrize=True``, which treats each arc as an undirected edge
(u→v and v→u add up).  Sides come back as 0 and 1.

Build one from a networkx graph, ``MaxCut(graph, weight="weight")``, or from edge
arrays, ``MaxCut.from_edges(heads, tails, weights, labels=...)``, which needs no
networkx graph at all (a file of 10⁶ nodes is read that way).
"""

from __future__ import annotations

from numbers import Real
from typing import Any, Hashable, Iterable

import numpy as np

from spinward.core.canonical import CanonicalProblem
from spinward.core.errors import InputError

from ._base import CachedForm, build_canonical
from .validate import EXACT_INT, check_dense_memory, check_number, correctly_rounded_sum, inexact_sum, labels_for

#: graphs at least this dense get a dense coupling matrix
DENSE_FILL = 0.1


class MaxCut(CachedForm):
    """Maximise the total weight of edges whose ends lie on different sides."""

    form = "maxcut"
    sense = "max"
    domain = (0, 1)

    def __init__(self, graph: Any, *, weight: str = "weight", symmetrize: bool = False) -> None:
        super().__init__()
        if not hasattr(graph, "nodes") or not hasattr(graph, "edges"):
            raise InputError(f"MaxCut needs a networkx graph, got {type(graph).__name__}")
        if graph.is_directed() and not symmetrize:
            raise InputError("MaxCut needs an undirected graph; pass symmetrize=True to treat arcs as edges "
                             "(u→v and v→u add up)")
        if not isinstance(weight, str):
            raise InputError(f"weight must be the name of an edge attribute (a string), got {weight!r}")
        self._graph: Any = graph
        self.weight = weight
        self._labels = tuple(graph.nodes)
        self._set_edges(*self._graph_edges())

    @classmethod
    def from_edges(cls, heads: Any, tails: Any, weights: Any = None, *, labels: Iterable[Hashable] | None = None,
                   n: int | None = None) -> "MaxCut":
        """MaxCut on edges (heads[k], tails[k]) of weight weights[k] (default 1), given as node indices.

        Indices run over 0..n−1 and name ``labels[i]`` (default: the index itself); ``n``
        defaults to len(labels), else to the largest index + 1.  Nodes without an edge
        are kept.  Parallel edges add up; self-loops are dropped with a warning.
        """
        labels = None if labels is None else tuple(labels)
        self = cls.__new__(cls)
        CachedForm.__init__(self)
        self._graph = None
        self.weight = "weight"
        u, v = _index_array(heads, "heads"), _index_array(tails, "tails")
        if u.shape != v.shape:
            raise InputError(f"heads and tails must have the same length, got {u.size} and {v.size}")
        w = np.ones(u.size) if weights is None else _weight_array(weights, u.size)
        size = _node_count(u, v, labels, n)
        self._labels = labels_for(size, labels, "MaxCut") if labels is not None else tuple(range(size))
        self._set_edges(u, v, w, int(np.count_nonzero(u == v)))
        return self

    def _graph_edges(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, int]:
        index = {node: k for k, node in enumerate(self._labels)}
        rows, cols, ws, loops = [], [], [], 0
        others: set[Any] = set()
        carried = False
        for u, v, data in self._graph.edges(data=True):
            if self.weight in data:
                carried = True
            elif data:
                others.update(k for k, x in data.items() if isinstance(x, Real) and not isinstance(x, bool))
            rows.append(index[u])
            cols.append(index[v])
            ws.append(check_number(data.get(self.weight, 1), f"weight of edge ({u!r}, {v!r})"))
            loops += u == v
        if others and not carried:
            self.note(f"no edge carries the weight attribute {self.weight!r}, but edges carry numeric "
                      f"{', '.join(map(repr, sorted(map(str, others))))}; solved with unit weights. Pass "
                      f"weight={sorted(map(str, others))[0]!r} (CLI: --weight NAME) to use it")
        return (np.array(rows, dtype=np.int64), np.array(cols, dtype=np.int64), np.array(ws, dtype=np.float64),
                loops)

    def _set_edges(self, u: np.ndarray, v: np.ndarray, w: np.ndarray, loops: int) -> None:
        if loops:
            self.note(f"dropped {loops} self-loop(s): a loop never crosses a cut")
            keep = u != v
            u, v, w = u[keep], v[keep], w[keep]
        at = inexact_sum(np.minimum(u, v), np.maximum(u, v), w, (len(self._labels),) * 2)
        if at is not None:
            a, b = (self._labels[k] for k in at)
            raise InputError(f"the parallel edges between {a!r} and {b!r} add up to 2**53 or more in magnitude, "
                             f"where float64 is no longer exact; divide the weights by a common factor")
        self._rows, self._cols, self._w = u, v, w

    @property
    def graph(self) -> Any:
        """The caller's networkx graph; built on first use (self-loops left out) for a form made from edges."""
        if self._graph is None:
            import networkx as nx

            g = nx.MultiGraph()
            g.add_nodes_from(self._labels)
            labels = self._labels
            g.add_weighted_edges_from((labels[a], labels[b], c) for a, b, c in
                                      zip(self._rows.tolist(), self._cols.tolist(), self._w.tolist()))
            self._graph = g
        return self._graph

    def edge_arrays(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(heads, tails, weights) as node indices into ``labels``, self-loops dropped."""
        return self._rows, self._cols, self._w

    def _build(self) -> CanonicalProblem:
        n = len(self._labels)
        import scipy.sparse as sp

        W = sp.coo_array((self._w, (self._rows, self._cols)), shape=(n, n)).tocsr()
        W = sp.csr_array(W + W.T)
        W.sum_duplicates()
        W.eliminate_zeros()
        total = correctly_rounded_sum(self._w)
        P: Any = W * -0.5
        if n and W.nnz >= DENSE_FILL * n * n:
            check_dense_memory(n)
            P = P.toarray()
        return build_canonical(P, np.zeros(n), total / 2, sign=1.0, shift=0.0, labels=self._labels,
                               form="maxcut", sense="max")

    def _coefficients(self) -> tuple[Any, ...]:
        return (self._w,)

    def phrase(self, topic: str, values: dict[str, float]) -> str | None:
        if topic != "mean-part":
            return None
        weight = 2 * abs(values["mean"] * values["scale"])  # canonical K = −w/2
        return (f"the graph is dense and its edge weights average {weight:.4g} per pair of nodes: this rank-one "
                f"part favours balanced cuts (two sides of equal size)")

    def _objective(self, values: np.ndarray) -> float:
        """The cut weight, summed over the caller's own edges and correctly rounded (math.fsum)."""
        x = np.asarray(values)
        if x.shape != (len(self._labels),):
            raise InputError(f"expected {len(self._labels)} sides, got shape {x.shape}")
        cut = x[self._rows] != x[self._cols]
        return correctly_rounded_sum(self._w[cut])


def _index_array(data: Any, name: str) -> np.ndarray:
    arr = np.asarray(data)
    if arr.ndim != 1:
        raise InputError(f"{name} must be a 1-D array of node indices, got shape {arr.shape}")
    if arr.size and arr.dtype.kind not in "iu":
        raise InputError(f"{name} must hold integer node indices (0..n−1), got dtype {arr.dtype}; "
                         f"map labels to indices and pass the labels as labels=")
    if arr.size and int(arr.min()) < 0:
        raise InputError(f"{name} holds the negative index {int(arr.min())}; node indices run from 0 to n−1")
    return arr.astype(np.int64, copy=False)


def _weight_array(data: Any, m: int) -> np.ndarray:
    from .validate import as_vector

    raw = np.asarray(data)
    if raw.dtype.kind in "iu" and raw.size and (int(raw.max()) > EXACT_INT or int(raw.min()) < -EXACT_INT):
        k = int(np.flatnonzero((raw > EXACT_INT) | (raw < -EXACT_INT))[0])
        raise InputError(f"weights[{k}] = {int(raw[k])} is beyond 2**53, where float64 is no longer exact; "
                         f"divide the weights by a common factor")
    return as_vector(raw, m, "weights")


def _node_count(u: np.ndarray, v: np.ndarray, labels: tuple[Hashable, ...] | None, n: int | None) -> int:
    top = int(max(u.max(), v.max())) + 1 if u.size else 0
    if labels is not None:
        size = len(labels)
    elif n is not None:
        size = int(check_number(n, "n"))
    else:
        size = top
    if top > size:
        raise InputError(f"an edge names node index {top - 1}, but there are only {size} nodes (0..{size - 1})")
    return size
