"""The benchmark store under faults: dead runners, a second runner, claims that expire, Ctrl-C.

Waits here are on events (a row stored, a process gone) with generous deadlines, never sleeps
tuned to one machine.  The one timed promise, workers gone within 2 s of their runner's death,
is the documented one (spinward/bench/runner.py).
"""

from __future__ import annotations

import os
import re
import signal
import socket
import sqlite3
import subprocess
import sys
import time
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest

from spinward.bench.runner import run_suite
from spinward.bench.store import Store
from spinward.bench.suite import expand, load_suite

ROOT = Path(__file__).resolve().parents[2]
ENV = {**os.environ, "SPINWARD_NO_PLUGIN_AUTOLOAD": "1"}
#: 40 runs of about 0.25 s each, so a second runner finds work left
SHARED = """
name = "shared"
seeds = [0, 1, 2, 3, 4, 5, 6, 7]
time_limit = 0.25
[[generate]]
family = "sk"
sizes = [24, 40]
seeds = [1, 2]
[[generate]]
family = "regular"
sizes = [30]
params = { weights = "gaussian" }
[[solvers]]
name = "local"
"""
SUMMARY = re.compile(r"(\d+) runs planned, (\d+) already stored, (\d+) stored now"
                     r"(?:, (\d+) stored by another runner)?, (\d+) not stored")


def write(tmp_path: Path, text: str, name: str = "suite.toml") -> Path:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def start_runner(suite: Path, db: Path, *extra: str) -> subprocess.Popen:
    cmd = [sys.executable, "-m", "spinward", "bench", str(suite), "--db", str(db), "--progress", "none", *extra]
    return subprocess.Popen(cmd, cwd=ROOT, env=ENV, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            start_new_session=True)


def wait_for(condition, timeout: float = 180.0, what: str = "a condition") -> None:
    deadline = time.monotonic() + timeout
    while not condition():
        if time.monotonic() > deadline:
            raise AssertionError(f"timed out after {timeout:.0f} s waiting for {what}")
        time.sleep(0.05)


def query(db: Path, sql: str) -> list[tuple]:
    if not db.exists():
        return []
    with sqlite3.connect(db, timeout=30) as con:
        try:
            return con.execute(sql).fetchall()
        except sqlite3.OperationalError:  # tables not created yet
            return []


def summary_of(out: str) -> dict[str, int]:
    m = SUMMARY.search(out)
    assert m, out
    planned, already, stored, others, not_stored = (int(g or 0) for g in m.groups())
    return {"planned": planned, "already": already, "stored": stored, "others": others, "not_stored": not_stored}


def planned(suite: Path) -> set[str]:
    runs, _ = expand(load_suite(suite), ["local"])
    return {r.key for r in runs}


def test_two_runners_share_a_suite_and_run_every_key_exactly_once(tmp_path):
    suite, db = write(tmp_path, SHARED), tmp_path / "shared.sqlite"
    first = start_runner(suite, db, "--workers", "1")
    try:
        wait_for(lambda: query(db, "SELECT COUNT(*) FROM runs") and query(db, "SELECT COUNT(*) FROM runs")[0][0] >= 1,
                 what="the first runner's first row")
        second = start_runner(suite, db, "--workers", "1")
        out2, err2 = second.communicate(timeout=600)
        out1, err1 = first.communicate(timeout=600)
    finally:
        for p in (first, locals().get("second")):
            if p is not None and p.poll() is None:
                os.killpg(p.pid, signal.SIGKILL)
    assert first.returncode == 0 and second.returncode == 0, err1 + err2
    a, b = summary_of(out1), summary_of(out2)
    keys = planned(suite)
    rows = query(db, "SELECT key, runner FROM runs")
    assert {k for k, _ in rows} == keys and len(rows) == len(keys) == 40
    # each key ran once: every run a runner finished was stored by it (none ran twice, none was lost)
    assert a["not_stored"] == b["not_stored"] == 0
    assert a["stored"] + b["stored"] == len(keys) and b["already"] + b["stored"] + b["others"] == len(keys)
    assert b["stored"] >= 1 and a["stored"] >= 1  # they shared the work
    by_runner = {r for _, r in rows}
    assert len(by_runner) == 2
    assert query(db, "SELECT COUNT(*) FROM claims")[0][0] == 0  # every claim released


