"""The ``spinward`` command line (argparse).  Heavy imports happen inside each command.

Exit codes: 0 success, 2 bad input/file/option (one line on stderr, no traceback),
130 interrupted before any state was found, 141 the reader of stdout went away (as a
process ended by SIGPIPE; nothing is printed, e.g. ``spinward solve … | head -1``).
"""

from __future__ import annotations

import argparse
import contextlib
import json
import os
import sys
import time
import warnings
from typing import Any, Callable, Iterator, Sequence

from . import __version__

_LOADED = time.perf_counter()


class _Parser(argparse.ArgumentParser):
    """argparse, but a usage error is one line on stderr and exit code 2."""

    def error(self, message: str) -> None:  # type: ignore[override]
        sys.stderr.write(f"spinward: error: {message} (see 'spinward --help')\n")
        raise SystemExit(2)


def _option_pair(text: str) -> tuple[str, Any]:
    if "=" not in text:
        raise argparse.ArgumentTypeError(f"option {text!r} must look like key=value")
    key, raw = text.split("=", 1)
    try:
        return key, json.loads(raw)
    except json.JSONDecodeError:
        return key, raw
    except RecursionError:
        raise argparse.ArgumentTypeError(f"option {key!r}: the value nests too deeply") from None


def _read(args: argparse.Namespace) -> Any:
    """The problem file as a form; ``--energy-sign`` reads an Ising problem's J and h in that convention."""
    import spinward
    from spinward.core.errors import InputError

    form = spinward.read_problem(args.file, form=args.form, format=args.format, weight=args.weight)
    sign = getattr(args, "energy_sign", None)
    if sign is None:
        return form
    if form.form != "ising":
        raise InputError(f"--energy-sign applies to Ising problems; {args.file} holds a {form.form} problem")
    if form.energy_sign == sign:
        return form
    if form.energy_sign_stated:
        raise InputError(f"{args.file} states energy_sign {form.energy_sign!r} itself; drop --energy-sign {sign} "
                         f"or change the document")
    return form.with_energy_sign(sign)


def _add_file_options(p: argparse.ArgumentParser) -> None:
    from .adapters.files import FORMATS

    p.add_argument("--format", choices=list(FORMATS), default=None,
                   help="read the file in this format, whatever its extension")
    p.add_argument("--weight", default=None, metavar="NAME",
                   help="the edge attribute (GraphML) or CSV column holding the weights (default: weight)")


def seconds_since_start() -> float:
    """Seconds since this process started (Linux: from /proc; elsewhere: since this module loaded)."""
    import os

    try:
        with open("/proc/self/stat", encoding="ascii") as fh:
            start_ticks = int(fh.read().rsplit(")", 1)[1].split()[19])
        with open("/proc/uptime", encoding="ascii") as fh:
            uptime = float(fh.read().split()[0])
        return max(uptime - start_ticks / os.sysconf("SC_CLK_TCK"), 0.0)
    except (OSError, ValueError, IndexError):
        return time.perf_counter() - _LOADED


def solve_limit(limit: float | None, before_read: float) -> float | None:
    """The CLI's contract counts from the process start, the file read aside: the start-up comes off the limit."""
    if limit is None or limit <= 0:
        return limit
    return max(limit - before_read, 0.01)


def cmd_solve(args: argparse.Namespace) -> int:
    started = seconds_since_start()  # the interpreter and the imports so far
    import spinward

    from .progress import solve_progress

    with warnings.catch_warnings():  # every warning is in the result, and the summary prints each once
        warnings.simplefilter("ignore")
        before_read = seconds_since_start() if started else 0.0
        form = _read(args)
        limit = solve_limit(args.time_limit, before_read)
        with solve_progress(args.time_limit):
            result = spinward.solve(form, method=args.method, time_limit=limit, seed=args.seed,
                                    **dict(args.option or []))
    print(result.summary())
    if args.output:
        result.write_json(args.output)
        print(f"result written to {args.output}")
    if args.csv:
        result.write_csv(args.csv)
        print(f"assignment written to {args.csv}")
    return 0


def cmd_demo(args: argparse.Namespace) -> int:
    from .demo import run_demo

    print(run_demo(seed=args.seed))
    return 0


