"""Durable benchmark results: one sqlite3 row per run, in WAL mode, committed as each run ends.

The primary key is the run key (instance hash + solver + options with the time
limit + seed + repetition; see :func:`spinward.bench.suite.run_key`), so a rerun
skips stored runs and can never store one twice.  Because every row is its own
committed transaction, killing the runner loses at most the runs in flight.

Objectives and bounds are in the caller's units and sense (``sense`` is "min"
or "max"); ``trace`` is a JSON list of [seconds, objective] pairs, the
improving states a solver reported over time.

Several runners may share one database (on one machine: SQLite's WAL mode needs
shared memory, so not over a network file system).  A runner *claims* a run
before it starts it: a row in ``claims`` with its runner id and an expiry time,
renewed while the run is in flight.  Another runner takes over a claim once it
has expired, or at once when the claiming process is gone from this machine, so
a runner killed with SIGKILL leaves its runs to the others.  ``runners`` holds
one row per runner start: what ran where (versions, CPU count, dates).
"""

from __future__ import annotations

import contextlib
import json
import os
import socket
import sqlite3
import time
from collections.abc import Iterable, Iterator
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
    # added later; older databases get them (NULL) when opened
    "name": "TEXT", "label": "TEXT", "per_spin": "TEXT", "chosen": "TEXT", "runner": "TEXT",
}
JSON_COLUMNS = ("params", "options", "per_spin", "trace")
CLAIM_COLUMNS = "key TEXT PRIMARY KEY, runner TEXT NOT NULL, host TEXT, pid INTEGER, expires REAL NOT NULL"
RUNNER_COLUMNS: dict[str, str] = {
    "runner": "TEXT PRIMARY KEY", "suite": "TEXT", "host": "TEXT", "pid": "INTEGER", "started_at": "TEXT",
    "finished_at": "TEXT", "workers": "INTEGER", "executor": "TEXT", "spinward": "TEXT", "python": "TEXT",
    "numpy": "TEXT", "platform": "TEXT", "cpus": "INTEGER", "limits": "TEXT",
}


