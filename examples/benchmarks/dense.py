"""Benchmark of the dense path: `iamp` against a plain IAMP and against annealing at equal time, with memory.

Instances (invented, fixed seeds): SK couplings J_ij i.i.d. N(0,1) for i < j, K = (J + Jᵀ)/√n in
float32, so that C(σ) = ½σᵀKσ = n^{-1/2} Σ_{i<j} J_ij σ_i σ_j and e = C/n (the SK convention of
docs/references.md, maximised).  Per size and seed, side by side in one process:

- "IAMP + greedy": a plain 200-step IAMP (uniform steps, no projection) and a steepest-ascent
  clean-up, both written in this script with numpy; only the Parisi tables (∂_xΦ, ∂_xxΦ, γ of
  the 50-level solution) come from the project;
- `iamp`: the solver with its defaults, called at the canonical level (no front door), its wall
  time, its stages (IAMP state, clean-up gain, polish gain) and the extra peak RSS of the call
  (VmHWM after a reset, minus the RSS before; the instance itself is not counted);
- anneal: the project's `anneal` given `iamp`'s wall time as its time limit;
- the ground-state estimate P* − 0.7·n^(−2/3) (P* = 0.7631667, Crisanti & Rizzo 2002, and the
  amplitude 0.7, Boettcher 2005: both from memory).

The cluster rows (--cluster-n, default 4000; needs dask) solve one instance in memory and as a dask
array in two row blocks on a LocalCluster of two single-thread worker processes, for two settings of
the polish (one sweep per visit of a block, 1000 sweeps; five sweeps per visit, 6000 sweeps), in
float64 on both sides.

The out-of-core row writes a float32 .npy of size --out-of-core (default 24000, 2.3 GB) and, in a
fresh process each, solves `spinward.Ising(np.load(path, mmap_mode="r"))` with method="iamp" and
the same instance loaded in memory, through the public API (the whole path: adapters, front door,
solver), sampling RssAnon (/proc/self/status) every 20 ms.  BLAS runs on one thread, as in the
issue's reference figures.  Timings on a shared machine: the load average is printed.

Usage: python examples/benchmarks/dense.py [--sizes 2000 4000 8000 16000] [--seeds 5]
       [--out-of-core 24000 | --out-of-core 0] [--ooc-modes memmap memory] [--ooc-dir DIR]
       [--cluster-n 4000 | --cluster-n 0] [--out bench-out/dense.json]
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse
import json
import math
import subprocess
import sys
import tempfile
import threading
import time
import warnings
from pathlib import Path
from typing import Any

import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
from _common import table, write_json  # noqa: E402

from spinward.core import CanonicalProblem, SolveContext  # noqa: E402
from spinward.plugins.iamp.parisi import PSTAR_REFERENCE, load_tables  # noqa: E402
from spinward.plugins.iamp.prediction import FINITE_SIZE_A  # noqa: E402

ROWS = 1024  # rows per block when generating or streaming an instance


# ---------------------------------------------------------------- instances and memory readings

def sk_couplings(n: int, seed: int, out: np.ndarray | None = None) -> np.ndarray:
    """K = (J + Jᵀ)/√n in float32, J strictly upper triangular N(0,1), filled in blocks (no n² float64 temporary)."""
    rng = np.random.default_rng(seed)
    K = np.empty((n, n), dtype=np.float32) if out is None else out
    scale = np.float32(1.0 / math.sqrt(n))
    for r in range(0, n, ROWS):
        K[r:r + ROWS] = rng.standard_normal((min(ROWS, n - r), n), dtype=np.float32)
    for r in range(0, n, ROWS):  # keep the upper triangle, mirror it
        for c in range(r, n, ROWS):
            if c == r:
                upper = np.triu(K[r:r + ROWS, c:c + ROWS], 1)
                K[r:r + ROWS, c:c + ROWS] = upper + upper.T
            else:
                K[c:c + ROWS, r:r + ROWS] = K[r:r + ROWS, c:c + ROWS].T
        K[r:r + ROWS] *= scale
    return K


def status_kb(*fields: str) -> dict[str, int]:
    """Fields of /proc/self/status in kB (VmRSS, VmHWM, RssAnon, ...)."""
    out = {}
    with open("/proc/self/status", encoding="ascii") as fh:
        for line in fh:
            key, _, rest = line.partition(":")
            if key in fields:
                out[key] = int(rest.split()[0])
    return out


def reset_peak() -> bool:
    """Reset VmHWM to the current RSS (Linux: write 5 to /proc/self/clear_refs)."""
    try:
        with open("/proc/self/clear_refs", "w", encoding="ascii") as fh:
            fh.write("5")
        return True
    except OSError:
        return False


class AnonSampler:
    """Peak RssAnon of this process, sampled every ``period`` seconds in a thread."""

    def __init__(self, period: float = 0.02) -> None:
        self.period, self.peak_kb, self._stop = period, 0, threading.Event()
        self._thread = threading.Thread(target=self._run, daemon=True)

    def _run(self) -> None:
        while not self._stop.is_set():
            self.peak_kb = max(self.peak_kb, status_kb("RssAnon").get("RssAnon", 0))
            self._stop.wait(self.period)

    def __enter__(self) -> "AnonSampler":
        self._thread.start()
        return self

    def __exit__(self, *exc: Any) -> None:
        self._stop.set()
        self._thread.join()
        self.peak_kb = max(self.peak_kb, status_kb("RssAnon").get("RssAnon", 0))


# ---------------------------------------------------------------- the plain baseline, written here

def block_matvec(K: np.ndarray, x: np.ndarray) -> np.ndarray:
    """K @ x accumulated in float64, K read in row blocks."""
    x64 = np.asarray(x, dtype=np.float64)
    return np.concatenate([K[r:r + ROWS].astype(np.float64) @ x64 for r in range(0, K.shape[0], ROWS)])


def plain_iamp(K: np.ndarray, seed: int, steps: int = 200) -> np.ndarray:
    """Montanari's IAMP for SK (A = K here, since s√n = 1): uniform steps, sign rounding, no projection."""
    tab, _ = load_tables(50, steps)
    n = K.shape[0]
    dts = np.diff(np.append(tab.t, 1.0))
    rng = np.random.default_rng(seed)
    f = rng.choice([-1.0, 1.0], size=n) * math.sqrt(dts[0])
    f_prev, onsager = np.zeros(n), 0.0
    x, m = np.zeros(n), np.zeros(n)
    for step in range(steps):
        z = (K @ f.astype(np.float32)).astype(np.float64) - onsager * f_prev
        u = np.interp(x, tab.x, tab.d2[step])
        slope = np.interp(x, tab.x, tab.d1[step])
        w = u * z
        m += w
        x += tab.gamma[step] * slope * dts[step] + z
        if step + 1 < steps:
            c = math.sqrt(dts[step + 1] * n / max(float(w @ w), 1e-300))
            f_prev, f, onsager = f, c * w, c * float(u.mean())
    return np.where(m >= 0, 1.0, -1.0)


