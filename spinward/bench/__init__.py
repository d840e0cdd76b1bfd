"""The benchmark harness: suites (TOML), a durable sqlite3 store, a runner on any executor, reports.

``spinward bench SUITE.toml --db results.sqlite`` runs a suite; ``spinward report
results.sqlite --html out.html`` summarises it.  From Python::

    from spinward.bench import load_suite, run_suite, Store
    with Store("results.sqlite") as store:
        run_suite(load_suite("examples/suites/quick.toml"), store, workers=2)
"""

from .runner import Summary, dask_executor, run_suite
from .store import Store
from .suite import Suite, load_suite

__all__ = ["Store", "Suite", "Summary", "dask_executor", "load_suite", "run_suite"]