def cmd_solvers(args: argparse.Namespace) -> int:
    from .api import default_registry
    from .core.options import describe

    registry = default_registry()
    if args.options:
        spec = registry.get(args.options)
        rows = describe(spec.options_model)
        print(f"{spec.name}: {spec.summary}")
        if not rows:
            print("  (no options)")
        for name, default, meaning in rows:
            print(f"  {name:16s} default {default!r:12s} {meaning}")
        return 0
    for name, spec in registry.solvers().items():
        caps = spec.capabilities
        kind = "exact" if caps.exact else "heuristic"
        limit = f", n ≤ {caps.max_n}" if caps.max_n else ""
        print(f"{name:12s} {kind}{limit}: {spec.summary}")
        names = ", ".join(spec.options) or "none"
        print(f"{'':12s} options: {names}")
    print("\n'spinward solvers --options NAME' lists a solver's options with their defaults and meaning.")
    return 0


def cmd_inspect(args: argparse.Namespace) -> int:
    import spinward

    from .explain import format_inspection, inspect_form

    form = _read(args)
    registry = spinward.default_registry()
    profile, parts = inspect_form(form, registry, args.time_limit)
    print(format_inspection(form, profile, parts, registry, args.time_limit))
    return 0


def cmd_bound(args: argparse.Namespace) -> int:
    import time

    import numpy as np

    import spinward
    from spinward.core.context import SolveContext

    form = _read(args)
    problem = form.canonical()
    goal = "lower" if form.sense == "min" else "upper"
    print(f"{form.form} problem, n = {problem.n}: {goal} bounds on the optimum (the caller's objective)")
    if problem.n == 0:
        print(f"  no variables: the optimum is the offset, {form.evaluate(np.zeros(0, dtype=np.int8)):.10g}")
        return 0
    for provider in spinward.default_registry().bounds():
        verdict = provider.applies(problem)
        if verdict is not True:
            print(f"  {provider.name:10s} not applicable: {verdict}")
            continue
        root = SolveContext(rng=np.random.default_rng(0), time_limit=args.time_limit)
        budget = args.time_limit if args.time_limit is not None else float("inf")
        ctx = root.child(options={"budget": budget})
        t0 = time.perf_counter()
        b = provider.compute(problem, ctx)
        seconds = time.perf_counter() - t0
        if b is None:
            print(f"  {provider.name:10s} skipped: it did not fit the time limit ({seconds:.2f} s)")
            continue
        kind = "certified" if b.certified else "estimated"
        print(f"  {provider.name:10s} {problem.bound_to_objective(b.value):.10g}  ({kind}, {seconds:.2f} s)")
    return 0


def cmd_parisi(args: argparse.Namespace) -> int:
    from .plugins.iamp.parisi import format_parisi_table, parisi_table

    ks = tuple(args.k) if args.k else (0, 1, 2, 3, 5, 10, 20, 50)
    print(format_parisi_table(parisi_table(ks=ks)))
    return 0


ENERGY_SIGN_HELP = ("how to read an Ising problem's J and h: physics (E = −ΣJss − Σhs, the default) or hardware "
                    "(E = +ΣJss + Σhs)")

