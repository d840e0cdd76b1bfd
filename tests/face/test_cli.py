"""The command line: solve, demo, version, errors as one line with exit code 2, Ctrl-C keeps the best state."""

from __future__ import annotations

import signal
import subprocess
import sys
import time

import networkx as nx
import pytest

import spinward
from spinward.cli import main


def test_solve_file_prints_summary_and_writes_json(tmp_path, capsys):
    spinward.write_problem(spinward.MaxCut(nx.petersen_graph()), tmp_path / "p.json")
    code = main(["solve", str(tmp_path / "p.json"), "--seed", "3", "-o", str(tmp_path / "r.json"),
                 "--csv", str(tmp_path / "a.csv")])
    out = capsys.readouterr().out
    assert code == 0
    assert "objective: 12" in out and "maximise" in out and "enumerate" in out and "optimal" in out
    r = spinward.Result.from_json((tmp_path / "r.json").read_text())
    assert r.objective == 12 and r.seed == 3  # Petersen graph MaxCut = 12 (graph-theory folklore, from memory)
    assert (tmp_path / "a.csv").read_text().startswith("label,value\n")


def test_demo_runs(capsys):
    assert main(["demo"]) == 0
    out = capsys.readouterr().out
    assert "Band A" in out and "Band B" in out and "proved optimal" in out


@pytest.mark.parametrize("args, fragment", [
    (["solve", "missing.mtx"], "no such file"),
    (["solve", "{bad}", "--method", "local"], "malformed JSON"),
    (["solve", "{good}", "--method", "nonesuch"], "unknown method 'nonesuch'"),
    (["solve", "{good}", "--method", "descent"], "unknown method 'descent'; available: auto, anneal, enumerate, iamp"),
    (["solve", "{good}", "--time-limit", "-1"], "time_limit must be a positive"),
    (["solve"], "the following arguments are required"),
    (["solve", "{good}", "--seed", "abc"], "invalid int value"),
])
def test_errors_are_one_line_exit_2(tmp_path, capsys, args, fragment):
    (tmp_path / "bad.json").write_text("{nope")
    spinward.write_problem(spinward.MaxCut(nx.path_graph(3)), tmp_path / "good.json")
    args = [a.format(bad=tmp_path / "bad.json", good=tmp_path / "good.json") for a in args]
    with pytest.raises(SystemExit) if args == ["solve"] or "abc" in args else _nullcontext():
        code = main(args)
        assert code == 2
    err = capsys.readouterr().err
    assert fragment in err and err.count("\n") == 1 and "Traceback" not in err


class _nullcontext:
    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return False


def test_version_and_module_entry():
    out = subprocess.run([sys.executable, "-m", "spinward", "--version"], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == f"spinward {spinward.__version__}"


@pytest.mark.skipif(sys.platform == "win32", reason="POSIX signals")
def test_sigint_returns_best_state_and_writes_json(tmp_path):
    g = nx.random_regular_graph(3, 400, seed=1)
    spinward.write_problem(spinward.MaxCut(g), tmp_path / "g.txt")
    proc = subprocess.Popen([sys.executable, "-m", "spinward", "solve", str(tmp_path / "g.txt"), "--method", "local",
                             "--time-limit", "60", "-o", str(tmp_path / "r.json")],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    time.sleep(3.0)
    proc.send_signal(signal.SIGINT)
    out, err = proc.communicate(timeout=30)
    assert proc.returncode == 0, err
    assert "status: interrupted" in out
    r = spinward.Result.from_json((tmp_path / "r.json").read_text())
    assert r.status == "interrupted" and not r.exact
    assert r.objective == nx.cut_size(g, [u for u, s in r.assignment.items() if s == 0])


def test_ctrl_c_while_reading_is_one_clean_line(tmp_path, capsys, monkeypatch):
    p = tmp_path / "g.txt"
    p.write_text("1 2 1\n")

    def interrupted(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr(spinward, "read_problem", interrupted)
    assert main(["solve", str(p)]) == 130
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "interrupted" in err and "Traceback" not in err


@pytest.mark.skipif(sys.platform == "win32", reason="POSIX signals")
def test_sigint_during_a_slow_read_exits_130_with_one_line(tmp_path):
    # 800 000 string-labelled lines: read by the line parser, several seconds; the signal comes after start-up
    lines = [f"n{k} n{k + 1} 1.5" for k in range(800_000)]
    (tmp_path / "g.txt").write_text("\n".join(lines) + "\n")
    proc = subprocess.Popen([sys.executable, "-m", "spinward", "solve", str(tmp_path / "g.txt")],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    time.sleep(4.0)
    proc.send_signal(signal.SIGINT)
    out, err = proc.communicate(timeout=60)
    if proc.returncode == 0:  # read and solved within 4 s (an idle machine): the signal hit the solve
        pytest.skip("the read finished before the signal")
    assert proc.returncode == 130, err
    assert err.count("\n") == 1 and "interrupted" in err and "Traceback" not in err


def test_an_option_typo_fails_clearly_from_the_cli(tmp_path, capsys):
    spinward.write_problem(spinward.MaxCut(nx.path_graph(3)), tmp_path / "g.json")
    assert main(["solve", str(tmp_path / "g.json"), "--method", "tabu", "--option", "tenur=5"]) == 2
    err = capsys.readouterr().err
    assert "unknown option 'tenur'" in err and "Did you mean 'tenure'" in err and err.count("\n") == 1


def test_an_internal_error_asks_for_a_report_and_exits_1(tmp_path, capsys):
    spinward.write_problem(spinward.MaxCut(nx.path_graph(3)), tmp_path / "g.json")

    def broken(problem, ctx):
        raise ZeroDivisionError("a bug in a plugin")

    spinward.register_solver(spinward.SolverSpec(name="broken-for-the-test", run=broken))
    try:
        assert main(["solve", str(tmp_path / "g.json"), "--method", "broken-for-the-test"]) == 1
        err = capsys.readouterr().err
        assert "internal error" in err and "please report it" in err and "--debug" in err
        assert "Traceback" not in err and err.count("\n") == 1
        with pytest.raises(spinward.InternalError):
            main(["--debug", "solve", str(tmp_path / "g.json"), "--method", "broken-for-the-test"])
    finally:
        spinward.reset_registry()


def test_each_warning_is_printed_once(tmp_path, capsys):
    g = nx.Graph()
    g.add_edge(0, 0)          # a self-loop: dropped with a warning
    g.add_edge(0, 1, weight=2.0)
    spinward.write_problem(spinward.MaxCut(nx.path_graph(2)), tmp_path / "unused.json")
    path = tmp_path / "loop.graphml"
    nx.write_graphml(g, path)
    assert main(["solve", str(path)]) == 0
    captured = capsys.readouterr()
    text = captured.out + captured.err
    assert text.count("self-loop") == 1, text


def test_inspect_shows_the_profile_and_the_plan_on_a_dense_file(tmp_path, capsys):
    """A dense n = 70 file once showed "1 couplings"; numpy counts them here."""
    import numpy as np

    J = np.triu(np.random.default_rng(5).normal(size=(70, 70)), 1)
    np.save(tmp_path / "j.npy", J)
    assert main(["inspect", str(tmp_path / "j.npy"), "--form", "ising", "--time-limit", "2"]) == 0
    out = capsys.readouterr().out
    assert f"{np.count_nonzero(J)} couplings" in out
    assert "plan:        (time limit 2 s)" in out and "bounds:" in out
    assert "enumerate    would not: n = 70 exceeds its limit of 26 variables" in out
