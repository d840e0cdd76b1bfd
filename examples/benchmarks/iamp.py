"""Benchmark of the IAMP solver (IAMP + clean-up + polish) on SK instances, against annealing.

Instances: J_ij i.i.d. N(0,1) (or ±1) for i < j, canonical K = (J + Jᵀ)/√n, so that
C(σ) = ½σᵀKσ = H(σ) = n^{-1/2} Σ_{i<j} J_ij σ_i σ_j (the SK convention of docs/references.md, maximised)
and e = H/n; P* = 0.7631667 (from memory).  n = 8000 uses float32 couplings.

Reports per run: e after sign rounding, after greedy clean-up and after the polish, wall time,
IAMP time per iteration divided by the time of one matvec (timed apart, and as measured inside
the run: IAMP time over the time spent in its matvecs), and peak traced memory (measured in
a second, untimed run of the first seed: tracing slows numpy's allocations); then a fit
e(n) = e∞ − A·n^{−2/3}, and simulated annealing on the same n = 4000 instances for the same wall
time (and for 2× and 4× of it, to bracket the time ratio at equal energy).

The solver computes in float32 by default (option precision="auto"); the dtype column is the
input's.  Kernels are loaded by a warm-up solve before any timing.  Timings are taken on a shared
machine: read the ratios, not the seconds.

Usage: python examples/benchmarks/iamp.py [--sizes 1000 2000 4000 8000] [--seeds 5] [--out PATH]
"""

from __future__ import annotations

import argparse
import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # one BLAS thread beat two on the 2-core machine
os.environ.setdefault("OMP_NUM_THREADS", "1")

import json
import math
import time
import tracemalloc
import warnings
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np

from spinward.core import AssumptionWarning, CanonicalProblem, SolveContext
from spinward.plugins.iamp import SPEC as IAMP_SPEC
from spinward.plugins.iamp import working_precision
from spinward.plugins.iamp.message_passing import normalised, raw_matvec
from spinward.plugins.iamp.parisi import PSTAR_REFERENCE, load_tables


def sk_problem(n: int, seed: int, pm1: bool = False, dtype: Any = np.float64) -> CanonicalProblem:
    """K = (J + Jᵀ)/√n with J strictly upper triangular, N(0,1) or ±1 entries."""
    rng = np.random.default_rng(seed)
    if pm1:
        G = (2 * rng.integers(0, 2, size=(n, n), dtype=np.int8) - 1).astype(dtype)
    else:
        G = rng.standard_normal((n, n), dtype=dtype)
    K = np.triu(G, 1)
    del G
    K = K + K.T
    K *= dtype(1.0 / math.sqrt(n))
    return CanonicalProblem(K, np.zeros(n))


def time_matvec(problem: CanonicalProblem, options: dict[str, Any], repeats: int = 15) -> float:
    """Median seconds of the normalised matvec exactly as the solver calls it (its working precision)."""
    couplings, dtype = working_precision(problem, SolveContext(rng=np.random.default_rng(0), options=dict(options)))
    K = couplings[0] if problem.kind == "dense" else problem.K
    A = normalised(raw_matvec(K, problem.kind, dtype), 0.0, 1.0 / math.sqrt(problem.n))
    x = np.random.default_rng(0).standard_normal(problem.n)
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        A(x)
        times.append(time.perf_counter() - t0)
    return float(np.median(times))


def run_iamp(problem: CanonicalProblem, seed: int, options: dict[str, Any], trace_memory: bool = False
                ) -> dict[str, Any]:
    """One timed run; with ``trace_memory`` a second, untimed run of the same seed measures peak memory."""
    sol, ctx, wall = _solve(problem, seed, options)
    n = problem.n
    info = sol.info
    t_iter = info["iamp_seconds"][0] / max(info["iterations"], 1)
    peak = None
    if trace_memory:
        tracemalloc.start()
        _solve(problem, seed, options)
        peak = tracemalloc.get_traced_memory()[1] / 2**20
        tracemalloc.stop()
    return {"e_rounded": info["energy_per_spin_rounded"], "e_cleaned": info["energy_per_spin_cleaned"],
            "e_final": problem.value(sol.sigma) / n, "wall_s": wall, "iamp_s": info["iamp_seconds"][0],
            "polish_s": info["polish_seconds"][0], "iterations": info["iterations"], "t_iter_s": t_iter,
            "iter_over_matvec_in_run": info["iamp_seconds"][0] / max(info["iamp_matvec_seconds"][0], 1e-12),
            "peak_mb": peak, "warnings": list(ctx.warnings)}


def _solve(problem: CanonicalProblem, seed: int, options: dict[str, Any]) -> tuple[Any, SolveContext, float]:
    ctx = SolveContext(rng=np.random.default_rng(seed), options=dict(options))
    t0 = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", AssumptionWarning)
        sol = IAMP_SPEC.run(problem, ctx)
    return sol, ctx, time.perf_counter() - t0