class Store:
    """The results database (sqlite3, WAL).  Use as a context manager or call :meth:`close`."""

    def __init__(self, path: str | Path) -> None:
        self.path = Path(path)
        # autocommit mode: every write below opens its own BEGIN IMMEDIATE transaction
        self.db = sqlite3.connect(self.path, timeout=60.0, isolation_level=None)
        self.db.row_factory = sqlite3.Row
        self.db.execute("PRAGMA journal_mode=WAL")
        # NORMAL is durable against a killed process in WAL mode; only a power cut may drop the last commits
        self.db.execute("PRAGMA synchronous=NORMAL")
        with self.write():
            cols = ", ".join(f"{k} {v}" for k, v in COLUMNS.items())
            self.db.execute(f"CREATE TABLE IF NOT EXISTS runs ({cols})")
            self._add_missing_columns("runs", COLUMNS)
            self.db.execute(f"CREATE TABLE IF NOT EXISTS claims ({CLAIM_COLUMNS})")
            self.db.execute(f"CREATE TABLE IF NOT EXISTS runners "
                            f"({', '.join(f'{k} {v}' for k, v in RUNNER_COLUMNS.items())})")

    def _add_missing_columns(self, table: str, wanted: dict[str, str]) -> None:
        have = {r[1] for r in self.db.execute(f"PRAGMA table_info({table})")}
        for name, kind in wanted.items():
            if name not in have:
                self.db.execute(f"ALTER TABLE {table} ADD COLUMN {name} {kind.replace(' NOT NULL', '')}")

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        self.db.close()

    @contextlib.contextmanager
    def write(self) -> Iterator[sqlite3.Connection]:
        """One write transaction, taken at once (BEGIN IMMEDIATE), committed on success."""
        self.db.execute("BEGIN IMMEDIATE")
        try:
            yield self.db
        except BaseException:
            self.db.execute("ROLLBACK")
            raise
        self.db.execute("COMMIT")

    def keys(self) -> set[str]:
        """Keys of every stored run."""
        return {r[0] for r in self.db.execute("SELECT key FROM runs")}

    def add(self, row: dict[str, Any], *, release: str | None = None) -> bool:
        """Store one run and commit at once; False when its key was already stored.

        ``release`` names a runner whose claim on the key is dropped in the same transaction.
        """
        unknown = set(row) - set(COLUMNS)
        if unknown:
            raise ValueError(f"unknown result columns {sorted(unknown)}")
        values = {k: (json.dumps(v) if k in JSON_COLUMNS and v is not None else v) for k, v in row.items()}
        names = ", ".join(values)
        marks = ", ".join("?" for _ in values)
        with self.write():  # one transaction per row: committed before the next run is stored
            cur = self.db.execute(f"INSERT OR IGNORE INTO runs ({names}) VALUES ({marks})", tuple(values.values()))
            if release is not None:
                self.db.execute("DELETE FROM claims WHERE key = ? AND runner = ?", (row["key"], release))
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

    # ------------------------------------------------------------ leases

    def claim(self, key: str, runner: str, lease: float) -> bool:
        """Claim an unstored run for ``lease`` seconds; False when it is stored or another live runner holds it."""
        with self.write():
            if self.db.execute("SELECT 1 FROM runs WHERE key = ?", (key,)).fetchone():
                return False
            held = self.db.execute("SELECT runner, host, pid, expires FROM claims WHERE key = ?", (key,)).fetchone()
            if held is not None and held["runner"] != runner and claim_alive(held):
                return False
            self.db.execute("INSERT OR REPLACE INTO claims (key, runner, host, pid, expires) VALUES (?, ?, ?, ?, ?)",
                            (key, runner, socket.gethostname(), os.getpid(), time.time() + lease))
        return True

    def renew(self, keys: Iterable[str], runner: str, lease: float) -> None:
        """Push the expiry of this runner's claims on ``keys`` ``lease`` seconds ahead."""
        keys = list(keys)
        if not keys:
            return
        with self.write():
            self.db.executemany("UPDATE claims SET expires = ? WHERE key = ? AND runner = ?",
                                [(time.time() + lease, k, runner) for k in keys])

    def release(self, runner: str, key: str | None = None) -> None:
        """Drop this runner's claim on ``key`` (every claim of the runner when None)."""
        with self.write():
            if key is None:
                self.db.execute("DELETE FROM claims WHERE runner = ?", (runner,))
            else:
                self.db.execute("DELETE FROM claims WHERE runner = ? AND key = ?", (runner, key))

    def held_elsewhere(self, runner: str) -> set[str]:
        """Keys that another runner holds by a live claim."""
        rows = self.db.execute("SELECT key, runner, host, pid, expires FROM claims WHERE runner != ?", (runner,))
        return {r["key"] for r in rows if claim_alive(r)}

    # ------------------------------------------------------------ runners

    def start_runner(self, info: dict[str, Any]) -> None:
        """Record one runner start (see ``RUNNER_COLUMNS``)."""
        values = {k: (json.dumps(v) if k == "limits" else v) for k, v in info.items() if k in RUNNER_COLUMNS}
        with self.write():
            self.db.execute(f"INSERT OR REPLACE INTO runners ({', '.join(values)}) "
                            f"VALUES ({', '.join('?' for _ in values)})", tuple(values.values()))

    def finish_runner(self, runner: str, finished_at: str) -> None:
        with self.write():
            self.db.execute("UPDATE runners SET finished_at = ? WHERE runner = ?", (finished_at, runner))

    def runners(self) -> list[dict[str, Any]]:
        """Every recorded runner start, oldest first."""
        out = []
        for r in self.db.execute("SELECT * FROM runners ORDER BY started_at"):
            d = dict(r)
            d["limits"] = json.loads(d["limits"]) if d.get("limits") else None
            out.append(d)
        return out


def claim_alive(claim: Any) -> bool:
    """A claim holds until it expires, unless its process is gone from this machine."""
    if claim["expires"] < time.time():
        return False
    if claim["host"] == socket.gethostname() and claim["pid"] is not None:
        return process_alive(int(claim["pid"]))
    return True


def process_alive(pid: int) -> bool:
    """Whether ``pid`` runs on this machine (a zombie counts as gone)."""
    if os.name == "nt":  # os.kill there would end the process: rely on the claim's expiry
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    try:  # Linux: a killed process that its parent has not reaped yet is a zombie ("Z")
        stat = Path(f"/proc/{pid}/stat").read_text()
        return stat.rsplit(")", 1)[1].split()[0] != "Z"
    except (OSError, IndexError):
        return True