COMMANDS: dict[str, tuple[Callable[[argparse.Namespace], int], str]] = {
    "solve": (cmd_solve, "solve a problem file and print a summary"),
    "demo": (cmd_demo, "solve a built-in example (a two-band radio frequency plan)"),
    "solvers": (cmd_solvers, "list the registered solvers"),
    "bound": (cmd_bound, "print every registered bound on a problem file's optimum, with its time"),
    "parisi": (cmd_parisi, "print the zero-temperature Parisi k-RSB table and the full-RSB value, with timings"),
    "inspect": (cmd_inspect, "profile a problem file and explain which solver 'auto' would choose"),
}


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="spinward", description="Solve, certify and benchmark QUBO, Ising and MaxCut problems.")
    parser.add_argument("--version", action="version", version=f"spinward {__version__}")
    parser.add_argument("--debug", action="store_true", help="show the traceback of an internal error")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name, (_, help_text) in COMMANDS.items():
        p = sub.add_parser(name, help=help_text, description=help_text)
        if name == "solve":
            p.add_argument("file", help="problem file: .mtx .json .graphml .npy .npz .csv or an edge list")
            p.add_argument("--method", default="auto", help="solver name or 'auto' (see 'spinward solvers')")
            p.add_argument("--time-limit", type=float, default=None, help="wall-clock seconds")
            p.add_argument("--seed", type=int, default=None, help="random seed (recorded in the result)")
            p.add_argument("--form", choices=("qubo", "ising", "maxcut"), default=None,
                           help="how to read a bare matrix (.mtx/.npy/.npz); default qubo")
            p.add_argument("--energy-sign", choices=("physics", "hardware"), default=None, help=ENERGY_SIGN_HELP)
            _add_file_options(p)
            p.add_argument("--output", "-o", default=None, help="write the result as JSON here")
            p.add_argument("--csv", default=None, help="write the assignment as CSV (label,value) here")
            p.add_argument("--option", action="append", type=_option_pair, metavar="KEY=VALUE",
                           help="solver option (value parsed as JSON when possible); repeatable")
        if name == "parisi":
            p.add_argument("--k", type=int, nargs="+", default=None, help="levels to solve (default 0 1 2 3 5 10 20 50)")
        if name == "bound":
            p.add_argument("file", help="problem file")
            p.add_argument("--form", choices=("qubo", "ising", "maxcut"), default=None)
            p.add_argument("--energy-sign", choices=("physics", "hardware"), default=None, help=ENERGY_SIGN_HELP)
            _add_file_options(p)
            p.add_argument("--time-limit", type=float, default=None, help="seconds per bound (default: no limit)")
        if name == "inspect":
            p.add_argument("file", help="problem file")
            p.add_argument("--form", choices=("qubo", "ising", "maxcut"), default=None)
            p.add_argument("--energy-sign", choices=("physics", "hardware"), default=None, help=ENERGY_SIGN_HELP)
            _add_file_options(p)
            p.add_argument("--time-limit", type=float, default=None, help="show the plan for this time limit")
        if name == "solvers":
            p.add_argument("--options", metavar="NAME", default=None,
                           help="list one solver's options with their defaults and meaning")
        if name == "demo":
            p.add_argument("--seed", type=int, default=0)
    from .bench.cli import add_bench_parser, add_report_parser

    add_bench_parser(sub)
    add_report_parser(sub)
    return parser


@contextlib.contextmanager
def _warnings_as_lines() -> Iterator[None]:
    """Each warning once, as one line on stderr (no Python source line under it)."""
    seen: set[str] = set()

    def show(message: Any, category: Any, filename: str, lineno: int, file: Any = None, line: Any = None) -> None:
        text = str(message)
        if text not in seen:
            seen.add(text)
            sys.stderr.write(f"spinward: warning: {text}\n")

    previous = warnings.showwarning
    warnings.showwarning = show
    try:
        yield
    finally:
        warnings.showwarning = previous


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not args.command:
        parser.print_help()
        return 2
    from .core.errors import InternalError, SpinwardError

    handler = getattr(args, "func", None) or COMMANDS[args.command][0]
    try:
        with _warnings_as_lines():
            code = handler(args)
        sys.stdout.flush()  # a closed pipe shows here, not in the interpreter's last flush
        return code
    except BrokenPipeError:
        _silence_stdout()
        return 141
    except InternalError as exc:
        if args.debug:
            raise
        sys.stderr.write(f"spinward: internal error: {exc}. This is a bug in spinward or a plugin, not in your "
                         f"input: please report it with the command you ran (rerun with --debug for the traceback)\n")
        return 1
    except SpinwardError as exc:
        sys.stderr.write(f"spinward: error: {exc}\n")
        return 2
    except OSError as exc:
        sys.stderr.write(f"spinward: error: {exc.strerror or exc}: {exc.filename or ''}\n")
        return 2
    except KeyboardInterrupt:
        sys.stderr.write("spinward: interrupted before any state was found\n")
        return 130


def _silence_stdout() -> None:
    """After the reader of stdout went away: point stdout at the null device, so the
    interpreter's final flush has nowhere to fail (no "Broken pipe" message)."""
    try:
        null = os.open(os.devnull, os.O_WRONLY)
        os.dup2(null, sys.stdout.fileno())
        os.close(null)
    except (OSError, ValueError):
        pass


if __name__ == "__main__":
    raise SystemExit(main())