def steepest_ascent(K: np.ndarray, sigma: np.ndarray) -> tuple[np.ndarray, float]:
    """Flip the spin of largest gain −2σᵢhᵢ (h = Kσ) until none gains; returns (σ, ½σᵀKσ)."""
    s = sigma.astype(np.float64).copy()
    h = block_matvec(K, s)
    tol = 1e-9 * float(np.abs(h).max() + 1.0)
    while True:
        gains = -2.0 * s * h
        i = int(np.argmax(gains))
        if gains[i] <= tol:
            break
        s[i] = -s[i]
        h += 2.0 * s[i] * K[i].astype(np.float64)
    return s, 0.5 * float(s @ block_matvec(K, s))


# ---------------------------------------------------------------- one instance

def run_instance(n: int, seed: int, with_anneal: bool) -> dict[str, Any]:
    from spinward.plugins.annealing import SPEC as ANNEAL
    from spinward.plugins.iamp import SPEC as IAMP

    K = sk_couplings(n, 1000 * n + seed)
    problem = CanonicalProblem(K, np.zeros(n))
    t0 = time.perf_counter()
    _, plain_value = steepest_ascent(K, plain_iamp(K, seed))
    plain_s = time.perf_counter() - t0

    before = status_kb("VmRSS")["VmRSS"]
    peak_ok = reset_peak()
    ctx = SolveContext(rng=np.random.default_rng(seed))
    t0 = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        sol = IAMP.run(problem, ctx)
    iamp_s = time.perf_counter() - t0
    peak_mb = (status_kb("VmHWM")["VmHWM"] - before) / 1024 if peak_ok else None
    stages = sol.info["stages"]
    rec = {"n": n, "seed": seed, "plain_e": plain_value / n, "plain_s": plain_s,
           "iamp_e": problem.value(sol.sigma) / n, "iamp_s": iamp_s, "iamp_extra_peak_mb": peak_mb,
           "iamp_state_e": stages["iamp"]["energy_per_spin"], "clean_up_gain": stages["clean_up"]["gain_per_spin"],
           "polish_gain": stages.get("polish", {}).get("gain_per_spin", 0.0), "stages": stages}
    if with_anneal:
        actx = SolveContext(rng=np.random.default_rng(seed), time_limit=iamp_s)
        t0 = time.perf_counter()
        asol = ANNEAL.run(problem, actx)
        rec.update(anneal_e=problem.value(asol.sigma) / n, anneal_s=time.perf_counter() - t0)
    return rec


