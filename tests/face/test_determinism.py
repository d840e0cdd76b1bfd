"""Same seed, same result: across runs and across BLAS and numba thread counts.

Each registered solver runs in two fresh processes (1 thread, then 2 threads
for numba and BLAS) on the same instances; the assignments must be identical.
Runs with a time limit are excluded by design: how much work fits in the limit
depends on the clock (documented in DEVELOPERS.md).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

import spinward

SCRIPT = r"""
import json, sys, numpy as np, networkx as nx, spinward
rng = np.random.default_rng(7)
n = 60
J = np.triu(rng.normal(size=(n, n)), 1)
g = nx.random_regular_graph(3, 80, seed=3)
nx.set_edge_attributes(g, {e: float(w) for e, w in zip(g.edges, rng.normal(size=g.number_of_edges()))}, "weight")
small = spinward.QUBO(rng.normal(size=(14, 14)))
out = {}
for name in spinward.solvers():
    for label, form in (("sk", spinward.Ising(J, rng.normal(size=n) * 0)), ("sparse", spinward.MaxCut(g)),
                        ("small", small)):
        try:
            r = spinward.solve(form, method=name, seed=11, bound=False)
        except spinward.SolverUnsuitableError:
            continue
        out[f"{name}/{label}"] = [list(r.array), r.objective]
print(json.dumps(out))
"""


def _run(threads: int) -> dict:
    env = dict(os.environ, NUMBA_NUM_THREADS=str(threads), OMP_NUM_THREADS=str(threads),
               OPENBLAS_NUM_THREADS=str(threads), MKL_NUM_THREADS=str(threads))
    out = subprocess.run([sys.executable, "-c", SCRIPT], env=env, capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def test_identical_across_thread_counts_and_runs():
    one, two = _run(1), _run(2)
    assert one.keys() == two.keys() and len(one) >= len(spinward.solvers())
    differ = [k for k in one if one[k] != two[k]]
    assert not differ, f"results depend on the thread count: {differ}"
    again = _run(2)
    assert again == two