def test_a_runner_killed_midway_leaves_its_runs_to_the_other(tmp_path):
    suite, db = write(tmp_path, SHARED), tmp_path / "kill.sqlite"
    victim = start_runner(suite, db, "--workers", "1")
    survivor = None
    try:
        wait_for(lambda: (query(db, "SELECT COUNT(*) FROM runs") or [(0,)])[0][0] >= 2, what="two stored rows")
        survivor = start_runner(suite, db, "--workers", "1")
        wait_for(lambda: bool(query(db, "SELECT key FROM claims")), what="a claim in flight")
        os.killpg(victim.pid, signal.SIGKILL)  # the runner and its pool worker, mid-suite
        victim.wait(timeout=60)
        held = {k for (k,) in query(db, f"SELECT key FROM claims WHERE pid = {victim.pid}")}
        out, err = survivor.communicate(timeout=600)
    finally:
        for p in (victim, survivor):
            if p is not None and p.poll() is None:
                os.killpg(p.pid, signal.SIGKILL)
    assert survivor.returncode == 0, err
    keys = planned(suite)
    rows = dict(query(db, "SELECT key, runner FROM runs"))
    assert set(rows) == keys and len(rows) == 40  # the survivor finished the victim's keys
    assert summary_of(out)["not_stored"] == 0
    for key in held:  # runs the victim held when it died were taken over
        assert rows[key].split(":")[1] != str(victim.pid)
    with sqlite3.connect(db) as con:
        assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        assert con.execute("SELECT COUNT(*) FROM claims").fetchone()[0] == 0


LONG = """
name = "long"
seeds = [0, 1, 2, 3]
time_limit = 60
[[generate]]
family = "sk"
sizes = [300]
[[solvers]]
name = "local"
"""


@pytest.mark.parametrize("sig", [signal.SIGKILL, signal.SIGTERM])
def test_pool_workers_exit_within_two_seconds_of_their_runners_death(tmp_path, sig):
    psutil = pytest.importorskip("psutil", reason="psutil lists the runner's worker processes")
    suite, db = write(tmp_path, LONG), tmp_path / "long.sqlite"
    runner = start_runner(suite, db, "--workers", "2")
    pool: list = []
    try:
        parent = psutil.Process(runner.pid)

        def workers() -> list:
            return [c for c in parent.children() if "spawn_main" in " ".join(c.cmdline())]

        wait_for(lambda: len(workers()) == 2 and len(query(db, "SELECT key FROM claims")) >= 2,
                 what="two workers with runs in flight")
        pool = workers()
        os.kill(runner.pid, sig)  # the runner alone: its workers are busy in 60 s runs
        runner.wait(timeout=60)
        died = time.monotonic()

        def gone(p) -> bool:
            try:
                return p.status() == psutil.STATUS_ZOMBIE
            except psutil.NoSuchProcess:
                return True

        wait_for(lambda: all(gone(p) for p in pool), timeout=60, what="the workers to exit")
        assert time.monotonic() - died <= 2.0
    finally:
        if runner.poll() is None:
            os.killpg(runner.pid, signal.SIGKILL)
        for p in pool:  # only on failure: a worker that outlived its runner
            try:
                p.kill()
            except psutil.NoSuchProcess:
                pass


