"""Benchmark suites, store and runner: expansion, reruns, a SIGKILL part-way, local vs Dask executors."""

from __future__ import annotations

import os
import signal
import sqlite3
import subprocess
import sys
import time
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest

import spinward
from spinward.bench.runner import run_suite
from spinward.bench.store import Store
from spinward.bench.suite import expand, instances, load_suite
from spinward.core.errors import InputError

ROOT = Path(__file__).resolve().parents[2]
#: solver options whose results do not depend on the clock (fixed restarts, no time limit)
DETERMINISTIC = """
name = "same"
seeds = [0, 1]
[[generate]]
family = "sk"
sizes = [10, 30]
seeds = [1, 2]
[[generate]]
family = "regular"
sizes = [16]
params = { weights = "gaussian" }
[[solvers]]
name = "local"
options = { restarts = 3 }
[[solvers]]
name = "enumerate"
"""


def write(tmp_path: Path, text: str, name: str = "suite.toml") -> Path:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def test_expand_counts_keys_and_optional_solvers(tmp_path):
    suite = load_suite(write(tmp_path, DETERMINISTIC + '[[solvers]]\nname = "not-here"\noptional = true\n'))
    runs, notes = expand(suite, ["local", "enumerate"])
    assert len(instances(suite)) == 2 * 2 + 1
    assert len(runs) == 5 * 2 * 2  # instances × solvers × seeds × 1 repetition
    assert len({r.key for r in runs}) == len(runs)
    assert any("not-here" in n for n in notes)
    required = load_suite(write(tmp_path, DETERMINISTIC + '[[solvers]]\nname = "not-here"\n', "b.toml"))
    with pytest.raises(InputError, match="not-here.*optional"):
        expand(required, ["local", "enumerate"])


def test_suite_errors_name_the_field(tmp_path):
    with pytest.raises(InputError, match="unknown family 'spherical'"):
        load_suite(write(tmp_path, '[[generate]]\nfamily = "spherical"\nsizes = [4]\n[[solvers]]\nname = "local"\n'))
    with pytest.raises(InputError, match="colour"):
        load_suite(write(tmp_path, 'colour = 3\n[[solvers]]\nname = "local"\n'))
    with pytest.raises(InputError, match="not valid TOML"):
        load_suite(write(tmp_path, "name = \n"))
    twice = '[[solvers]]\nname = "anneal"\n[[solvers]]\nname = "anneal"\noptions = { sweeps = 10 }\n'
    with pytest.raises(InputError, match="'anneal'.*more than once.*label"):
        load_suite(write(tmp_path, twice, "t.toml"))
    with pytest.raises(InputError, match="per_spin values must be positive"):
        load_suite(write(tmp_path, '[[solvers]]\nname = "anneal"\nper_spin = { sweeps = 0 }\n', "p.toml"))
    # options are checked when the suite is expanded, as solve() would check them, naming the entry
    typo = load_suite(write(tmp_path, DETERMINISTIC.replace("restarts = 3", "restart = 3"), "o.toml"))
    with pytest.raises(InputError, match="solver entry 'local'.*unknown option 'restart'.*Did you mean 'restarts'"):
        expand(typo, ["local", "enumerate"])
    auto = load_suite(write(tmp_path, DETERMINISTIC + '[[solvers]]\nname = "auto"\noptions = { sweeps = 5 }\n', "a.toml"))
    with pytest.raises(InputError, match="solver entry 'auto'.*solver_options"):
        expand(auto, ["local", "enumerate"])


def test_rerun_skips_stored_runs_and_time_limit_is_in_the_key(tmp_path):
    suite = load_suite(write(tmp_path, DETERMINISTIC))
    with Store(tmp_path / "r.sqlite") as store, ThreadPoolExecutor(2) as ex:
        first = run_suite(suite, store, executor=ex, workers=2, progress="none")
        second = run_suite(suite, store, executor=ex, workers=2, progress="none")
        assert (first.stored, second.stored, second.already_stored) == (20, 0, 20)
        unsuitable = store.rows("status = 'unsuitable'")
        assert {r["n"] for r in unsuitable} == {30} and all(r["solver"] == "enumerate" for r in unsuitable)
        timed = load_suite(write(tmp_path, DETERMINISTIC.replace('name = "same"', 'time_limit = 5.0'), "t.toml"))
        assert run_suite(timed, store, executor=ex, workers=2, progress="none").already_stored == 0
        assert store.db.execute("PRAGMA journal_mode").fetchone()[0] == "wal"


