"""Benchmark of the "milp" solver (HiGHS on the standard linearisation): where does it prove optimality fast?

Instances (invented here, seeded): random d-regular graphs as MaxCut, edge weights ±1 or Gaussian,
d = 3 at n = 60–200 (the issue's family), plus d = 4 and 5 at a few sizes to test the fit rule,
which uses the cycle rank (edges − nodes + components).  Each instance runs ``method="milp"``
with a time limit (default 60 s) and no bound providers; the table gives, per family and size, the
median and worst time to a proof, how many runs were proved (``exact=True``), how many within 10 s,
the treewidth estimate of the profile (tree DP takes width ≤ 20; where it runs, its own median time
is shown), and what "auto" runs (tree DP's cheap check may pass and then decline at run time, after
which "auto" falls back to the next in rank, as it does here).

With Gaussian weights HiGHS reaches its own optimality (zero gap), but the project's proof needs
the widened dual bound within the data's resolution, which Gaussian data has not: those runs end
with a certified bound within the margin of the optimum instead ("highs optimal" counts them).

Timings depend on the machine's load (the JSON records the load average).  Usage:

    python examples/benchmarks/milp.py [--quick] [--limit 60] [--out bench-out/milp.json]
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import time
from pathlib import Path
from typing import Any

import networkx as nx
import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))

import spinward  # noqa: E402
from spinward.core.dispatch import rank  # noqa: E402
from spinward.core.profile import profile_of  # noqa: E402
from spinward.plugins.milp import FIT_CYCLE_RANK, FIT_CYCLE_RANK_CONTINUOUS, cycle_rank  # noqa: E402

from _common import table, write_json  # noqa: E402

TARGET_S = 10.0
FAMILIES = {  # (degree, weights): sizes
    (3, "±1"): (60, 100, 150, 200, 300, 400, 500, 700),
    (3, "gauss"): (60, 100, 150, 200, 300, 400, 500, 700),
    (4, "±1"): (100, 200, 300),
    (5, "±1"): (70, 100, 200),
}
QUICK = {(3, "±1"): (60, 150, 200), (3, "gauss"): (60, 150, 200)}


def instance(degree: int, weights: str, n: int, seed: int) -> Any:
    g = nx.random_regular_graph(degree, n, seed=seed)
    rng = np.random.default_rng(seed)
    for u, v in g.edges:
        g[u][v]["weight"] = float(rng.choice([-1.0, 1.0])) if weights == "±1" else float(rng.standard_normal())
    return spinward.MaxCut(g)


def measure(form: Any, limit: float) -> dict[str, Any]:
    problem = form.canonical()
    prof = profile_of(problem)
    ranked = [spec.name for spec in rank(problem, prof, spinward.default_registry(), None).ranked]
    t0 = time.perf_counter()
    r = spinward.solve(form, method="milp", time_limit=limit, seed=0, bound=False)
    seconds = time.perf_counter() - t0
    treedp = None
    try:  # its check is cheap: it may still decline once its elimination order is too wide
        t0 = time.perf_counter()
        spinward.solve(form, method="treedp", time_limit=limit, seed=0, bound=False)
        treedp = time.perf_counter() - t0
    except spinward.SolverUnsuitableError:
        ranked = [name for name in ranked if name != "treedp"]  # "auto" falls back to the next in rank
    auto = ranked[0]
    return {"seconds": seconds, "exact": r.exact, "highs_optimal": "Optimal" in str(r.info.get("highs", "")),
            "objective": r.objective, "gap": r.gap, "nodes": r.info.get("nodes"), "auto": auto,
            "cuts": r.info.get("cuts"), "treewidth": prof.treewidth, "cycle_rank": cycle_rank(prof),
            "treedp_s": treedp}


def summarise(key: tuple[int, str], n: int, runs: list[dict[str, Any]]) -> dict[str, Any]:
    times = [r["seconds"] for r in runs]
    proved = [r for r in runs if r["exact"]]
    return {"graph": f"{key[0]}-regular", "weights": key[1], "n": n, "cycle rank": runs[0]["cycle_rank"],
            "treewidth est": runs[0]["treewidth"], "median s": statistics.median(times), "worst s": max(times),
            "proved": f"{len(proved)}/{len(runs)}",
            "highs optimal": f"{sum(r['highs_optimal'] for r in runs)}/{len(runs)}",
            f"≤ {TARGET_S:g} s": f"{sum(r['highs_optimal'] and r['seconds'] <= TARGET_S for r in runs)}/{len(runs)}",
            "treedp median s": statistics.median(t) if (t := [r["treedp_s"] for r in runs if r["treedp_s"]]) else "-",
            "auto picks": "/".join(sorted({r["auto"] for r in runs}))}


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="fewer sizes, two instances each")
    parser.add_argument("--limit", type=float, default=60.0, help="time limit per run (s)")
    parser.add_argument("--instances", type=int, default=3)
    parser.add_argument("--out", default="bench-out/milp.json")
    args = parser.parse_args(argv)
    spinward.solve(instance(3, "±1", 20, 0), method="milp", bound=False)  # load numba and scipy once
    families = QUICK if args.quick else FAMILIES
    count = 2 if args.quick else args.instances
    rows, raw = [], []
    for key, sizes in families.items():
        for n in sizes:
            runs = [measure(instance(key[0], key[1], n, seed), args.limit) for seed in range(1, count + 1)]
            raw.append({"degree": key[0], "weights": key[1], "n": n, "runs": runs})
            rows.append(summarise(key, n, runs))
            print(table(rows[-1:], list(rows[-1])), flush=True)
    print(f"\nmilp, time limit {args.limit:g} s per run; load average {os.getloadavg()[0]:.2f} on "
          f"{os.cpu_count()} cores; 'auto' picks milp up to cycle rank {FIT_CYCLE_RANK} "
          f"({FIT_CYCLE_RANK_CONTINUOUS} for continuous weights)\n")
    print(table(rows, list(rows[0])))
    write_json(args.out, {"limit_s": args.limit, "target_s": TARGET_S, "fit_cycle_rank": FIT_CYCLE_RANK,
                          "fit_cycle_rank_continuous": FIT_CYCLE_RANK_CONTINUOUS,
                          "load_average": os.getloadavg(), "rows": rows, "runs": raw})


if __name__ == "__main__":
    main()
