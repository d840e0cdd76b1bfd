"""Durable benchmark results: one sqlite3 row per run, in WAL mode, committed as each run ends.

The primary key is the run key (instance hash + solver + options with the time
limit + seed + repetition; see :func:`spinward.bench.suite.run_key`), so a rerun
skips stored runs and can never store one twice.  Because every row is its own
committed transaction, killing the runner loses at most the runs in flight.

Objectives and bounds are in the caller's units and sense (``sense`` is "min"
or "max"); ``trace`` is a JSON list of [seconds, objective] pairs, the
improving states a solver reported over time.
"""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Iterable
from pathlib import Path
from typing import Any

COLUMNS: dict[str, str] = {
    "key": "TEXT PRIMARY KEY",
    "suite": "TEXT", "instance": "TEXT NOT NULL", "family": "TEXT", "size": "INTEGER", "n": "INTEGER",
    "instance_seed": "INTEGER", "params": "TEXT", "path": "TEXT", "known_optimum": "REAL",
    "solver": "TEXT NOT NULL", "options": "TEXT NOT NULL", "time_limit": "REAL",
    "seed": "INTEGER NOT NULL", "repetition": "INTEGER NOT NULL", "run_seed": "INTEGER",
    "form": "TEXT", "sense": "TEXT", "objective": "REAL", "bound": "REAL", "bound_kind": "TEXT",
    "exact": "INTEGER", "status": "TEXT NOT NULL", "wall_time": "REAL", "trace": "TEXT",
    "state_hash": "TEXT", "error": "TEXT", "worker": "TEXT", "finished_at": "TEXT",
}
JSON_COLUMNS = ("params", "options", "trace")


class Store:
    """The results database (sqlite3, WAL).  Use as a context manager or call :meth:`close`."""

    def __init__(self, path: str | Path) -> None:
        self.path = Path(path)
        self.db = sqlite3.connect(self.path, timeout=30.0)
        self.db.row_factory = sqlite3.Row
        self.db.execute("PRAGMA journal_mode=WAL")
        # NORMAL is durable against a killed process in WAL mode; only a power cut may drop the last commits
        self.db.execute("PRAGMA synchronous=NORMAL")
        cols = ", ".join(f"{k} {v}" for k, v in COLUMNS.items())
        self.db.execute(f"CREATE TABLE IF NOT EXISTS runs ({cols})")
        self.db.commit()

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        self.db.close()

    def keys(self) -> set[str]:
        """Keys of every stored run."""
        return {r[0] for r in self.db.execute("SELECT key FROM runs")}

    def add(self, row: dict[str, Any]) -> bool:
        """Store one run and commit at once; False when its key was already stored."""
        unknown = set(row) - set(COLUMNS)
        if unknown:
            raise ValueError(f"unknown result columns {sorted(unknown)}")
        values = {k: (json.dumps(v) if k in JSON_COLUMNS and v is not None else v) for k, v in row.items()}
        names = ", ".join(values)
        marks = ", ".join("?" for _ in values)
        with self.db:  # one transaction per row: committed before the next run is stored
            cur = self.db.execute(f"INSERT OR IGNORE INTO runs ({names}) VALUES ({marks})", tuple(values.values()))
        return cur.rowcount == 1

    def add_many(self, rows: Iterable[dict[str, Any]]) -> int:
        return sum(self.add(r) for r in rows)

    def rows(self, where: str = "", args: tuple[Any, ...] = ()) -> list[dict[str, Any]]:
        """Every stored run as a dict (JSON columns decoded), ordered by key."""
        sql = "SELECT * FROM runs" + (f" WHERE {where}" if where else "") + " ORDER BY key"
        out = []
        for r in self.db.execute(sql, args):
            d = dict(r)
            for k in JSON_COLUMNS:
                if d.get(k) is not None:
                    d[k] = json.loads(d[k])
            out.append(d)
        return out

    def count(self) -> int:
        return int(self.db.execute("SELECT COUNT(*) FROM runs").fetchone()[0])