def ground_state_estimate(n: int) -> float:
    return PSTAR_REFERENCE - FINITE_SIZE_A * n ** (-2.0 / 3.0)


def summarise(records: list[dict[str, Any]]) -> list[dict[str, Any]]:
    rows = []
    for n in sorted({r["n"] for r in records}):
        rs = [r for r in records if r["n"] == n]
        row: dict[str, Any] = {"n": n, "runs": len(rs)}
        for key in ("plain_e", "plain_s", "iamp_e", "iamp_s", "iamp_state_e", "clean_up_gain", "polish_gain",
                    "anneal_e", "anneal_s", "iamp_extra_peak_mb"):
            vals = [r[key] for r in rs if r.get(key) is not None]
            row[key] = float(np.mean(vals)) if vals else None
        if row["anneal_e"]:
            row["iamp_over_anneal"] = float(np.mean([r["iamp_e"] / r["anneal_e"] for r in rs]))
        row["ground_state_est"] = ground_state_estimate(n)
        rows.append(row)
    return rows


# ---------------------------------------------------------------- the out-of-core row

def child_solve(path: str, mode: str, seed: int) -> None:
    """Run in a fresh process: solve the .npy at ``path`` and print one JSON line.

    ``mode``: "memmap" (np.load(path, mmap_mode="r")) or "memory" (np.load(path)), with bound=False
    as the README advises for this size; "+bound" appended keeps the default bounds.
    """
    import spinward

    base = status_kb("RssAnon")["RssAnon"]
    with AnonSampler() as sampler:
        t0 = time.perf_counter()
        J = np.load(path, mmap_mode="r") if mode.startswith("memmap") else np.load(path)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            r = spinward.solve(spinward.Ising(J), method="iamp", seed=seed, bound=mode.endswith("+bound"))
        wall = time.perf_counter() - t0
    n = J.shape[0]
    stages = r.info.get("stages", {})
    print(json.dumps({"mode": mode, "n": n, "e": -r.objective / n, "wall_s": wall, "solve_wall_s": r.wall_time,
                      "iamp_s": stages.get("iamp", {}).get("seconds"), "polish_s": stages.get("polish", {}).get("seconds"),
                      "polish": stages.get("polish", {}).get("precision"),
                      "peak_rss_anon_mb": sampler.peak_kb / 1024, "rss_anon_at_start_mb": base / 1024,
                      "peak_rss_mb": status_kb("VmHWM")["VmHWM"] / 1024, "status": r.status}))


def out_of_core(n: int, seed: int, folder: str | None, modes: tuple[str, ...]) -> list[dict[str, Any]]:
    """Write the instance as float32 .npy, then solve it in a fresh process per mode."""
    with tempfile.TemporaryDirectory(dir=folder, prefix="spinward-ooc-") as tmp:
        path = os.path.join(tmp, f"sk{n}.npy")
        K = np.lib.format.open_memmap(path, mode="w+", dtype=np.float32, shape=(n, n))
        sk_couplings(n, 1000 * n + seed, out=K)
        K.flush()
        del K
        rows = []
        for mode in modes:
            proc = subprocess.run([sys.executable, __file__, "--child", path, mode, str(seed)],
                                  capture_output=True, text=True)
            if proc.returncode != 0:
                rows.append({"mode": mode, "n": n, "error": proc.stderr.strip().splitlines()[-1:]})
            else:
                rows.append(json.loads(proc.stdout.strip().splitlines()[-1]))
            print(table([rows[-1]], list(rows[-1])), flush=True)
        return rows


