"""The ``spinward`` command line (argparse).  Heavy imports happen inside each command.

Exit codes: 0 success, 2 bad input/file/option (one line on stderr, no traceback),
130 interrupted before any state was found.
"""

from __future__ import annotations

import argparse
import json
import sys
from typing import Any, Callable, Sequence

from . import __version__


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


def _read(args: argparse.Namespace) -> Any:
    """The problem file as a form; ``--energy-sign`` reads an Ising problem's J and h in that convention."""
    import spinward
    from spinward.core.errors import InputError

    form = spinward.read_problem(args.file, form=args.form)
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


def cmd_solve(args: argparse.Namespace) -> int:
    import spinward

    form = _read(args)
    result = spinward.solve(form, method=args.method, time_limit=args.time_limit, seed=args.seed,
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

    for name, spec in default_registry().solvers().items():
        caps = spec.capabilities
        kind = "exact" if caps.exact else "heuristic"
        limit = f", n ≤ {caps.max_n}" if caps.max_n else ""
        print(f"{name:12s} {kind}{limit}: {spec.summary}")
    return 0


def cmd_inspect(args: argparse.Namespace) -> int:
    import spinward

    from .explain import format_choice, inspect_form

    form = _read(args)
    print(format_choice(form, inspect_form(form, spinward.default_registry())))
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
    for provider in spinward.default_registry().bounds():
        verdict = provider.applies(problem)
        if verdict is not True:
            print(f"  {provider.name:10s} not applicable: {verdict}")
            continue
        ctx = SolveContext(rng=np.random.default_rng(0), time_limit=args.time_limit)
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
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name, (_, help_text) in COMMANDS.items():
        p = sub.add_parser(name, help=help_text, description=help_text)
        if name == "solve":
            p.add_argument("file", help="problem file: .mtx .json .graphml .npy .npz or an edge list")
            p.add_argument("--method", default="auto", help="solver name or 'auto' (see 'spinward solvers')")
            p.add_argument("--time-limit", type=float, default=None, help="wall-clock seconds")
            p.add_argument("--seed", type=int, default=None, help="random seed (recorded in the result)")
            p.add_argument("--form", choices=("qubo", "ising", "maxcut"), default=None,
                           help="how to read a bare matrix (.mtx/.npy/.npz); default qubo")
            p.add_argument("--energy-sign", choices=("physics", "hardware"), default=None, help=ENERGY_SIGN_HELP)
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
            p.add_argument("--time-limit", type=float, default=None, help="seconds per bound (default: no limit)")
        if name == "inspect":
            p.add_argument("file", help="problem file")
            p.add_argument("--form", choices=("qubo", "ising", "maxcut"), default=None)
            p.add_argument("--energy-sign", choices=("physics", "hardware"), default=None, help=ENERGY_SIGN_HELP)
        if name == "demo":
            p.add_argument("--seed", type=int, default=0)
    from .bench.cli import add_bench_parser, add_report_parser

    add_bench_parser(sub)
    add_report_parser(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not args.command:
        parser.print_help()
        return 2
    from .core.errors import SpinwardError

    handler = getattr(args, "func", None) or COMMANDS[args.command][0]
    try:
        return handler(args)
    except SpinwardError as exc:
        sys.stderr.write(f"spinward: error: {exc}\n")
        return 2
    except OSError as exc:
        sys.stderr.write(f"spinward: error: {exc.strerror or exc}: {exc.filename or ''}\n")
        return 2
    except KeyboardInterrupt:
        sys.stderr.write("spinward: interrupted before any state was found\n")
        return 130


if __name__ == "__main__":
    raise SystemExit(main())