def test_claims_expire_and_claims_of_dead_processes_are_passed_over(tmp_path):
    with Store(tmp_path / "c.sqlite") as store:
        now = time.time()
        far = ("k-far", "other-host:1:x", "another-machine", 1, now + 3600)
        old = ("k-old", "other-host:1:x", "another-machine", 1, now - 1)
        done = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True,
                              check=True)
        dead = ("k-dead", "here:dead:x", socket.gethostname(), int(done.stdout), now + 3600)
        live = ("k-live", "here:live:x", socket.gethostname(), os.getpid(), now + 3600)
        with store.write():
            store.db.executemany("INSERT INTO claims (key, runner, host, pid, expires) VALUES (?, ?, ?, ?, ?)",
                                 [far, old, dead, live])
        assert store.held_elsewhere("me") == {"k-far", "k-live"}
        assert not store.claim("k-far", "me", 60)  # another machine's claim holds until it expires
        assert store.claim("k-old", "me", 60)  # expired
        assert store.claim("k-dead", "me", 60)  # its process is gone from this machine: no need to wait
        assert not store.claim("k-live", "me", 60)  # a live runner in this very process
        store.add({"key": "k-new", "instance": "i", "solver": "s", "options": {}, "seed": 0, "repetition": 0,
                   "status": "feasible"})
        assert not store.claim("k-new", "me", 60)  # stored already
        assert store.claim("k-free", "me", 60) and store.claim("k-free", "me", 60)  # free, and ours again
        store.release("me")
        assert store.held_elsewhere("someone") == {"k-far", "k-live"}


class InterruptedPool(ThreadPoolExecutor):
    """An executor that runs one run, then raises KeyboardInterrupt as Ctrl-C would in the runner."""

    def __init__(self) -> None:
        super().__init__(1)
        self.calls = 0

    def submit(self, fn, /, *args, **kwargs):
        self.calls += 1
        if self.calls > 2:
            raise KeyboardInterrupt
        return super().submit(fn, *args, **kwargs)


def test_ctrl_c_releases_the_runners_claims(tmp_path):
    suite = load_suite(write(tmp_path, SHARED))
    with Store(tmp_path / "i.sqlite") as store, InterruptedPool() as ex:
        with pytest.raises(KeyboardInterrupt):
            run_suite(suite, store, executor=ex, workers=1, progress="none")
        assert store.db.execute("SELECT COUNT(*) FROM claims").fetchone()[0] == 0
        stored = store.count()
    with Store(tmp_path / "i.sqlite") as store, ThreadPoolExecutor(2) as ex:  # a rerun finishes the rest
        summary = run_suite(suite, store, executor=ex, workers=2, progress="none")
        assert summary.already_stored == stored and store.count() == 40


def test_an_older_database_gains_the_new_columns_and_still_reports(tmp_path):
    from spinward.bench.page import build_report

    db = tmp_path / "old.sqlite"
    with sqlite3.connect(db) as con:  # the first schema: no name, label, per_spin, chosen, runner; no claims
        con.execute("CREATE TABLE runs (key TEXT PRIMARY KEY, suite TEXT, instance TEXT NOT NULL, family TEXT, "
                    "size INTEGER, n INTEGER, instance_seed INTEGER, params TEXT, path TEXT, known_optimum REAL, "
                    "solver TEXT NOT NULL, options TEXT NOT NULL, time_limit REAL, seed INTEGER NOT NULL, "
                    "repetition INTEGER NOT NULL, run_seed INTEGER, form TEXT, sense TEXT, objective REAL, "
                    "bound REAL, bound_kind TEXT, exact INTEGER, status TEXT NOT NULL, wall_time REAL, trace TEXT, "
                    "state_hash TEXT, error TEXT, worker TEXT, finished_at TEXT)")
        con.execute("INSERT INTO runs (key, instance, family, size, n, instance_seed, params, path, solver, options, "
                    "seed, repetition, sense, objective, status, wall_time, trace) VALUES "
                    "('k', 'abc', 'sk', 12, 12, 3, '{}', NULL, 'local', '{}', 0, 0, 'min', -20.5, 'feasible', "
                    "0.1, '[[0.05, -20.5]]')")
    with Store(db) as store:
        (row,) = store.rows()
        assert row["objective"] == -20.5 and row["name"] is None and row["label"] is None
        assert store.runners() == [] and store.claim("other", "me", 10)
    text = build_report([row], plots=False).text
    assert "sk 12 seed 3 (sk, n = 12; reference -20.5)" in text
