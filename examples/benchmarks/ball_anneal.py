"""Benchmark: tabu's two sparse starts at equal time, by mean degree (where "auto" switches).

Run: python examples/benchmarks/ball_anneal.py [--n 10000] [--budget 10] [--seeds 0 1] [--jobs 2]
     [--out bench-out/ball_anneal.json]

For each family, tabu runs with ``start="anneal"`` (annealing, strict ball kicks, the walk) and with
``start="ball-anneal"`` (annealed ball kicks from random spins, the walk), same time limit and seeds.
Families (invented instances from fixed seeds), all weighted MaxCut with Gaussian weights unless
noted: random 3-, 4-, 5- and 6-regular graphs, a periodic 2D grid with ±1 weights (degree 4), the
periodic 3D cube with ±1 weights (degree 6), and G(n, 10/n).  Reported: the cut of each start and which one wins; tabu's "auto" takes "ball-anneal"
at mean degree ≤ ``tabu.BALL_ANNEAL_MAX_DEGREE``.  With --jobs 2 two runs share the two cores.
"""

from __future__ import annotations

import argparse
import sys
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path
from typing import Any

import networkx as nx
import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
from _common import maxcut_canonical, table, write_json  # noqa: E402

from spinward.core import CanonicalProblem, SolveContext  # noqa: E402
from spinward.plugins import tabu  # noqa: E402
from spinward.plugins.common.flips import mean_degree  # noqa: E402

FAMILIES = ("3-regular", "4-regular", "5-regular", "6-regular", "torus ±1", "cube ±1", "G(n,10/n)")
STARTS = ("anneal", "ball-anneal")


def instance(family: str, n: int, seed: int = 1) -> CanonicalProblem:
    """One family's instance as canonical weighted MaxCut (C(σ) = cut weight)."""
    rng = np.random.default_rng(seed)
    if family.endswith("-regular"):
        g = nx.random_regular_graph(int(family[0]), n, seed=seed)
    elif family == "torus ±1":
        side = int(round(n ** 0.5))
        g = nx.convert_node_labels_to_integers(nx.grid_2d_graph(side, side, periodic=True))
    elif family == "cube ±1":  # the 3D periodic lattice: degree 6, like 6-regular graphs but with short loops
        side = int(round(n ** (1 / 3)))
        g = nx.convert_node_labels_to_integers(nx.grid_graph(dim=[side] * 3, periodic=True))
    else:
        g = nx.fast_gnp_random_graph(n, 10 / n, seed=seed)
    edges = np.array(g.edges(), dtype=np.int64).reshape(-1, 2)
    w = rng.choice([-1.0, 1.0], len(edges)) if family.endswith("±1") else rng.standard_normal(len(edges))
    return maxcut_canonical(g.number_of_nodes(), edges, w)


def one_run(job: tuple[str, int, str, int, float]) -> dict[str, Any]:
    family, n, start, seed, budget = job
    problem = instance(family, n)
    ctx = SolveContext(rng=np.random.default_rng(seed), time_limit=budget)
    sol = tabu.run(problem, ctx.child(options=tabu.SPEC.read_options({"start": start})))
    return {"family": family, "n": problem.n, "degree": round(mean_degree(problem), 2), "start": start, "seed": seed,
            "cut": problem.value(sol.sigma)}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=10_000)
    parser.add_argument("--budget", type=float, default=10.0)
    parser.add_argument("--seeds", type=int, nargs="+", default=[0])
    parser.add_argument("--jobs", type=int, default=1)
    parser.add_argument("--out", default="bench-out/ball_anneal.json")
    args = parser.parse_args()
    one_run(("3-regular", 50, "ball-anneal", 0, 0.2))  # compile the kernels before any timing
    one_run(("3-regular", 50, "anneal", 0, 0.2))
    jobs = [(f, args.n, s, seed, args.budget) for f in FAMILIES for seed in args.seeds for s in STARTS]
    if args.jobs > 1:
        with ProcessPoolExecutor(args.jobs) as pool:
            runs = list(pool.map(one_run, jobs))
    else:
        runs = [one_run(job) for job in jobs]
    rows = []
    for family in FAMILIES:
        mine = [r for r in runs if r["family"] == family]
        means = {s: float(np.mean([r["cut"] for r in mine if r["start"] == s])) for s in STARTS}
        winner = max(STARTS, key=lambda s: means[s])
        rows.append({"family": family, "n": mine[0]["n"], "degree": mine[0]["degree"], **means,
                     "ratio": means["ball-anneal"] / means["anneal"], "better": winner,
                     "auto": "ball-anneal" if mine[0]["degree"] <= tabu.BALL_ANNEAL_MAX_DEGREE else "anneal"})
    print(f"tabu, {args.budget:g} s per run, mean cut over seeds {args.seeds}")
    print(table(rows, ["family", "n", "degree", "anneal", "ball-anneal", "ratio", "better", "auto"]))
    write_json(args.out, {"benchmark": "ball_anneal", "budget": args.budget, "runs": runs, "rows": rows})


if __name__ == "__main__":
    main()
