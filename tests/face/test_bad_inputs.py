"""The shipped bad-input corpus (tests/inputs/): every case ends in its expected outcome, never a traceback or a hang.

Each file is read through the API (``read_problem`` then ``solve``) and through the command
line (``spinward solve FILE``); each API call and command line has its own expectation.  An
expected error must be raised with exactly that class (any other exception fails the test) and
carry the message fragment; an expected result must have exactly that objective.  The command
lines run in one subprocess, each under an alarm, so a hang fails its case instead of the run.
"""

from __future__ import annotations

import json
import subprocess
import sys
import warnings
from pathlib import Path
from typing import Any, Callable

import pytest

import spinward

INPUTS = Path(__file__).parents[1] / "inputs"
sys.path.insert(0, str(INPUTS))
import calls  # noqa: E402
import corpus  # noqa: E402

FILE_CASES = corpus.file_cases()
API_CASES = calls.api_cases()
CLI_CASES = calls.cli_cases()
CLI_TIMEOUT = 60  # seconds per command line; every case here takes well under one


def test_the_corpus_is_shipped_and_large():
    assert len(FILE_CASES) + len(API_CASES) + len(CLI_CASES) >= 300
    shipped = {p.relative_to(corpus.FILES).as_posix() for p in corpus.FILES.rglob("*") if p.is_file()}
    assert shipped == {c.path for c in FILE_CASES}, "run: python tests/inputs/corpus.py --write"
    for case in FILE_CASES:
        assert (corpus.FILES / case.path).read_bytes() == case.content, case.path
    for ids in ([c.path for c in FILE_CASES], [c.id for c in API_CASES], [c.id for c in CLI_CASES]):
        assert len(ids) == len(set(ids))
    readers = {c.path.split("/")[0] for c in FILE_CASES}
    assert readers == {"mtx", "edgelist", "csv", "json", "graphml", "npy", "npz"}


def _outcome(expect: corpus.Expect, run: Callable[[], Any]) -> None:
    if expect.error is not None:
        with pytest.raises(getattr(spinward, expect.error)) as caught:
            run()
        assert type(caught.value).__name__ == expect.error, repr(caught.value)
        assert expect.match in str(caught.value), str(caught.value)
        return
    result = run()
    if not isinstance(result, spinward.Result):
        result = spinward.solve(result, seed=0)
    assert result.objective == expect.objective
    assert not expect.warns or any(expect.warns in w for w in result.warnings), result.warnings


def _quiet(fn: Callable[[], Any]) -> Callable[[], Any]:
    def run() -> Any:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # repairs warn; the result's warnings are checked instead
            return fn()
    return run


@pytest.mark.parametrize("case", FILE_CASES, ids=[c.path for c in FILE_CASES])
def test_file_through_the_api(case):
    path = corpus.FILES / case.path
    _outcome(case.expect, _quiet(lambda: spinward.solve(spinward.read_problem(path, **case.options), seed=0)))


@pytest.mark.parametrize("case", API_CASES, ids=[c.id for c in API_CASES])
def test_call(case, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)  # calls that name files find none, and write nowhere else
    _outcome(case.expect, _quiet(case.call))


def _file_argv(case: corpus.FileCase) -> list[str]:
    argv = ["solve", str(corpus.FILES / case.path), "--seed", "0"]
    for key, value in case.options.items():
        argv += [f"--{key}", value]
    return argv


@pytest.fixture(scope="module")
def cli_results(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("cli")
    jobs = [{"id": c.path, "argv": _file_argv(c), "timeout": CLI_TIMEOUT} for c in FILE_CASES]
    jobs += [{"id": f"cli/{c.id}", "argv": [a.replace("{files}", str(corpus.FILES)).replace("{tmp}", str(tmp)) for a in c.argv],
              "timeout": CLI_TIMEOUT} for c in CLI_CASES]
    done = subprocess.run([sys.executable, str(INPUTS / "run_cli.py")], input=json.dumps(jobs), capture_output=True,
                          text=True, cwd=tmp, timeout=1200)
    assert done.returncode == 0, done.stderr[-3000:]
    return json.loads(done.stdout.splitlines()[-1])


def _one_line_error(run: dict[str, Any], fragment: str) -> None:
    assert run["code"] == 2, run
    err = run["stderr"]
    assert "Traceback" not in err, err
    last = err.strip().splitlines()[-1] if err.strip() else ""
    assert last.startswith("spinward: error:") and fragment in last, err


@pytest.mark.parametrize("case", FILE_CASES, ids=[c.path for c in FILE_CASES])
def test_file_through_the_cli(case, cli_results):
    run = cli_results[case.path]
    if case.expect.error is not None:
        _one_line_error(run, case.expect.match)
    else:
        assert run["code"] == 0, run
        assert f"objective: {case.expect.objective:.12g}" in run["stdout"], run


@pytest.mark.parametrize("case", CLI_CASES, ids=[c.id for c in CLI_CASES])
def test_command_line(case, cli_results):
    run = cli_results[f"cli/{case.id}"]
    if case.code == 2 and case.where != "stdout":
        _one_line_error(run, case.match)
    else:
        assert run["code"] == case.code, run
        assert "Traceback" not in run["stderr"] and case.match in run["stdout"], run
