"""Benchmark: does every registered solver honour ``time_limit`` within 10% + 0.5 s?

Run: python examples/benchmarks/time_limits.py [--limits 0.5 2] [--out bench-out/time_limits.json]
For each solver × instance family × limit, one solve; overshoot = wall_time − limit.
Prints every run, then the distribution of overshoot per solver.  The first solve in a
fresh process also loads numba and its cached kernels (about 0.7 s here, once per process,
before any search can start): it is timed on its own and reported as the cold start, and
every solver then runs once on a small instance before the measured runs.  Families
(invented instances, fixed seeds): dense SK n = 1500, sparse weighted 3-regular
n = 5000, periodic 2D ±J grid 40×40, a 60-spin dense QUBO, and a ferromagnet with fields.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import networkx as nx
import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
from _common import table, write_json  # noqa: E402

import spinward  # noqa: E402


def families() -> dict[str, object]:
    rng = np.random.default_rng(0)
    J = np.triu(rng.normal(size=(1500, 1500)), 1)
    g = nx.random_regular_graph(3, 5000, seed=1)
    nx.set_edge_attributes(g, {e: float(w) for e, w in zip(g.edges, rng.normal(size=g.number_of_edges()))}, "weight")
    grid = nx.grid_2d_graph(40, 40, periodic=True)
    spin = {e: float(rng.choice([-1.0, 1.0])) for e in grid.edges}
    ferro = np.triu(np.abs(rng.normal(size=(400, 400))) * (rng.random((400, 400)) < 0.02), 1)
    return {"sk-1500": spinward.Ising(J), "3reg-5000": spinward.MaxCut(g),
            "torus-40": spinward.Ising({e: v for e, v in spin.items()}, {}),
            "qubo-60": spinward.QUBO(rng.normal(size=(60, 60))),
            "ferro-400": spinward.Ising(ferro, rng.normal(size=400))}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--limits", type=float, nargs="+", default=[0.5, 2.0])
    parser.add_argument("--out", default="bench-out/time_limits.json")
    args = parser.parse_args()
    rows = []
    fams = families()
    t0 = time.perf_counter()
    spinward.solve(fams["sk-1500"], method="local", time_limit=0.5, seed=0)
    cold = time.perf_counter() - t0
    for name in spinward.solvers():  # warm-up: load every solver's kernels once
        for warm in ("qubo-60", "3reg-5000"):
            try:
                spinward.solve(fams[warm], method=name, time_limit=0.2, seed=0)
            except spinward.SolverUnsuitableError:
                pass
    for fam, form in fams.items():
        for name in spinward.solvers():
            for limit in args.limits:
                try:
                    r = spinward.solve(form, method=name, time_limit=limit, seed=0)
                except spinward.SolverUnsuitableError:
                    continue
                over = r.wall_time - limit
                rows.append({"family": fam, "solver": name, "limit": limit, "wall": r.wall_time, "overshoot": over,
                             "ok": r.wall_time <= 1.1 * limit + 0.5, "status": r.status})
    print(table(rows, ["family", "solver", "limit", "wall", "overshoot", "ok", "status"]))
    summary = []
    for name in sorted({r["solver"] for r in rows}):
        over = np.array([r["overshoot"] for r in rows if r["solver"] == name])
        summary.append({"solver": name, "runs": len(over), "median_s": float(np.median(over)),
                        "p90_s": float(np.quantile(over, 0.9)), "max_s": float(over.max()),
                        "all_within": all(r["ok"] for r in rows if r["solver"] == name)})
    print("\novershoot = wall − limit, per solver (target: wall ≤ 1.1·limit + 0.5 s)")
    print(table(summary, ["solver", "runs", "median_s", "p90_s", "max_s", "all_within"]))
    print(f"\ncold start (first solve in this process: local, sk-1500, limit 0.5 s): {cold:.2f} s wall")
    write_json(args.out, {"benchmark": "time_limits", "rows": rows, "summary": summary,
                          "cold_start": {"solver": "local", "family": "sk-1500", "limit": 0.5, "wall": cold}})


if __name__ == "__main__":
    main()
