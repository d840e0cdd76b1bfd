"""GraphML (an open XML standard) read through networkx, without entity expansion.

Files that declare a DOCTYPE or ENTITY are refused outright: entity expansion is
how hostile XML explodes in memory, and GraphML needs neither.  A file holds one
graph (a second one would be ignored, so it is refused); node ids must be printable.
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

from spinward.core.errors import FileFormatError

from ..graph import MaxCut
from .safety import control_character, read_text

_DANGEROUS = re.compile(r"<!\s*(DOCTYPE|ENTITY)", re.IGNORECASE)
_COMMENT = re.compile(r"<!--.*?-->", re.DOTALL)
_GRAPH = re.compile(r"<(?:[\w.-]+:)?graph[\s/>]")


def read_graphml(p: Path, node_type: type = str) -> Any:
    """The file's one graph as a networkx graph."""
    import networkx as nx

    text = read_text(p)
    hit = _DANGEROUS.search(text)
    if hit:
        line = text.count("\n", 0, hit.start()) + 1
        raise FileFormatError(f"{p}:{line}: GraphML with a DOCTYPE or ENTITY declaration is refused "
                              f"(entity expansion is unsafe); remove the declaration")
    graphs = len(_GRAPH.findall(_COMMENT.sub("", text)))
    if graphs > 1:
        raise FileFormatError(f"{p}: holds {graphs} graphs, but a problem file holds one; "
                              f"split it into one file per graph")
    try:
        graph = nx.parse_graphml(text, node_type=node_type)
    except Exception as exc:  # ElementTree.ParseError carries (line, column)
        pos = getattr(exc, "position", None)
        where = f":{pos[0]}" if pos else ""
        raise FileFormatError(f"{p}{where}: malformed GraphML ({exc})") from None
    _check_node_ids(p, graph)
    return graph


def _check_node_ids(p: Path, graph: Any) -> None:
    for node in graph.nodes:
        ch = control_character(str(node))
        if ch is not None:
            raise FileFormatError(f"{p}: the node id {str(node)!r} holds the control character U+{ord(ch):04X}; "
                                  f"node ids must be printable text")


def read_graphml_problem(p: Path, *, weight: str = "weight") -> MaxCut:
    """A MaxCut on the file's graph, weights from the edge attribute ``weight``."""
    graph = read_graphml(p)
    if graph.is_directed():
        raise FileFormatError(f"{p}: the graph is directed (edgedefault=\"directed\"), but a cut needs undirected "
                              f"edges; declare edgedefault=\"undirected\"")
    return MaxCut(graph, weight=weight)


def write_graphml(graph: Any, path: Path) -> None:
    import networkx as nx

    nx.write_graphml(graph, path)
