"""The example suites, the command-line parsers and the progress display."""

from __future__ import annotations

import argparse
import time
from pathlib import Path

import pytest

import spinward
from spinward.bench.cli import add_bench_parser, add_report_parser
from spinward.bench.runner import Progress, run_suite
from spinward.bench.store import Store
from spinward.bench.suite import expand, instances, load_suite

SUITES = Path(__file__).resolve().parents[2] / "examples" / "suites"
ALWAYS = {"local", "enumerate", "auto"}  # "auto" is the front door's own choice, never missing


def test_quick_suite_needs_only_the_always_present_solvers():
    suite = load_suite(SUITES / "quick.toml")
    required = {s.name for s in suite.solvers if not s.optional}
    assert required <= ALWAYS
    runs, notes = expand(suite, sorted(ALWAYS - {"auto"}))
    assert runs and all(r.solver in ALWAYS for r in runs)
    assert len(notes) == sum(s.optional for s in suite.solvers)
    exact = next(s for s in suite.solvers if s.name == "enumerate")
    assert exact.time_limit == float("inf")  # written `inf`: the exact solver runs without a limit
    assert all(r.time_limit is None for r in runs if r.solver == "enumerate")


def test_full_suite_covers_the_study():
    suite = load_suite(SUITES / "full.toml")
    sizes = {g.family: g.sizes for g in suite.generate}
    assert min(sizes["sk"]) == 1000 and max(sizes["sk"]) == 8000
    assert {"regular", "sparse_er"} <= set(sizes)
    names = {s.name for s in suite.solvers}
    assert {"iamp", "anneal", "tabu", "sdp"} <= names
    runs, _ = expand(suite, sorted(names))
    assert len(runs) == len(instances(suite)) * len(names) * len(suite.seeds)


def test_parsers_plug_into_any_subparsers():
    parser = argparse.ArgumentParser(prog="x")
    sub = parser.add_subparsers(dest="command")
    add_bench_parser(sub)
    add_report_parser(sub)
    args = parser.parse_args(["bench", "s.toml", "--db", "r.sqlite", "--workers", "3", "--scheduler", "tcp://h:8786"])
    assert (args.suite, args.db, args.workers, args.scheduler, args.executor) == ("s.toml", "r.sqlite", 3,
                                                                                   "tcp://h:8786", "local")
    assert args.func.__name__ == "cmd_bench"
    args = parser.parse_args(["report", "r.sqlite", "--html", "o.html"])
    assert (args.db, args.html, args.func.__name__) == ("r.sqlite", "o.html", "cmd_report")
    with pytest.raises(SystemExit):
        parser.parse_args(["bench", "s.toml", "--db", "r.sqlite", "--workers", "0"])


def test_plain_progress_lines_when_not_a_terminal(capsys):
    bar = Progress(2, "auto")  # pytest's captured stderr is not a terminal
    row = {"family": "sk", "n": 8, "name": "sk n=8 seed 3", "solver": "local", "label": "local", "seed": 0,
           "repetition": 0, "status": "feasible", "objective": -3.5, "wall_time": 0.25}
    bar.update(row)
    bar.update({**row, "name": "my\x1b[2Jgraph.mtx", "status": "unsuitable", "objective": None})
    bar.close()
    out = capsys.readouterr().out.splitlines()
    # each line names the instance; a control character in a file name is shown escaped, never acted on
    assert out == ["[1/2] sk n=8 seed 3 · local seed=0 rep=0: feasible objective=-3.5 (0.25 s)",
                   "[2/2] my\\x1b[2Jgraph.mtx · local seed=0 rep=0: unsuitable (0.25 s)"]


def every_series_has_a_time_to_target_from_its_trace(rows) -> None:
    """Each series reaches the reference in some run at a time from its trace, before the run ended."""
    from spinward.bench.report import answered, hit_time, references, series, summarise, target_of

    rows = answered(rows)
    refs = references(rows)
    early = {series(r) for r in rows
             if (h := hit_time(r, target_of(refs[r["instance"]], r["sense"], 0.0))) is not None
             and h < 0.999 * r["wall_time"]}
    assert early == {series(r) for r in rows}
    lines = summarise(rows)
    assert {l.solver for l in lines if l.ttt is not None and l.ttt < float("inf")} == early


MINI = """
name = "mini"
time_limit = 0.2
[[generate]]
family = "sk"
sizes = [20]
[[generate]]
family = "regular"
sizes = [40]
params = { weights = "gaussian" }
[[solvers]]
name = "enumerate"
time_limit = inf
[[solvers]]
name = "auto"
[[solvers]]
name = "anneal"
[[solvers]]
name = "tabu"
[[solvers]]
name = "local"
"""


def test_every_solver_reports_a_time_to_target_from_its_trace(tmp_path):
    from concurrent.futures import ThreadPoolExecutor

    from spinward.bench.page import build_report

    path = tmp_path / "mini.toml"
    path.write_text(MINI, encoding="utf-8")
    with Store(tmp_path / "m.sqlite") as store, ThreadPoolExecutor(1) as ex:
        run_suite(load_suite(path), store, executor=ex, progress="none")
        rows = store.rows()
    every_series_has_a_time_to_target_from_its_trace(rows)
    text = build_report(rows, plots=False).text
    assert "sk n=20 seed 0 (sk, n = 20; reference" in text and "regular n=40 seed 0 (regular(weights=gaussian)" in text


@pytest.mark.slow
def test_quick_suite_runs_within_two_minutes_on_two_workers(tmp_path, request):
    if "slow" not in (request.config.getoption("-m") or ""):
        pytest.skip("about a minute: run with -m slow")
    from spinward.bench.page import build_report

    suite = load_suite(SUITES / "quick.toml")
    t0 = time.perf_counter()
    with Store(tmp_path / "q.sqlite") as store:
        summary = run_suite(suite, store, workers=2, progress="none")
        errors = store.rows("status = 'error'")
        rows = store.rows()
    assert time.perf_counter() - t0 < 120
    assert summary.stored == summary.planned and not errors
    assert set(spinward.solvers()) >= ALWAYS - {"auto"}
    every_series_has_a_time_to_target_from_its_trace(rows)
    report = build_report(rows, plots=False)
    assert len({l.instance for l in report.lines}) == len(instances(suite))  # a table per instance