def fit_finite_size(ns: list[int], es: list[float]) -> dict[str, float] | None:
    """Least squares e(n) = e∞ − A·n^{−2/3}."""
    if len(set(ns)) < 2:
        return None
    x = np.asarray(ns, dtype=float) ** (-2.0 / 3.0)
    M = np.stack([np.ones_like(x), -x], axis=1)
    (e_inf, A), *_ = np.linalg.lstsq(M, np.asarray(es), rcond=None)
    return {"e_inf": float(e_inf), "A": float(A)}


def annealer() -> Callable[[CanonicalProblem, int, float], float]:
    """The project's annealing plugin if present, else a small numba Metropolis SA written here."""
    try:
        from spinward.plugins.annealing import SPEC as ANNEAL
    except ImportError:
        return _fallback_anneal

    def run(problem: CanonicalProblem, seed: int, seconds: float) -> float:
        ctx = SolveContext(rng=np.random.default_rng(seed), time_limit=seconds)
        sol = ANNEAL.run(problem, ctx)
        return problem.value(sol.sigma) / problem.n

    return run


def _fallback_anneal(problem: CanonicalProblem, seed: int, seconds: float) -> float:
    """Single-flip Metropolis, β linear from 0.1 to 5 (SK units), sweeps sized to the time given."""
    from spinward.plugins.common.flips import local_search, random_spins
    from spinward.plugins.iamp import _kernels as kern

    rng = np.random.default_rng(seed)
    K = np.asarray(problem.K)
    sigma = random_spins(problem.n, rng).astype(np.float64)
    h = problem.local_fields(sigma)
    t0 = time.perf_counter()
    kern.metropolis_dense(K, h.copy(), sigma.copy(), np.full(5, 0.1), 1)
    per_sweep = max((time.perf_counter() - t0) / 5, 1e-6)
    sweeps = max(10, int(0.9 * seconds / per_sweep))
    kern.metropolis_dense(K, h, sigma, np.linspace(0.1, 5.0, sweeps), int(rng.integers(1, 2**31 - 1)))
    return local_search(problem, sigma.astype(np.int8))[1] / problem.n


def main(argv: list[str] | None = None) -> dict[str, Any]:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[1000, 2000, 4000, 8000])
    ap.add_argument("--seeds", type=int, default=5)
    ap.add_argument("--delta", type=float, default=0.005)
    ap.add_argument("--sa-multipliers", type=float, nargs="+", default=[1.0, 2.0, 4.0])
    ap.add_argument("--no-sa", action="store_true")
    ap.add_argument("--no-pm1", action="store_true", help="skip the ±1 couplings at n = 4000")
    ap.add_argument("--option", action="append", default=[], metavar="KEY=VALUE",
                    help="extra iamp option (value parsed as JSON, else kept as text)")
    ap.add_argument("--out", default="bench-out/iamp.json")
    ap.add_argument("--fresh-cache", action="store_true", help="time the first Parisi solve in a new cache dir")
    args = ap.parse_args(argv)
    if args.fresh_cache:
        import tempfile

        os.environ["SPINWARD_CACHE_DIR"] = tempfile.mkdtemp(prefix="spinward-cache-")
    options: dict[str, Any] = {"delta": args.delta}
    for item in args.option:
        key, _, text = item.partition("=")
        try:
            options[key] = json.loads(text)
        except json.JSONDecodeError:
            options[key] = text
    t0 = time.perf_counter()
    load_tables(50, int(round(1 / args.delta)))  # first solve (cached on later runs)
    parisi_first = time.perf_counter() - t0
    t0 = time.perf_counter()
    load_tables(50, int(round(1 / args.delta)))
    parisi_cached = time.perf_counter() - t0
    warm_up(options)
    runs: list[dict[str, Any]] = []
    cases = [(n, False) for n in args.sizes] + ([(4000, True)] if 4000 in args.sizes and not args.no_pm1 else [])
    for n, pm1 in cases:
        dtype = np.float32 if n >= 8000 else np.float64
        for seed in range(args.seeds):
            problem = sk_problem(n, 1000 * n + seed + (500 if pm1 else 0), pm1, dtype)
            t_mv = time_matvec(problem, options)
            rec = {"n": n, "couplings": "pm1" if pm1 else "gauss", "dtype": np.dtype(dtype).name, "seed": seed,
                   **run_iamp(problem, seed, options, trace_memory=seed == 0), "t_matvec_s": t_mv}
            rec["iter_over_matvec"] = rec["t_iter_s"] / t_mv
            if n == 4000 and not pm1 and not args.no_sa:
                rec["sa"] = compare_sa(problem, seed, rec, args.sa_multipliers)
            runs.append(rec)
            print(row(rec), flush=True)
            del problem
    summary = summarise(runs, parisi_first, parisi_cached)
    print_summary(summary)
    out = Path(args.out)
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps({"runs": runs, "summary": summary, "options": options}, indent=2))
    print(f"wrote {out}")
    return summary


