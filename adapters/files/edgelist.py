"""Weighted edge lists: one ``u v [weight]`` per line, read as a MaxCut graph.

``#`` and ``%`` start comments; a line with a single node declares an isolated
node (so none is lost).  Node ids are ints when every id is an integer, else
strings.  Parallel lines add up (a MultiGraph).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from .safety import bad_line, read_text


def read_edgelist(p: Path) -> Any:
    import networkx as nx

    nodes: list[str] = []
    edges: list[tuple[str, str, float]] = []
    for lineno, raw in enumerate(read_text(p).splitlines(), start=1):
        text = raw.split("#", 1)[0].split("%", 1)[0].strip()
        if not text:
            continue
        tok = text.replace(",", " ").split()
        if len(tok) == 1:
            nodes.append(tok[0])
        elif len(tok) in (2, 3):
            w = _weight(p, lineno, tok[2]) if len(tok) == 3 else 1.0
            edges.append((tok[0], tok[1], w))
        else:
            raise bad_line(p, lineno, f"expected 'u v [weight]', got {raw.strip()!r}")
    ids = nodes + [t for u, v, _ in edges for t in (u, v)]
    convert = int if ids and all(_is_int(t) for t in ids) else str
    g = nx.MultiGraph()
    g.add_nodes_from(convert(t) for t in nodes)
    g.add_weighted_edges_from((convert(u), convert(v), w) for u, v, w in edges)
    return g


def _is_int(token: str) -> bool:
    try:
        int(token)
    except ValueError:
        return False
    return True


def _weight(p: Path, lineno: int, token: str) -> float:
    try:
        w = float(token)
    except ValueError:
        raise bad_line(p, lineno, f"weight {token!r} is not a number") from None
    if not np.isfinite(w):
        raise bad_line(p, lineno, f"weight {token!r} is not finite")
    return w


def write_edgelist(graph: Any, path: Path, weight: str = "weight") -> None:
    lines = [f"# {graph.number_of_nodes()} nodes, {graph.number_of_edges()} edges: u v weight"]
    lines += [str(u) for u in graph.nodes if graph.degree(u) == 0]
    lines += [f"{u} {v} {float(d.get(weight, 1))!r}" for u, v, d in graph.edges(data=True)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
