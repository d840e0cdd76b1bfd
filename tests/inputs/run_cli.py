"""Run command lines through ``spinward.cli.main`` in one process, each under an alarm; print the outcomes as JSON.

Input (stdin): a JSON list of {"id", "argv", "timeout"}.  Output (stdout, last line): a JSON
object id → {"code", "stdout", "stderr"}, where code is the exit code, "hang" when the alarm
fired, or "crash" when an exception escaped main() (its traceback is then in stderr).
"""

from __future__ import annotations

import contextlib
import io
import json
import signal
import sys
import traceback
import warnings


class Hang(BaseException):
    """Raised by the alarm; a BaseException so that no handler in the code under test swallows it."""


def _alarm(signum: int, frame: object) -> None:
    raise Hang()


def run_one(argv: list[str], timeout: int) -> dict[str, object]:
    from spinward.cli import main

    out, err = io.StringIO(), io.StringIO()
    signal.signal(signal.SIGALRM, _alarm)
    signal.alarm(timeout)
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err), warnings.catch_warnings():
            warnings.simplefilter("default")
            try:
                code: object = main(argv)
            except SystemExit as exc:
                code = exc.code if isinstance(exc.code, int) else 2
    except Hang:
        code = "hang"
    except Exception:  # noqa: BLE001 - recorded: the test fails on it
        code = "crash"
        err.write(traceback.format_exc())
    finally:
        signal.alarm(0)
    return {"code": code, "stdout": out.getvalue(), "stderr": err.getvalue()}


def main() -> None:
    cases = json.load(sys.stdin)
    results = {case["id"]: run_one(case["argv"], case["timeout"]) for case in cases}
    sys.stdout.write(json.dumps(results) + "\n")


if __name__ == "__main__":
    main()
