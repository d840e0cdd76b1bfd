"""Run a suite on any ``concurrent.futures.Executor`` and store each run as it ends.

The local default is a process pool; ``dask.distributed`` works through
``client.get_executor()`` (see :func:`dask_executor`).  Runs already in the
store are skipped; only a bounded window of runs is in flight at any time, and
every finished run is committed before the next is taken, so killing the
runner loses at most that window.
"""

from __future__ import annotations

import contextlib
import hashlib
import multiprocessing
import os
import socket
import sys
import threading
import time
import warnings
from collections.abc import Iterator
from concurrent.futures import FIRST_COMPLETED, BrokenExecutor, Executor, Future, ProcessPoolExecutor, wait
from dataclasses import dataclass, field
from datetime import UTC, datetime
from typing import Any, Literal

import numpy as np

from .store import Store
from .suite import Instance, RunSpec, Suite, expand, run_seed

#: the most trace points kept per run (the first and last are always kept)
MAX_TRACE = 400
ProgressMode = Literal["auto", "bar", "lines", "none"]


@dataclass
class Summary:
    """What one call of :func:`run_suite` did."""

    planned: int = 0
    already_stored: int = 0
    stored: int = 0
    not_stored: int = 0
    seconds: float = 0.0
    notes: list[str] = field(default_factory=list)


# ---------------------------------------------------------------- worker side

_built: dict[str, tuple[Any, int]] = {}
_built_lock = threading.Lock()  # thread-based executors (Dask with processes=False) share this cache


def _instance(inst: Instance) -> tuple[Any, int]:
    """The form and its size, rebuilt at most once per worker for consecutive runs on it."""
    with _built_lock:
        if inst.digest not in _built:
            _built.clear()  # keep one instance: the dense SK ones are large
            form = inst.build()
            _built[inst.digest] = (form, form.canonical().n)
        return _built[inst.digest]


_warmed: set[str] = set()


def _warm_up(solver: str, options: dict[str, Any]) -> None:
    """Run a solver once, untimed, on a tiny instance so JIT compiling or cache loading is not billed to a run."""
    import spinward
    from spinward.adapters.generators import sk

    if solver in _warmed:
        return
    _warmed.add(solver)
    with contextlib.suppress(Exception), warnings.catch_warnings():
        warnings.simplefilter("ignore")
        spinward.solve(sk(8, seed=0), method=solver, time_limit=0.05, seed=0, **options)


def _thin(trace: list[list[float]]) -> list[list[float]]:
    if len(trace) <= MAX_TRACE:
        return trace
    idx = np.unique(np.linspace(0, len(trace) - 1, MAX_TRACE).round().astype(int))
    return [trace[i] for i in idx]


def _result_columns(result: Any) -> dict[str, Any]:
    trace = [[float(t), float(v)] for t, v in result.info.get("trace", [])] or [[result.wall_time, result.objective]]
    return {"form": result.form, "sense": result.sense, "objective": result.objective, "bound": result.bound,
            "bound_kind": result.bound_kind, "exact": int(result.exact), "status": result.status,
            "wall_time": result.wall_time, "trace": _thin(trace),
            "state_hash": hashlib.sha256(np.asarray(result.array, dtype=np.int8).tobytes()).hexdigest()[:24]}


def _base_row(run: RunSpec) -> dict[str, Any]:
    inst = run.instance
    return {"key": run.key, "suite": run.suite, "instance": inst.digest, "family": inst.family, "size": inst.size,
            "instance_seed": inst.seed, "params": inst.params, "path": inst.path,
            "known_optimum": inst.known_optimum(), "solver": run.solver, "options": run.options,
            "time_limit": run.time_limit, "seed": run.seed, "repetition": run.repetition,
            "run_seed": run_seed(run.seed, run.repetition), "worker": f"{socket.gethostname()}:{os.getpid()}"}


def execute(spec: dict[str, Any]) -> dict[str, Any]:
    """Run one benchmark run (a ``RunSpec`` as a dict) and return its row; never raises for a solver's error.

    A solver that cannot take the instance gives status "unsuitable"; any other
    failure gives status "error" with the message, so the row records why.
    """
    import spinward
    from spinward.core.errors import SolverUnsuitableError

    run = RunSpec.model_validate(spec)
    row = _base_row(run)
    try:
        form, row["n"] = _instance(run.instance)
        _warm_up(run.solver, run.options)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            result = spinward.solve(form, method=run.solver, time_limit=run.time_limit, seed=row["run_seed"],
                                    **run.options)
        row.update(_result_columns(result))
    except SolverUnsuitableError as exc:
        row.update(status="unsuitable", error=str(exc))
    except Exception as exc:  # a benchmark records a crashing solver instead of stopping the study
        row.update(status="error", error=f"{type(exc).__name__}: {exc}")
    row["finished_at"] = datetime.now(UTC).isoformat(timespec="seconds")
    return row


