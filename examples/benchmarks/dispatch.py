"""Benchmark: what "auto" chooses per family, and the profile's cost as a share of the solve (target ≤ 5% at n ≥ 2000).

Run: python examples/benchmarks/dispatch.py [--time-limit 5] [--out bench-out/dispatch.json]
Families (invented instances from fixed seeds): SK Gaussian and ±1, dense G(n, 1/2)
MaxCut, sparse 3-regular, periodic 2D ±J torus, a random tree, a ferromagnet with
fields, and a two-component problem.
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
from spinward.core.profile import profile_of  # noqa: E402


def families(n: int) -> dict[str, object]:
    rng = np.random.default_rng(1)
    pm = np.where(rng.random((n, n)) < 0.5, -1.0, 1.0)
    torus = nx.grid_2d_graph(45, 45, periodic=True)
    tree = nx.random_labeled_tree(n, seed=2)
    nx.set_edge_attributes(tree, {e: float(w) for e, w in zip(tree.edges, rng.normal(size=n - 1))}, "weight")
    g3 = nx.random_regular_graph(3, n, seed=3)
    nx.set_edge_attributes(g3, {e: float(w) for e, w in zip(g3.edges, rng.normal(size=g3.number_of_edges()))}, "weight")
    ferro = np.triu(np.abs(rng.normal(size=(n, n))) * (rng.random((n, n)) < 3 / n), 1)
    two = nx.disjoint_union(g3, nx.gnp_random_graph(n // 2, 0.5, seed=4))
    return {
        "sk-gauss": spinward.Ising(np.triu(rng.normal(size=(n, n)), 1)),
        "sk-pm1": spinward.Ising(np.triu(pm, 1)),
        "gnp-dense": spinward.MaxCut(nx.gnp_random_graph(n, 0.5, seed=5)),
        "3-regular": spinward.MaxCut(g3),
        "torus-pmJ": spinward.Ising({e: float(rng.choice([-1, 1])) for e in torus.edges}, {}),
        "tree": spinward.MaxCut(tree),
        "ferro-fields": spinward.Ising(ferro, rng.normal(size=n)),
        "two-parts": spinward.MaxCut(two),
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=2000)
    parser.add_argument("--time-limit", type=float, default=5.0)
    parser.add_argument("--out", default="bench-out/dispatch.json")
    args = parser.parse_args()
    rows = []
    for fam, form in families(args.n).items():
        t0 = time.perf_counter()
        problem = form.canonical()  # the adapter's work, reported apart from the profile
        adapt_s = time.perf_counter() - t0
        t0 = time.perf_counter()
        prof = profile_of(problem)
        profile_s = time.perf_counter() - t0
        r = spinward.solve(form, time_limit=args.time_limit, seed=0)
        total = profile_s + r.wall_time
        rows.append({"family": fam, "n": prof.n, "solver": r.solver, "exact": r.exact, "objective": r.objective,
                     "gap": r.gap if r.gap is not None else "", "adapt_s": adapt_s, "profile_s": profile_s, "solve_s": r.wall_time,
                     "profile_share": profile_s / total})
    print(table(rows, ["family", "n", "solver", "exact", "objective", "gap", "adapt_s", "profile_s", "solve_s",
                      "profile_share"]))
    write_json(args.out, {"benchmark": "dispatch", "time_limit": args.time_limit, "rows": rows})


if __name__ == "__main__":
    main()
