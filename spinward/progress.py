"""A progress display on stderr for long solves (tqdm), shown only on a terminal.

Nothing is printed for a solve that ends within ``delay`` seconds, nor when stderr is
not a terminal (a pipe, a file, CI logs).  The display shows the wall time spent, and
against a time limit how much of it is used; it is cleared when the solve ends.
"""

from __future__ import annotations

import contextlib
import os
import sys
import threading
import time
from collections.abc import Iterator
from typing import Any, TextIO

#: seconds before the display appears
DELAY = 2.0
#: seconds between refreshes
REFRESH = 0.25


@contextlib.contextmanager
def solve_progress(time_limit: float | None, *, stream: TextIO | None = None, delay: float = DELAY) -> Iterator[None]:
    """Show the elapsed time of the solve inside the ``with`` block, after ``delay`` seconds, on a terminal."""
    out = sys.stderr if stream is None else stream
    if not _is_terminal(out):
        yield
        return
    done = threading.Event()
    thread = threading.Thread(target=_show, args=(time_limit, out, delay, done), name="spinward-progress",
                              daemon=True)
    thread.start()
    try:
        yield
    finally:
        done.set()
        thread.join(timeout=2.0)


def _is_terminal(stream: Any) -> bool:
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):  # closed or replaced streams
        return False


def _size(stream: Any) -> tuple[int, int]:
    """The terminal's columns and rows; 80 × 24 where it reports none (a fresh pseudo-terminal says 0 × 0,
    and tqdm draws nothing on a terminal of 0 rows)."""
    try:
        size = os.get_terminal_size(stream.fileno())
    except (AttributeError, OSError, ValueError):
        return 80, 24
    return size.columns or 80, size.lines or 24


def _show(time_limit: float | None, out: TextIO, delay: float, done: threading.Event) -> None:
    from tqdm import tqdm

    start = time.monotonic()
    if done.wait(delay):
        return
    width, rows = _size(out)
    if time_limit is None:
        bar = tqdm(total=None, file=out, leave=False, ncols=width, nrows=rows, desc="solving (no time limit)",
                   bar_format="{desc}: {elapsed} elapsed")
    else:
        bar = tqdm(total=time_limit, file=out, leave=False, ncols=width, nrows=rows, desc="solving",
                   bar_format="{desc} {bar} {elapsed} of " + f"{time_limit:g} s")
    with bar:
        while not done.wait(REFRESH):
            elapsed = time.monotonic() - start
            if time_limit is not None:
                bar.n = min(elapsed, time_limit)
            bar.refresh()
