"""What the command line prints around a solve: progress on a terminal only, quiet broken pipes."""

from __future__ import annotations

import io
import os
import pty
import select
import shutil
import subprocess
import sys
import time
from pathlib import Path

import networkx as nx
import pytest

from spinward.progress import solve_progress

ROOT = Path(__file__).resolve().parents[2]
ENV = {**os.environ, "SPINWARD_NO_PLUGIN_AUTOLOAD": "1"}


@pytest.fixture(scope="module")
def graph_file(tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("cli") / "cubic.txt"
    g = nx.random_regular_graph(3, 400, seed=1)
    path.write_text("".join(f"{u} {v} 1.25\n" for u, v in g.edges), encoding="utf-8")
    return path


def solve_command(path: Path, *extra: str) -> list[str]:
    return [sys.executable, "-m", "spinward", "solve", str(path), "--seed", "1", *extra]


def test_a_closed_pipe_ends_quietly(graph_file):
    """The reader is gone before anything is written: no message, the SIGPIPE exit code."""
    read, write = os.pipe()
    os.close(read)
    try:
        done = subprocess.run(solve_command(graph_file, "--time-limit", "0.2", "--method", "local"), stdout=write,
                              stderr=subprocess.PIPE,
                              text=True, cwd=ROOT, env=ENV, timeout=120, check=False)
    finally:
        os.close(write)
    assert done.stderr == "" and done.returncode == 141


@pytest.mark.skipif(shutil.which("bash") is None or shutil.which("head") is None, reason="needs bash and head")
def test_piping_into_head_prints_one_line_and_no_error(graph_file):
    cmd = " ".join(solve_command(graph_file, "--time-limit", "0.2", "--method", "local")) + " | head -1"
    done = subprocess.run(["bash", "-c", cmd], capture_output=True, text=True, cwd=ROOT, env=ENV, timeout=120,
                          check=False)
    assert done.stdout.startswith("objective: ") and done.stdout.count("\n") == 1
    assert "Broken pipe" not in done.stderr and "Error" not in done.stderr


class FakeTerminal(io.StringIO):
    def __init__(self, terminal: bool) -> None:
        super().__init__()
        self.terminal = terminal

    def isatty(self) -> bool:
        return self.terminal


def test_progress_waits_for_its_delay_and_only_draws_on_a_terminal():
    for terminal in (True, False):
        out = FakeTerminal(terminal)
        with solve_progress(1.0, stream=out, delay=0.05):
            time.sleep(0.6)
        assert ("solving" in out.getvalue()) is terminal
    quick = FakeTerminal(True)
    with solve_progress(None, stream=quick, delay=5.0):
        pass  # a solve shorter than the delay shows nothing
    assert quick.getvalue() == ""


def test_progress_on_a_real_terminal_during_a_long_solve(graph_file):
    """stderr on a pseudo-terminal: after about 2 s the elapsed time against the limit appears."""
    main, sub = pty.openpty()
    try:
        proc = subprocess.Popen(solve_command(graph_file, "--time-limit", "3", "--method", "anneal"), stdout=subprocess.PIPE,
                                stderr=sub, cwd=ROOT, env=ENV)
        os.close(sub)
        seen = b""
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline:
            ready, _, _ = select.select([main], [], [], 0.5)
            if ready:
                try:
                    chunk = os.read(main, 4096)
                except OSError:  # the terminal closed with the process
                    break
                if not chunk:
                    break
                seen += chunk
            elif proc.poll() is not None:
                break
        out = proc.communicate(timeout=60)[0].decode()
    finally:
        os.close(main)
    assert proc.returncode == 0 and out.startswith("objective: ")
    text = seen.decode(errors="replace")
    assert "solving" in text and "of 3 s" in text, text
