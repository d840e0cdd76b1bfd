"""Run a suite on any ``concurrent.futures.Executor`` and store each run as it ends.

The local default is a process pool; ``dask.distributed`` works through
``client.get_executor()`` (see :func:`dask_executor`).  Runs already in the
store are skipped; only a bounded window of runs is in flight at any time, and
every finished run is committed before the next is taken, so killing the
runner loses at most that window.

What a user may do to a running benchmark:

- **Ctrl-C**: the runs in flight stop and are not stored; the runner releases its
  claims and exits (code 130).  Rerun the same command to continue.
- **SIGKILL** (or any signal) to the runner: its pool workers exit within a
  second or two (Linux: the kernel's parent-death signal; elsewhere a watch on
  the parent), the database stays intact, and a rerun or a second runner takes
  over the runs it had claimed.
- **A second runner** on the same suite and database: the two share the work
  through leases (:class:`Leases`); every run is stored once.
"""

from __future__ import annotations

import contextlib
import hashlib
import math
import multiprocessing
import os
import platform
import secrets
import signal
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
from .text import plain

#: the most trace points kept per run (the first and last are always kept)
MAX_TRACE = 400
#: seconds a claim on a run lasts unless renewed; renewed every third of it while the run is in flight
LEASE_SECONDS = 60.0
ProgressMode = Literal["auto", "bar", "lines", "none"]


@dataclass
class Summary:
    """What one call of :func:`run_suite` did."""

    planned: int = 0
    already_stored: int = 0
    stored: int = 0
    not_stored: int = 0
    by_others: int = 0
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


def improvements(trace: list[list[float]], sense: str) -> list[list[float]]:
    """The points of ``trace`` that beat every earlier one (in ``sense``): the incumbent's history.

    A portfolio's trace may hold a second solver's climb from below; only improvements count.
    """
    out: list[list[float]] = []
    for t, value in trace:
        if not out or (value < out[-1][1] if sense == "min" else value > out[-1][1]):
            out.append([t, value])
    return out


def _result_columns(result: Any) -> dict[str, Any]:
    trace = [[float(t), float(v)] for t, v in result.info.get("trace", [])]
    trace = improvements(trace, result.sense) or [[result.wall_time, result.objective]]
    return {"form": result.form, "sense": result.sense, "objective": result.objective, "bound": result.bound,
            "bound_kind": result.bound_kind, "exact": int(result.exact), "status": result.status,
            "wall_time": result.wall_time, "trace": _thin(trace), "chosen": result.solver,
            "state_hash": hashlib.sha256(np.asarray(result.array, dtype=np.int8).tobytes()).hexdigest()[:24]}


def _base_row(run: RunSpec) -> dict[str, Any]:
    inst = run.instance
    return {"key": run.key, "suite": run.suite, "instance": inst.digest, "name": inst.name, "family": inst.family,
            "size": inst.size, "instance_seed": inst.seed, "params": inst.params, "path": inst.path,
            "known_optimum": inst.known_optimum(), "solver": run.solver, "label": run.label,
            "options": run.options, "per_spin": run.per_spin or None, "time_limit": run.time_limit,
            "seed": run.seed, "repetition": run.repetition, "run_seed": run_seed(run.seed, run.repetition),
            "worker": f"{socket.gethostname()}:{os.getpid()}"}


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
        _warm_up(run.solver, run.options_for(8))
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            result = spinward.solve(form, method=run.solver, time_limit=run.time_limit, seed=row["run_seed"],
                                    **run.options_for(row["n"]))
        row.update(_result_columns(result))
    except SolverUnsuitableError as exc:
        row.update(status="unsuitable", error=str(exc))
    except Exception as exc:  # a benchmark records a crashing solver instead of stopping the study
        row.update(status="error", error=f"{type(exc).__name__}: {exc}")
    row["finished_at"] = datetime.now(UTC).isoformat(timespec="seconds")
    return row