def test_exact_runs_agree_with_brute_force_values(tmp_path):
    """Every enumerate row on n = 10 stores the optimum found by plain enumeration in tests/references."""
    import numpy as np

    from spinward.adapters.generators import sk
    from tests.references import brute_ising_min

    suite = load_suite(write(tmp_path, DETERMINISTIC))
    with Store(tmp_path / "e.sqlite") as store, ThreadPoolExecutor(2) as ex:
        run_suite(suite, store, executor=ex, workers=2, progress="none")
        rows = store.rows("solver = 'enumerate' AND n = 10")
    for r in rows:
        J = sk(10, seed=r["instance_seed"]).pairs
        assert r["objective"] == pytest.approx(brute_ising_min(np.asarray(J), np.zeros(10)))
        assert r["exact"] == 1 and r["trace"][-1][1] == pytest.approx(r["objective"])


SLOW_ENOUGH = """
name = "kill"
seeds = [0, 1, 2, 3, 4]
time_limit = 0.4
[[generate]]
family = "sk"
sizes = [40]
seeds = [1, 2]
[[solvers]]
name = "local"
"""


def bench_command() -> list[str]:
    return [sys.executable, "-m", "spinward", "bench"]


def stored(db: Path) -> list[tuple]:
    if not db.exists():
        return []
    with sqlite3.connect(db, timeout=5) as con:
        try:
            return con.execute("SELECT * FROM runs ORDER BY key").fetchall()
        except sqlite3.OperationalError:  # table not created yet
            return []


def test_sigkill_part_way_then_rerun_completes(tmp_path):
    suite, db = write(tmp_path, SLOW_ENOUGH), tmp_path / "k.sqlite"
    cmd = bench_command() + [str(suite), "--db", str(db), "--workers", "1", "--progress", "lines"]
    env = {**os.environ, "SPINWARD_NO_PLUGIN_AUTOLOAD": "1"}
    proc = subprocess.Popen(cmd, cwd=ROOT, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                            start_new_session=True)
    deadline = time.monotonic() + 40
    while len(stored(db)) < 3 and proc.poll() is None and time.monotonic() < deadline:
        time.sleep(0.05)
    os.killpg(proc.pid, signal.SIGKILL)  # the runner and its pool worker, mid-suite
    proc.wait()
    before = stored(db)
    assert 3 <= len(before) < 10, proc.stderr.read().decode()
    done = subprocess.run(cmd, cwd=ROOT, env=env, capture_output=True, text=True, timeout=60, check=False)
    assert done.returncode == 0, done.stderr
    after = stored(db)
    assert len(after) == 10
    assert set(before) <= set(after)  # every completed row intact, byte for byte
    with sqlite3.connect(db) as con:
        assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        dupes = con.execute("SELECT COUNT(*) FROM (SELECT instance, solver, options, seed, repetition, COUNT(*) c "
                            "FROM runs GROUP BY 1, 2, 3, 4, 5 HAVING c > 1)").fetchone()[0]
    assert dupes == 0
    assert f"{len(before)} already stored, {10 - len(before)} stored now" in done.stdout


def comparable(db: Path) -> dict[str, tuple]:
    with Store(db) as store:
        return {r["key"]: (r["objective"], r["status"], r["state_hash"], r["bound"], r["exact"], r["n"])
                for r in store.rows()}


def test_local_and_dask_executors_store_identical_results(tmp_path):
    distributed = pytest.importorskip("dask.distributed", reason="the [dist] extra (dask.distributed) is not installed")
    suite = load_suite(write(tmp_path, DETERMINISTIC))
    with Store(tmp_path / "local.sqlite") as store:
        run_suite(suite, store, workers=1, progress="none")  # the default: a local process pool
    # loopback only; processes=False with host 127.0.0.1 needs protocol="tcp" to start
    with distributed.LocalCluster(n_workers=1, threads_per_worker=2, processes=False, dashboard_address=None,
                                  host="127.0.0.1", protocol="tcp") as cluster, distributed.Client(cluster) as client, \
            Store(tmp_path / "dask.sqlite") as store:
        summary = run_suite(suite, store, executor=client.get_executor(pure=False), workers=2, progress="none")
    assert summary.stored == 20
    local, dask = comparable(tmp_path / "local.sqlite"), comparable(tmp_path / "dask.sqlite")
    assert local == dask and len(local) == 20
    assert sum(v[1] == "optimal" for v in local.values()) == 2 * 3  # enumerate on the three small instances


def test_registered_solvers_listed():
    assert {"local", "enumerate"} <= set(spinward.solvers())