def on_cluster(n: int, seed: int, variants: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """The dask path against the in-memory path on one instance: a LocalCluster of two single-thread workers.

    Each variant (iamp options) runs in memory and on the cluster (J in two row blocks); the rows
    give e after each stage and the wall times.
    """
    try:
        import dask.array as da
        from distributed import Client, LocalCluster
    except ImportError:
        print("dask is not installed (pip install spinward[dist]): cluster rows skipped")
        return []
    import spinward

    J = sk_couplings(n, 1000 * n + seed).astype(np.float64)
    rows = []
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster, \
            Client(cluster), warnings.catch_warnings():
        warnings.simplefilter("ignore")
        Jd = da.from_array(J, chunks=(n // 2, n)).persist()
        for options in variants:
            for where, form in (("memory", spinward.Ising(J)), ("cluster", spinward.Ising(Jd))):
                t0 = time.perf_counter()
                r = spinward.solve(form, method="iamp", seed=seed, bound=False, **options)
                info = r.info
                rows.append({"where": where, "options": json.dumps(options), "n": n,
                             "iamp_state_e": info["energy_per_spin_rounded"], "cleaned_e": info["energy_per_spin_cleaned"],
                             "final_e": info["energy_per_spin"], "wall_s": time.perf_counter() - t0})
                print(table([rows[-1]], list(rows[-1])), flush=True)
    return rows


def main(argv: list[str] | None = None) -> dict[str, Any]:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="*", default=[2000, 4000, 8000, 16000])
    ap.add_argument("--seeds", type=int, default=5)
    ap.add_argument("--no-anneal", action="store_true")
    ap.add_argument("--out-of-core", type=int, default=24000, help="n of the memmap row (0: skip)")
    ap.add_argument("--ooc-modes", nargs="+", default=["memmap", "memory", "memmap+bound"],
                    help="memmap / memory (bound=False), memmap+bound (the default bounds too)")
    ap.add_argument("--ooc-dir", default=None, help="folder for the temporary .npy (default: the system's)")
    ap.add_argument("--cluster-n", type=int, default=4000, help="n of the dask LocalCluster rows (0: skip)")
    ap.add_argument("--out", default="bench-out/dense.json")
    ap.add_argument("--child", nargs=3, metavar=("PATH", "MODE", "SEED"), help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.child:
        child_solve(args.child[0], args.child[1], int(args.child[2]))
        return {}
    print(f"load average at start: {os.getloadavg()}", flush=True)
    if args.sizes:
        run_instance(300, 0, not args.no_anneal)  # warm-up: numba kernels and the Parisi tables
    records = []
    for n in args.sizes:
        for seed in range(args.seeds):
            rec = run_instance(n, seed, not args.no_anneal)
            records.append(rec)
            print(f"n={n} seed={seed} plain {rec['plain_e']:.4f} ({rec['plain_s']:.1f}s)  iamp {rec['iamp_e']:.4f} "
                  f"({rec['iamp_s']:.1f}s; state {rec['iamp_state_e']:.4f} +clean {rec['clean_up_gain']:.4f} "
                  f"+polish {rec['polish_gain']:.4f})  anneal {rec.get('anneal_e', float('nan')):.4f}  "
                  f"load {os.getloadavg()[0]:.1f}", flush=True)
    rows = summarise(records)
    if rows:
        print("\n" + table(rows, ["n", "runs", "plain_e", "plain_s", "iamp_e", "iamp_s", "anneal_e", "iamp_over_anneal",
                                 "ground_state_est", "iamp_state_e", "clean_up_gain", "polish_gain",
                                 "iamp_extra_peak_mb"]))
    ooc = out_of_core(args.out_of_core, 0, args.ooc_dir, tuple(args.ooc_modes)) if args.out_of_core else []
    variants = [{"precision": "float64", "polish_sweeps": 1000},
                {"precision": "float64", "polish_sweeps": 6000, "block_visit_sweeps": 5}]
    cluster = on_cluster(args.cluster_n, 0, variants) if args.cluster_n else []
    print(f"\nload average at end: {os.getloadavg()}")
    payload = {"benchmark": "dense", "rows": rows, "records": records, "out_of_core": ooc, "cluster": cluster,
               "load_average_end": os.getloadavg()}
    write_json(args.out, payload)
    return payload


if __name__ == "__main__":
    main()
