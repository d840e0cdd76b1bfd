"""GraphML (an open XML standard) read through networkx, without entity expansion.

Files that declare a DOCTYPE or ENTITY are refused outright: entity expansion is
how hostile XML explodes in memory, and GraphML needs neither.
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

from spinward.core.errors import FileFormatError

from .safety import read_text

_DANGEROUS = re.compile(r"<!\s*(DOCTYPE|ENTITY)", re.IGNORECASE)


def read_graphml(p: Path, node_type: type = str) -> Any:
    import networkx as nx

    text = read_text(p)
    hit = _DANGEROUS.search(text)
    if hit:
        line = text.count("\n", 0, hit.start()) + 1
        raise FileFormatError(f"{p}:{line}: GraphML with a DOCTYPE or ENTITY declaration is refused "
                              f"(entity expansion is unsafe); remove the declaration")
    try:
        return nx.parse_graphml(text, node_type=node_type)
    except Exception as exc:  # ElementTree.ParseError carries (line, column)
        pos = getattr(exc, "position", None)
        where = f":{pos[0]}" if pos else ""
        raise FileFormatError(f"{p}{where}: malformed GraphML ({exc})") from None


def write_graphml(graph: Any, path: Path) -> None:
    import networkx as nx

    nx.write_graphml(graph, path)