def watch_parent(parent: int) -> None:
    """Pool-worker initializer: end this worker when the runner ``parent`` dies, whatever killed it.

    Linux: the kernel sends SIGKILL on the parent's death (``PR_SET_PDEATHSIG``), which works
    even while a compiled kernel holds the interpreter.  Everywhere: a daemon thread checks
    twice a second whether the worker was handed to another parent.
    """
    if sys.platform.startswith("linux"):
        with contextlib.suppress(OSError, AttributeError):
            import ctypes

            ctypes.CDLL(None, use_errno=True).prctl(1, int(signal.SIGKILL), 0, 0, 0)  # 1 = PR_SET_PDEATHSIG
    if os.getppid() != parent:  # the parent died before the line above
        os._exit(1)
    threading.Thread(target=_poll_parent, args=(parent,), name="spinward-parent-watch", daemon=True).start()


def _poll_parent(parent: int) -> None:
    while os.getppid() == parent:
        time.sleep(0.5)
    os._exit(1)


# ---------------------------------------------------------------- parent side

class Progress:
    """A tqdm bar on a terminal, plain lines otherwise (or nothing).  Names are printed escaped."""

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
        name = row.get("name") or f"{row['family']} n={row.get('n')}"
        what = plain(f"{name} · {row.get('label') or row['solver']} seed={row['seed']} rep={row['repetition']}")
        if self.bar is not None:
            self.bar.set_postfix_str(what, refresh=False)
            self.bar.update(1)
        elif self.mode == "lines":
            value = "" if row.get("objective") is None else f" objective={row['objective']:.10g}"
            print(f"[{self.done}/{self.total}] {what}: {row['status']}{value} "
                  f"({(row.get('wall_time') or 0.0):.2f} s)", flush=True)

    def skip(self, count: int) -> None:
        """Count runs that another runner stored."""
        if count <= 0:
            return
        self.done += count
        if self.bar is not None:
            self.bar.update(count)
        elif self.mode == "lines":
            print(f"[{self.done}/{self.total}] {count} run(s) stored by another runner", flush=True)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()


def local_executor(workers: int) -> ProcessPoolExecutor:
    """The default executor: a pool of fresh ("spawn") processes that end when the runner dies.

    Not fork: a parent that already ran an OpenMP or threaded numba kernel cannot fork safely.
    """
    return ProcessPoolExecutor(max_workers=workers, mp_context=multiprocessing.get_context("spawn"),
                               initializer=watch_parent, initargs=(os.getpid(),))


class Leases:
    """This runner's claims in the store: taken before a run starts, renewed while it runs, dropped at the end.

    A claim lasts ``seconds`` unless renewed (every third of that); see spinward/bench/store.py
    for when another runner may take it over.
    """

    def __init__(self, store: Store, seconds: float = LEASE_SECONDS) -> None:
        if not (seconds > 0 and math.isfinite(seconds)):
            from spinward.core.errors import InputError

            raise InputError(f"the lease must be a positive number of seconds, got {seconds!r}")
        self.store, self.seconds = store, float(seconds)
        self.runner = f"{socket.gethostname()}:{os.getpid()}:{secrets.token_hex(4)}"
        self.renewed = time.monotonic()

    def take(self, candidates: list[RunSpec], room: int) -> list[RunSpec]:
        """Claim up to ``room`` of ``candidates`` that nobody stored or holds."""
        if room <= 0:
            return []
        taken: list[RunSpec] = []
        busy = self.store.held_elsewhere(self.runner)
        for run in candidates:
            if run.key not in busy and self.store.claim(run.key, self.runner, self.seconds):
                taken.append(run)
                if len(taken) >= room:
                    break
        return taken

    def renew_due(self, keys: list[str]) -> None:
        if time.monotonic() - self.renewed >= self.seconds / 3:
            self.store.renew(keys, self.runner, self.seconds)
            self.renewed = time.monotonic()

    @property
    def poll(self) -> float:
        """Seconds between looks at runs that other runners hold."""
        return min(1.0, self.seconds / 3)


