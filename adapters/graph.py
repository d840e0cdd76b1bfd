"""MaxCut on a weighted networkx graph: maximise Σ_{(u,v)∈E} w_uv · [side_u ≠ side_v].

Weights of any sign; parallel edges (MultiGraph) add up; a missing weight is 1;
self-loops never cross a cut and are dropped with a warning.  A DiGraph is an
error unless ``symmetrize=True``, which treats each arc as an undirected edge
(u→v and v→u add up).  Sides come back as 0 and 1.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from spinward.core.canonical import CanonicalProblem
from spinward.core.errors import InputError

from ._base import CachedForm, build_canonical
from .validate import check_dense_memory, check_number

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
        self.graph = graph
        self.weight = weight
        self._labels = tuple(graph.nodes)
        self._rows, self._cols, self._w = self._edge_arrays()

    def _edge_arrays(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        index = {node: k for k, node in enumerate(self._labels)}
        rows, cols, ws, loops = [], [], [], 0
        for u, v, data in self.graph.edges(data=True):
            if u == v:
                loops += 1
                continue
            rows.append(index[u])
            cols.append(index[v])
            ws.append(check_number(data.get(self.weight, 1), f"weight of edge ({u!r}, {v!r})"))
        if loops:
            self.note(f"dropped {loops} self-loop(s): a loop never crosses a cut")
        return np.array(rows, dtype=np.int64), np.array(cols, dtype=np.int64), np.array(ws, dtype=np.float64)

    def _build(self) -> CanonicalProblem:
        n = len(self._labels)
        import scipy.sparse as sp

        W = sp.coo_array((self._w, (self._rows, self._cols)), shape=(n, n)).tocsr()
        W = sp.csr_array(W + W.T)
        W.sum_duplicates()
        W.eliminate_zeros()
        total = float(self._w.sum())
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
        """The cut weight, summed over the caller's own edges."""
        side = dict(zip(self._labels, np.asarray(values).tolist()))
        total = 0.0
        for u, v, data in self.graph.edges(data=True):
            if side[u] != side[v]:
                total += float(data.get(self.weight, 1))
        return total
