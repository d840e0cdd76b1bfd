"""Benchmark: is "auto" at least as good as the best single solver, at equal wall time?

For every family (3 instances each) and two budgets, every applicable built-in solver and
"auto" get the same ``time_limit`` (bounds on, as a user gets them).  The quality of a run
is its objective for MaxCut and minus it for QUBO and Ising (larger is better; every
family here has a positive quality).  Per instance, the ratio is auto's quality over the
best single solver's; per family and budget, the mean of those ratios is printed.
Target: every ratio ≥ 0.999 and the median ≥ 1.000.

Families (invented instances, fixed seeds): SK (Gaussian) n = 2000, 4000, 8000; a dense
biased QUBO n = 2000 (off-diagonal mean 0.5); 3-regular ±1 and Gaussian n = 10⁴;
G(n, 10/n) ±1 n = 10⁴; the 2D ±J torus 100×100; the 3D ±J periodic cube L = 10; a
40-asset portfolio-selection QUBO of our own (returns, covariance risk, a budget penalty).

Run: python examples/benchmarks/portfolio.py [--families ...] [--instances 3] [--scale 1.0]
     [--solvers ...] [--out bench-out/portfolio.json]
``--scale`` multiplies every budget (0.3 for a quick look; the targets are for 1.0).
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import time
import warnings
from pathlib import Path
from typing import Any, Callable

import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
from _common import table, write_json  # noqa: E402

import spinward  # noqa: E402
from spinward.adapters import generators as gen  # noqa: E402

#: family → (builder(seed), two budgets in seconds)
FAMILIES: dict[str, tuple[Callable[[int], Any], tuple[float, float]]] = {
    "sk-2000": (lambda s: gen.sk(2000, seed=s), (1.0, 4.0)),
    "sk-4000": (lambda s: gen.sk(4000, seed=s), (2.0, 8.0)),
    "sk-8000": (lambda s: gen.sk(8000, seed=s), (6.0, 20.0)),
    "qubo-biased-2000": (lambda s: biased_qubo(2000, s), (1.0, 4.0)),
    "3reg-pm1-10k": (lambda s: gen.random_regular(10_000, 3, weights="pm1", seed=s), (2.0, 8.0)),
    "3reg-gauss-10k": (lambda s: gen.random_regular(10_000, 3, weights="gaussian", seed=s), (2.0, 8.0)),
    "gnp10-pm1-10k": (lambda s: gen.sparse_er(10_000, 10.0, weights="pm1", seed=s), (2.0, 8.0)),
    "torus2d-100": (lambda s: gen.torus(100, dim=2, seed=s), (2.0, 8.0)),
    "cube3d-10": (lambda s: gen.torus(10, dim=3, seed=s), (1.0, 4.0)),
    "portfolio-40": (lambda s: portfolio_qubo(40, s), (0.2, 1.0)),
}


def biased_qubo(n: int, seed: int) -> spinward.QUBO:
    """Dense QUBO with off-diagonal entries N(0.5, 1) and a diagonal that cancels the spin-form fields."""
    rng = np.random.default_rng(seed)
    Q = 0.5 + rng.normal(size=(n, n))
    np.fill_diagonal(Q, 0.0)
    np.fill_diagonal(Q, -(Q.sum(axis=1) + Q.sum(axis=0)) / 2)
    return spinward.QUBO(Q)


def portfolio_qubo(n: int, seed: int) -> spinward.QUBO:
    """Pick assets: minimise risk·xᵀΣx − returnsᵀx + λ(Σx − k)², k = n/4 (invented market, our scenario)."""
    rng = np.random.default_rng(seed)
    factors = rng.normal(size=(n, 4))
    cov = factors @ factors.T / 4 + np.diag(rng.uniform(0.2, 1.0, n))
    returns = rng.uniform(0.5, 2.0, n)
    k, lam, risk = n // 4, 4.0, 0.5
    Q = risk * cov + lam * np.ones((n, n))
    Q[np.diag_indices(n)] += -returns - 2 * lam * k
    return spinward.QUBO(Q, offset=lam * k * k)


def quality(r: spinward.Result) -> float:
    return r.objective if r.sense == "max" else -r.objective


def run_one(form: Any, method: str, limit: float) -> tuple[float | None, float, str]:
    """One solve on a clean slate: the canonical form is built (outside the clock) and nothing else is
    cached from an earlier run (profile, SDP factor, orders), so every method starts alike."""
    form.canonical().meta.clear()
    t0 = time.perf_counter()
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            r = spinward.solve(form, method=method, time_limit=limit, seed=1)
    except spinward.SolverUnsuitableError:
        return None, 0.0, ""
    return quality(r), time.perf_counter() - t0, r.solver


def family_rows(name: str, instances: int, scale: float, solvers: list[str]) -> list[dict[str, Any]]:
    build, budgets = FAMILIES[name]
    rows = []
    for seed in range(1, instances + 1):
        form = build(seed)
        for budget in budgets:
            limit = budget * scale
            results = {}
            for method in solvers:
                q, wall, chose = run_one(form, method, limit)
                if q is not None:
                    results[method] = (q, wall, chose)
            singles = {m: v for m, v in results.items() if m != "auto"}
            best = max(singles, key=lambda m: singles[m][0])
            auto_q, auto_wall, chose = results["auto"]
            rows.append({"family": name, "instance": seed, "budget": limit, "auto": auto_q, "auto_chose": chose,
                         "best_single": best, "best": singles[best][0], "ratio": auto_q / singles[best][0],
                         "auto_wall": auto_wall, **{f"q_{m}": v[0] for m, v in singles.items()}})
            print(f"  {name:17s} seed {seed} budget {limit:5.2f}: auto ({chose}) {auto_q:.6g}, best {best} "
                  f"{singles[best][0]:.6g}, ratio {rows[-1]['ratio']:.5f}", flush=True)
    return rows


def summary(rows: list[dict[str, Any]]) -> list[dict[str, Any]]:
    out = []
    for fam in dict.fromkeys(r["family"] for r in rows):
        for budget in sorted({r["budget"] for r in rows if r["family"] == fam}):
            mine = [r for r in rows if r["family"] == fam and r["budget"] == budget]
            winners = [r["best_single"] for r in mine]
            out.append({"family": fam, "budget_s": budget, "mean_ratio": float(np.mean([r["ratio"] for r in mine])),
                        "worst_ratio": min(r["ratio"] for r in mine), "auto_chose": mine[0]["auto_chose"],
                        "best_single": max(set(winners), key=winners.count), "ok": bool(np.mean(
                            [r["ratio"] for r in mine]) >= 0.999)})
    return out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--families", nargs="+", default=list(FAMILIES))
    parser.add_argument("--instances", type=int, default=3)
    parser.add_argument("--scale", type=float, default=1.0)
    parser.add_argument("--solvers", nargs="+", default=None, help="single solvers (default: every built-in)")
    parser.add_argument("--out", default="bench-out/portfolio.json")
    args = parser.parse_args()
    solvers = ["auto", *(args.solvers or spinward.solvers())]
    for name in spinward.solvers():  # load every kernel once, dense and sparse, with and without fields
        for warm in (gen.sk(60, seed=0), portfolio_qubo(30, 0), gen.random_regular(100, 3, seed=0),
                     gen.random_regular(100, 3, weights="gaussian", seed=0), gen.torus(5, dim=3, seed=0)):
            try:
                run_one(warm, name, 0.2)
            except Exception:  # a warm-up only
                pass
    rows = []
    for fam in args.families:
        rows += family_rows(fam, args.instances, args.scale, solvers)
    summ = summary(rows)
    print("\nauto against the best single solver at equal wall time (quality ratio; target ≥ 0.999, median ≥ 1)")
    print(table(summ, ["family", "budget_s", "mean_ratio", "worst_ratio", "auto_chose", "best_single", "ok"]))
    ratios = [s["mean_ratio"] for s in summ]
    print(f"\nmedian of the family ratios: {statistics.median(ratios):.5f}; worst: {min(ratios):.5f}; "
          f"load average {os.getloadavg()[0]:.2f}")
    write_json(args.out, {"benchmark": "portfolio", "rows": rows, "summary": summ, "scale": args.scale})


if __name__ == "__main__":
    main()