# ---------------------------------------------------------------- parent side

class Progress:
    """A tqdm bar on a terminal, plain lines otherwise (or nothing)."""

    def __init__(self, total: int, mode: ProgressMode = "auto") -> None:
        if mode == "auto":
            mode = "bar" if sys.stderr.isatty() else "lines"
        self.mode, self.total, self.done = mode, total, 0
        self.bar = None
        if mode == "bar":
            from tqdm import tqdm

            self.bar = tqdm(total=total, unit="run", disable=None)

    def update(self, row: dict[str, Any]) -> None:
        self.done += 1
        what = f"{row['family']} n={row.get('n')} {row['solver']} seed={row['seed']} rep={row['repetition']}"
        if self.bar is not None:
            self.bar.set_postfix_str(what, refresh=False)
            self.bar.update(1)
        elif self.mode == "lines":
            value = "" if row.get("objective") is None else f" objective={row['objective']:.10g}"
            print(f"[{self.done}/{self.total}] {what}: {row['status']}{value} "
                  f"({(row.get('wall_time') or 0.0):.2f} s)", flush=True)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()


def local_executor(workers: int) -> ProcessPoolExecutor:
    """The default executor: a pool of fresh ("spawn") processes.

    Not fork: a parent that already ran an OpenMP or threaded numba kernel cannot fork safely.
    """
    return ProcessPoolExecutor(max_workers=workers, mp_context=multiprocessing.get_context("spawn"))


def plan(suite: Suite, store: Store, available: list[str] | None = None) -> tuple[list[RunSpec], Summary]:
    """The runs still missing from the store, and a summary with the skip notes."""
    if available is None:
        import spinward

        available = spinward.solvers()
    runs, notes = expand(suite, available)
    stored = store.keys()
    todo = [r for r in runs if r.key not in stored]
    return todo, Summary(planned=len(runs), already_stored=len(runs) - len(todo), notes=notes)


def run_suite(suite: Suite, store: Store, *, executor: Executor | None = None, workers: int = 1,
              progress: ProgressMode = "auto", available: list[str] | None = None) -> Summary:
    """Run every run of ``suite`` not yet in ``store``; each row is committed as its run ends.

    ``executor`` is any ``concurrent.futures.Executor`` (None: a local process pool
    of ``workers``).  At most ``2·workers`` runs are in flight.  Rows with status
    "interrupted" (Ctrl-C reached the worker) are not stored, so a rerun repeats them.
    """
    t0 = time.perf_counter()
    todo, summary = plan(suite, store, available)
    with contextlib.ExitStack() as stack:
        ex = executor or stack.enter_context(local_executor(workers))
        bar = Progress(len(todo), progress)
        stack.callback(bar.close)
        for row in _drain(ex, todo, window=max(2 * workers, 1)):
            if row["status"] != "interrupted" and store.add(row):
                summary.stored += 1
            else:
                summary.not_stored += 1
            bar.update(row)
    summary.seconds = time.perf_counter() - t0
    return summary


def _drain(ex: Executor, todo: list[RunSpec], window: int) -> Iterator[dict[str, Any]]:
    """Submit runs keeping ``window`` in flight; yield each row as it finishes."""
    pending: dict[Future[dict[str, Any]], RunSpec] = {}
    queue = iter(todo)
    try:
        while True:
            for run in queue:
                pending[ex.submit(execute, run.model_dump())] = run
                if len(pending) >= window:
                    break
            if not pending:
                return
            finished, _ = wait(pending, return_when=FIRST_COMPLETED)
            for fut in finished:
                del pending[fut]
                yield fut.result()
    except BrokenExecutor as exc:
        from spinward.core.errors import ResourceError

        raise ResourceError(f"a worker process died ({exc}); the runs stored so far are kept: rerun to continue, "
                            f"with fewer workers if memory ran out") from None
    finally:
        for fut in pending:
            fut.cancel()


@contextlib.contextmanager
def dask_executor(scheduler: str | None = None, workers: int = 1) -> Iterator[Executor]:
    """A ``concurrent.futures`` executor on a Dask cluster (needs the ``[dist]`` extra).

    ``scheduler`` is the address of a running scheduler ("tcp://host:8786"); None
    starts a LocalCluster of ``workers`` single-threaded processes on 127.0.0.1.
    Workers must be able to import spinward and any plugin the suite names.
    """
    try:
        from dask.distributed import Client, LocalCluster
    except ImportError:
        from spinward.core.errors import InputError

        raise InputError("the dask executor needs dask.distributed: pip install 'spinward[dist]'") from None
    with contextlib.ExitStack() as stack:
        if scheduler:
            client = stack.enter_context(Client(scheduler))
        else:
            cluster = stack.enter_context(LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                                                       host="127.0.0.1", dashboard_address=None))
            client = stack.enter_context(Client(cluster))
        yield client.get_executor(pure=False)