def environment(suite: Suite, runner: str, workers: int, executor: str) -> dict[str, Any]:
    """What a runner records about itself: versions, machine, and the suite's limits per solver entry."""
    from spinward import __version__

    limits = [{"label": s.shown, "solver": s.name, "options": s.options, "per_spin": s.per_spin,
               "time_limit": _limit(s.time_limit if s.time_limit is not None else suite.time_limit)}
              for s in suite.solvers]
    return {"runner": runner, "suite": suite.name, "host": socket.gethostname(), "pid": os.getpid(),
            "started_at": datetime.now(UTC).isoformat(timespec="seconds"), "workers": workers,
            "executor": executor, "spinward": __version__, "python": platform.python_version(),
            "numpy": np.__version__, "platform": platform.platform(), "cpus": os.cpu_count(), "limits": limits}


def _limit(seconds: float | None) -> float | None:
    return None if seconds is None or math.isinf(seconds) else seconds


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
              progress: ProgressMode = "auto", available: list[str] | None = None,
              lease: float = LEASE_SECONDS) -> Summary:
    """Run every run of ``suite`` not yet in ``store``; each row is committed as its run ends.

    ``executor`` is any ``concurrent.futures.Executor`` (None: a local process pool
    of ``workers``).  At most ``2·workers`` runs are in flight, each claimed in the
    store for ``lease`` seconds (renewed while it runs), so runners sharing the
    store never start the same run.  Returns once every run is stored, by this
    runner or another.  Rows with status "interrupted" (Ctrl-C reached the
    worker) are not stored, so a rerun repeats them.
    """
    t0 = time.perf_counter()
    todo, summary = plan(suite, store, available)
    leases = Leases(store, lease)
    kind = "local" if executor is None else type(executor).__name__
    store.start_runner(environment(suite, leases.runner, workers, kind))
    with contextlib.ExitStack() as stack:
        stack.callback(store.release, leases.runner)  # Ctrl-C or an error: the claims go at once
        ex = executor or stack.enter_context(local_executor(workers))
        bar = Progress(len(todo), progress)
        stack.callback(bar.close)
        for event, row in _drain(ex, todo, max(2 * workers, 1), leases):
            if event == "others":
                summary.by_others += row
                bar.skip(row)
                continue
            if row["status"] != "interrupted" and store.add({**row, "runner": leases.runner},
                                                            release=leases.runner):
                summary.stored += 1
            else:
                store.release(leases.runner, row["key"])
                summary.not_stored += 1
            bar.update(row)
    store.finish_runner(leases.runner, datetime.now(UTC).isoformat(timespec="seconds"))
    summary.seconds = time.perf_counter() - t0
    return summary


def _drain(ex: Executor, todo: list[RunSpec], window: int, leases: Leases) -> Iterator[tuple[str, Any]]:
    """Claim and submit runs keeping ``window`` in flight; yield ("row", row) as each finishes and
    ("others", count) when other runners stored some of ``todo``."""
    pending: dict[Future[dict[str, Any]], RunSpec] = {}
    waiting = list(todo)
    try:
        while True:
            if len(pending) < window:
                stored = leases.store.keys()
                left = [r for r in waiting if r.key not in stored]
                if len(left) < len(waiting):
                    yield "others", len(waiting) - len(left)
                waiting = left
                for run in leases.take(waiting, window - len(pending)):
                    waiting.remove(run)
                    pending[ex.submit(execute, run.model_dump())] = run
            if not pending:
                if not waiting:
                    return
                time.sleep(leases.poll)  # the rest is claimed by other runners: wait for them or their expiry
                continue
            finished, _ = wait(pending, timeout=leases.poll, return_when=FIRST_COMPLETED)
            leases.renew_due([r.key for r in pending.values()])
            for fut in finished:
                del pending[fut]
                yield "row", fut.result()
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

