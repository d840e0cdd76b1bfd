"""The ``bench`` and ``report`` commands.  Only argparse at import; the harness loads inside each command.

``add_bench_parser(subparsers)`` and ``add_report_parser(subparsers)`` add them to
the ``spinward`` command line (each sets ``func`` on its namespace).  The arrow runs one
way: ``spinward.cli`` collects these subcommands, and this module never imports it.
"""

from __future__ import annotations

import argparse
import math
import sys
from pathlib import Path
from typing import Any


def _positive_int(text: str) -> int:
    value = int(text)
    if value < 1:
        raise argparse.ArgumentTypeError(f"must be a positive integer, got {text!r}")
    return value


def _positive_float(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a positive number, got {text!r}") from None
    if not (value > 0 and math.isfinite(value)):
        raise argparse.ArgumentTypeError(f"must be a positive number, got {text!r}")
    return value


def add_bench_parser(subparsers: Any) -> argparse.ArgumentParser:
    """``bench SUITE.toml --db results.sqlite [--workers N] [--executor local|dask] [--scheduler ADDR]``."""
    text = "run a benchmark suite, storing one row per run (reruns skip stored runs)"
    p = subparsers.add_parser("bench", help=text, description=text)
    p.add_argument("suite", help="suite file (TOML; see spinward/bench/suite.py)")
    p.add_argument("--db", required=True, help="results database (sqlite3), created when missing")
    p.add_argument("--workers", type=_positive_int, default=1, help="parallel runs (default 1)")
    p.add_argument("--executor", choices=("local", "dask"), default="local",
                   help="local process pool, or dask.distributed (extra [dist])")
    p.add_argument("--scheduler", default=None, metavar="ADDR",
                   help="address of a running Dask scheduler, e.g. tcp://10.0.0.5:8786 (implies --executor dask)")
    p.add_argument("--progress", choices=("auto", "bar", "lines", "none"), default="auto",
                   help="progress display (auto: a bar on a terminal, plain lines otherwise)")
    p.add_argument("--lease", type=_positive_float, default=None, metavar="SECONDS",
                   help="how long a claim on a run lasts unless renewed (default 60); runners sharing the "
                        "database take over the runs of a runner that died once its claims expire "
                        "(at once on the same machine)")
    p.set_defaults(func=cmd_bench)
    return p


def add_report_parser(subparsers: Any) -> argparse.ArgumentParser:
    """``report results.sqlite [--html out.html] [--png DIR] [--reference best|bound] [--gap G]``."""
    text = "summarise a results database: tables per family and size, figures, an HTML page"
    p = subparsers.add_parser("report", help=text, description=text)
    p.add_argument("db", help="results database written by 'spinward bench'")
    p.add_argument("--html", default=None, help="write one self-contained HTML page here")
    p.add_argument("--png", default=None, metavar="DIR",
                   help="write the figures as PNG files here (default: beside --html, in <name>_figures/)")
    p.add_argument("--reference", choices=("best", "bound"), default="best",
                   help="target relative to the best known value or to the tightest stored bound")
    p.add_argument("--gap", type=float, default=0.0, help="relative distance to the reference that counts as success")
    p.set_defaults(func=cmd_report)
    return p


def cmd_bench(args: argparse.Namespace) -> int:
    from .runner import LEASE_SECONDS, dask_executor, run_suite
    from .store import Store
    from .suite import load_suite

    suite = load_suite(args.suite)
    use_dask = args.executor == "dask" or args.scheduler is not None
    lease = args.lease or LEASE_SECONDS
    with Store(args.db) as store:
        try:
            if use_dask:
                with dask_executor(args.scheduler, args.workers) as ex:
                    summary = run_suite(suite, store, executor=ex, workers=args.workers, progress=args.progress,
                                        lease=lease)
            else:
                summary = run_suite(suite, store, workers=args.workers, progress=args.progress, lease=lease)
        except KeyboardInterrupt:
            sys.stderr.write(f"spinward: interrupted; {store.count()} runs are stored in {args.db}, "
                             f"rerun the same command to continue\n")
            return 130
    for note in summary.notes:
        print(f"note: {note}")
    others = f", {summary.by_others} stored by another runner" if summary.by_others else ""
    print(f"{summary.planned} runs planned, {summary.already_stored} already stored, {summary.stored} stored now"
          f"{others}, {summary.not_stored} not stored, in {summary.seconds:.1f} s -> {args.db}")
    return 0


def cmd_report(args: argparse.Namespace) -> int:
    from spinward.core.errors import InputError

    from .page import write_report

    if not Path(args.db).is_file():
        raise InputError(f"results database {args.db!r} not found; run 'spinward bench SUITE --db {args.db}' first")
    png = args.png or (str(Path(args.html).with_suffix("")) + "_figures" if args.html else None)
    report = write_report(args.db, html_path=args.html, png_dir=png, reference=args.reference, gap=args.gap)
    print(report.text)
    for note in report.notes:
        print(f"note: {note}")
    if png and report.figures:
        print(f"{len(report.figures)} figures written to {png}")
    if args.html:
        print(f"report written to {args.html}")
    return 0
