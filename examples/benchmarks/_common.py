"""Small helpers shared by the benchmark scripts: tables, JSON output, timing."""

from __future__ import annotations

import json
import os
import platform
import time
from pathlib import Path
from typing import Any, Callable, Sequence


def maxcut_canonical(n: int, edges: Any, weights: Any) -> Any:
    """Weighted MaxCut on ``n`` nodes as canonical: K = −W/2, k₀ = total weight / 2, so C(σ) = cut weight.

    ``edges`` is an (m, 2) integer array, ``weights`` its m edge weights.
    """
    import numpy as np
    import scipy.sparse as sp

    from spinward.core import CanonicalProblem

    edges = np.asarray(edges, dtype=np.int64).reshape(-1, 2)
    w = np.asarray(weights, dtype=np.float64)
    rows, cols = np.r_[edges[:, 0], edges[:, 1]], np.r_[edges[:, 1], edges[:, 0]]
    W = sp.csr_array((np.r_[w, w], (rows, cols)), shape=(n, n))
    return CanonicalProblem(-0.5 * W, np.zeros(n), float(w.sum()) / 2)


def machine() -> dict[str, Any]:
    return {"python": platform.python_version(), "cpus": os.cpu_count(), "machine": platform.machine()}


def timed(fn: Callable[[], Any]) -> tuple[Any, float]:
    t0 = time.perf_counter()
    out = fn()
    return out, time.perf_counter() - t0


def table(rows: Sequence[dict[str, Any]], columns: Sequence[str]) -> str:
    """A plain fixed-width table of the given columns."""
    def cell(v: Any) -> str:
        return f"{v:.4g}" if isinstance(v, float) else str(v)

    widths = [max(len(c), *(len(cell(r.get(c, ""))) for r in rows)) for c in columns]
    head = "  ".join(c.ljust(w) for c, w in zip(columns, widths))
    body = ["  ".join(cell(r.get(c, "")).ljust(w) for c, w in zip(columns, widths)) for r in rows]
    return "\n".join([head, "  ".join("-" * w for w in widths), *body])


def write_json(path: str | Path, payload: dict[str, Any]) -> None:
    p = Path(path)
    p.parent.mkdir(parents=True, exist_ok=True)
    p.write_text(json.dumps({"machine": machine(), **payload}, indent=2) + "\n", encoding="utf-8")
    print(f"\nJSON written to {p}")