def warm_up(options: dict[str, Any]) -> None:
    """Load every numba kernel once (compiled and cached on disk), so no timed run pays for it."""
    small = sk_problem(200, 1)
    _solve(small, 0, options)
    annealer()(small, 0, 0.05)


def compare_sa(problem: CanonicalProblem, seed: int, rec: dict[str, Any], multipliers: list[float]) -> dict[str, Any]:
    """SA at iamp's wall time (×1) and at longer times, to bracket equal energy."""
    sa = annealer()
    out: dict[str, Any] = {"by_multiplier": {}}
    for mult in multipliers:
        e = sa(problem, seed, mult * rec["wall_s"])
        out["by_multiplier"][str(mult)] = e
        if e >= rec["e_final"] and "equal_energy_time_ratio" not in out:
            out["equal_energy_time_ratio"] = mult  # SA needed at most this multiple of iamp's time
    out.setdefault("equal_energy_time_ratio", f">{multipliers[-1]}")
    out["energy_ratio_equal_time"] = rec["e_final"] / out["by_multiplier"][str(multipliers[0])]
    return out


def row(r: dict[str, Any]) -> str:
    sa = r.get("sa")
    peak = "" if r["peak_mb"] is None else f"  peak {r['peak_mb']:.0f} MB"
    sa_txt = f"  SA(×1) {sa['by_multiplier']['1.0']:.4f}  t(SA=desc)/t {sa['equal_energy_time_ratio']}" if sa else ""
    return (f"n={r['n']:5d} {r['couplings']:5s} {r['dtype']:7s} seed={r['seed']}  e_round {r['e_rounded']:.4f}  "
            f"e_clean {r['e_cleaned']:.4f}  e_final {r['e_final']:.4f}  wall {r['wall_s']:6.2f}s  "
            f"iter/matvec {r['iter_over_matvec']:.2f} (in run {r['iter_over_matvec_in_run']:.2f}){peak}{sa_txt}")


def summarise(runs: list[dict[str, Any]], first: float, cached: float) -> dict[str, Any]:
    groups: dict[str, Any] = {}
    for r in runs:
        key = f"{r['n']}-{r['couplings']}"
        g = groups.setdefault(key, {"n": r["n"], "couplings": r["couplings"], "e_final": [], "e_cleaned": [],
                                    "e_rounded": [], "wall_s": [], "iter_over_matvec": [],
                                    "iter_over_matvec_in_run": []})
        for k in ("e_final", "e_cleaned", "e_rounded", "wall_s", "iter_over_matvec", "iter_over_matvec_in_run"):
            g[k].append(r[k])
    table = {k: {"n": g["n"], "couplings": g["couplings"], "runs": len(g["e_final"]),
                 **{f"mean_{m}": float(np.mean(g[m])) for m in ("e_rounded", "e_cleaned", "e_final", "wall_s",
                                                                "iter_over_matvec", "iter_over_matvec_in_run")},
                 "min_e_final": float(np.min(g["e_final"]))} for k, g in groups.items()}
    gauss = [t for t in table.values() if t["couplings"] == "gauss"]
    fit = fit_finite_size([t["n"] for t in gauss], [t["mean_e_final"] for t in gauss])
    sa = [r["sa"] for r in runs if "sa" in r]
    return {"groups": table, "fit_e_final": fit, "pstar_reference": PSTAR_REFERENCE,
            "parisi_first_solve_s": first, "parisi_cached_load_s": cached,
            "sa_energy_ratio_equal_time": float(np.mean([s["energy_ratio_equal_time"] for s in sa])) if sa else None,
            "sa_equal_energy_time_ratios": [s["equal_energy_time_ratio"] for s in sa]}


def print_summary(s: dict[str, Any]) -> None:
    print("\n  group        runs  e_round  e_clean  e_final  min_final  wall_s  iter/matvec  (in run)")
    for k, g in s["groups"].items():
        print(f"  {k:12s} {g['runs']:4d}  {g['mean_e_rounded']:.4f}   {g['mean_e_cleaned']:.4f}   "
              f"{g['mean_e_final']:.4f}   {g['min_e_final']:.4f}   {g['mean_wall_s']:6.2f}  {g['mean_iter_over_matvec']:.2f}         {g['mean_iter_over_matvec_in_run']:.2f}")
    if s["fit_e_final"]:
        f = s["fit_e_final"]
        print(f"  fit e(n) = {f['e_inf']:.4f} − {f['A']:.3f}·n^(−2/3)   (P* = {s['pstar_reference']}, from memory)")
    print(f"  Parisi tables: first solve {s['parisi_first_solve_s']:.2f} s, cached load {s['parisi_cached_load_s']:.3f} s")
    if s["sa_energy_ratio_equal_time"] is not None:
        print(f"  iamp / SA energy at equal wall time (n=4000): {s['sa_energy_ratio_equal_time']:.4f}; "
              f"SA time for iamp's energy: {s['sa_equal_energy_time_ratios']} × iamp's")


if __name__ == "__main__":
    main()
