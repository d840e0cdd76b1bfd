"""Small helpers shared by the benchmark scripts: tables, JSON output, timing."""

from __future__ import annotations

import json
import os
import platform
import time
from pathlib import Path
from typing import Any, Callable, Sequence


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