def test_suite_loads_a_folder_of_instance_files(tmp_path):
    """Files load through read_problem; each file is one instance, named by its folder, hashed by content."""
    import numpy as np

    from tests.references import brute_ising_min

    folder = tmp_path / "mine"
    folder.mkdir()
    mats = [np.triu(np.random.default_rng(k).normal(size=(6, 6)), 1) for k in range(2)]
    for k, J in enumerate(mats):
        np.save(folder / f"m{k}.npy", J)
    given = brute_ising_min(mats[1], np.zeros(6))  # a reference value the suite states for one file
    text = ('[[load]]\nfolder = "mine"\npattern = "*.npy"\nform = "ising"\n'
            f'best_known = {{ "m1.npy" = {given!r} }}\n[[solvers]]\nname = "enumerate"\n')
    suite = load_suite(write(tmp_path, text))
    with Store(tmp_path / "f.sqlite") as store, ThreadPoolExecutor(1) as ex:
        assert run_suite(suite, store, executor=ex, progress="none").stored == 2
        rows = sorted(store.rows(), key=lambda r: r["path"])
    assert [r["family"] for r in rows] == ["mine", "mine"] and rows[0]["instance"] != rows[1]["instance"]
    assert [r["name"] for r in rows] == ["m0.npy", "m1.npy"]  # named by the file, not by a hash
    assert rows[0]["known_optimum"] is None and rows[1]["known_optimum"] == given
    for r, J in zip(rows, mats):
        assert r["objective"] == pytest.approx(brute_ising_min(J, np.zeros(6)))
    wrong = text.replace('"m1.npy"', '"m7.npy"')
    with pytest.raises(InputError, match="best_known names \\['m7.npy'\\].*use the file names"):
        instances(load_suite(write(tmp_path, wrong, "w.toml")))


class DyingPool(ThreadPoolExecutor):
    """An executor whose second task finds its worker dead, as a process pool does after an OOM kill."""

    def __init__(self) -> None:
        super().__init__(1)
        self.calls = 0

    def submit(self, fn, /, *args, **kwargs):
        from concurrent.futures import Future
        from concurrent.futures.process import BrokenProcessPool

        self.calls += 1
        if self.calls < 2:
            return super().submit(fn, *args, **kwargs)
        broken: Future = Future()
        broken.set_exception(BrokenProcessPool("worker killed"))
        return broken


def test_a_dead_worker_stops_the_run_with_a_plain_error_and_keeps_rows(tmp_path):
    from spinward.core.errors import ResourceError

    suite = load_suite(write(tmp_path, DETERMINISTIC))
    with Store(tmp_path / "d.sqlite") as store, DyingPool() as ex:
        with pytest.raises(ResourceError, match="rerun to continue"):
            run_suite(suite, store, executor=ex, workers=1, progress="none")
        assert store.count() <= 1


WORK = """
name = "work"
seeds = [0, 1]
[[generate]]
family = "regular"
sizes = [60]
params = { weights = "gaussian" }
[[generate]]
family = "sk"
sizes = [30]
[[solvers]]
name = "auto"
options = { solver_options = { tabu = { moves = 3000 }, anneal = { sweeps = 500 } } }
[[solvers]]
name = "anneal"
label = "anneal 3n"
per_spin = { sweeps = 3 }
[[solvers]]
name = "tabu"
options = { ball_kicks = 2000, moves = 5000 }
"""


def test_work_limited_runs_store_the_same_states_with_one_or_two_workers(tmp_path):
    """Without a time limit every run does fixed work: a process pool of 2 and one thread store the same states."""
    suite = load_suite(write(tmp_path, WORK))
    runs, _ = expand(suite, spinward.solvers())
    anneal = next(r for r in runs if r.label == "anneal 3n")
    assert anneal.options_for(60) == {"sweeps": 180} and anneal.time_limit is None
    with Store(tmp_path / "pool.sqlite") as store:
        assert run_suite(suite, store, workers=2, progress="none").stored == 12
    with Store(tmp_path / "one.sqlite") as store, ThreadPoolExecutor(1) as ex:
        run_suite(suite, store, executor=ex, workers=1, progress="none")
    pool, one = comparable(tmp_path / "pool.sqlite"), comparable(tmp_path / "one.sqlite")
    assert pool == one and len(pool) == 12
    with Store(tmp_path / "one.sqlite") as store:
        rows = store.rows()
    auto = [r for r in rows if r["solver"] == "auto"]
    # "auto" runs like any solver; the row also records what it chose (enumerate on n = 30 is out of reach)
    assert len(auto) == 4 and all(r["chosen"] and r["chosen"] != "auto" for r in auto)
    assert {r["label"] for r in rows} == {"auto", "anneal 3n", "tabu"}
    assert all(r["per_spin"] == {"sweeps": 3} for r in rows if r["label"] == "anneal 3n")
