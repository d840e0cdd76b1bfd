"""File benchmark: reading big problem files, and a solve from the command line.

Run: python examples/benchmarks/files.py [--edges 3000000] [--nodes 1000000] [--dense 3000]
                                         [--time-limit 10] [--out bench-out/files.json]

Rows (targets from the issues; invented data, fixed seeds, written once under bench-out/files-data/):

- edge list and CSV of a random graph (3·10⁶ edges on 10⁶ nodes, two-decimal weights):
  ``read_problem`` time and the reading process's peak RSS (targets 10 s, 1.5 GB);
- ``spinward solve FILE --time-limit 10`` on that edge list, timed from the process start
  (target 25 s), with its peak RSS, and where the time went (read, then solve);
- a dense n×n Matrix Market array (n = 3000: about 137 MB): ``read_problem`` against
  ``scipy.io.mmread`` in the same process, median of 3 (target: within 1.5×);
- the same graph as a Matrix Market coordinate file, against ``scipy.io.mmread``;
- ``MaxCut.evaluate`` on the 3·10⁶ edges;
- Ctrl-C one second into ``spinward solve`` of the dense file: exit code and stderr lines.

Each read runs in a fresh process so that its peak RSS is its own.  Times on a shared
machine are noisy: compare the ratios, and see the load printed with the table.
"""

from __future__ import annotations

import argparse
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
from _common import table, write_json  # noqa: E402

DATA = Path("bench-out/files-data")
READ_CHILD = """
import json, resource, sys, time, warnings
warnings.simplefilter("ignore")
t0 = time.perf_counter()
import spinward
t1 = time.perf_counter()
form = spinward.read_problem(sys.argv[1])
t2 = time.perf_counter()
form.canonical()
t3 = time.perf_counter()
print(json.dumps({"import": t1 - t0, "read": t2 - t1, "canonical": t3 - t2, "n": len(form.labels),
                  "rss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024}))
"""
TIMED_CHILD = """
import json, resource, subprocess, sys, time
t0 = time.perf_counter()
done = subprocess.run(sys.argv[1:], capture_output=True, text=True)
print(json.dumps({"wall": time.perf_counter() - t0, "code": done.returncode, "stdout": done.stdout[-2000:],
                  "stderr": done.stderr[-2000:],
                  "rss_mb": resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024}))
"""


def make_graph_files(m: int, n: int) -> dict[str, Path]:
    """The random graph as an edge list, a CSV with a header and a Matrix Market coordinate file."""
    paths = {"edgelist": DATA / f"graph-{m}-{n}.txt", "csv": DATA / f"graph-{m}-{n}.csv",
             "mtx": DATA / f"graph-{m}-{n}.mtx"}
    if all(p.exists() for p in paths.values()):
        return paths
    DATA.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(0)
    u, v = rng.integers(0, n, m), rng.integers(0, n, m)
    w = np.round(rng.uniform(-5, 5, m), 2)
    rows = np.column_stack([u, v, w]).astype(object)
    np.savetxt(paths["edgelist"], rows, fmt=["%d", "%d", "%.2f"], header="random graph: u v weight")
    np.savetxt(paths["csv"], rows, fmt=["%d", "%d", "%.2f"], delimiter=",", header="source,target,weight", comments="")
    lo, hi = np.minimum(u, v) + 1, np.maximum(u, v) + 1
    keep = lo != hi
    with open(paths["mtx"], "w", encoding="ascii") as fh:
        fh.write(f"%%MatrixMarket matrix coordinate real symmetric\n{n} {n} {int(keep.sum())}\n")
        np.savetxt(fh, np.column_stack([hi[keep], lo[keep], -w[keep] / 2]).astype(object), fmt=["%d", "%d", "%.3f"])
    return paths


def make_dense_file(n: int) -> Path:
    path = DATA / f"dense-{n}.mtx"
    if not path.exists():
        DATA.mkdir(parents=True, exist_ok=True)
        Q = np.random.default_rng(1).normal(size=(n, n))
        with open(path, "w", encoding="ascii") as fh:
            fh.write(f"%%MatrixMarket matrix array real general\n% invented test data\n{n} {n}\n")
            np.savetxt(fh, Q.T.reshape(-1), fmt="%.12g")
    return path


def read_in_child(path: Path) -> dict[str, Any]:
    out = subprocess.run([sys.executable, "-c", READ_CHILD, str(path)], capture_output=True, text=True, check=True)
    return json.loads(out.stdout.splitlines()[-1])


def cli_solve(path: Path, limit: float) -> dict[str, Any]:
    argv = [sys.executable, "-m", "spinward", "solve", str(path), "--time-limit", str(limit), "--seed", "1"]
    out = subprocess.run([sys.executable, "-c", TIMED_CHILD, *argv], capture_output=True, text=True, check=True)
    return json.loads(out.stdout.splitlines()[-1])


def against_scipy(path: Path, reps: int = 3) -> dict[str, float]:
    """Median seconds of read_problem and of scipy.io.mmread on the same file, alternating."""
    import scipy.io

    import spinward

    ours, theirs = [], []
    for _ in range(reps):
        t0 = time.perf_counter()
        scipy.io.mmread(path, spmatrix=False)
        theirs.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        spinward.read_problem(path)
        ours.append(time.perf_counter() - t0)
    return {"ours": float(np.median(ours)), "scipy": float(np.median(theirs)),
            "ratio": float(np.median(ours) / np.median(theirs))}


def evaluate_time(path: Path) -> float:
    import spinward

    form = spinward.read_problem(path)
    sides = np.random.default_rng(2).integers(0, 2, len(form.labels))
    t0 = time.perf_counter()
    form.evaluate(sides)
    return time.perf_counter() - t0


def ctrl_c(path: Path, after: float = 1.0) -> dict[str, Any]:
    proc = subprocess.Popen([sys.executable, "-m", "spinward", "solve", str(path), "--time-limit", "60"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    time.sleep(after)
    t0 = time.perf_counter()
    proc.send_signal(signal.SIGINT)
    out, err = proc.communicate(timeout=120)
    return {"code": proc.returncode, "exit_s": time.perf_counter() - t0, "stderr_lines": err.count("\n"),
            "stderr": err.strip()[-300:], "status": next((ln for ln in out.splitlines() if "status" in ln), "")}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--edges", type=int, default=3_000_000)
    parser.add_argument("--nodes", type=int, default=1_000_000)
    parser.add_argument("--dense", type=int, default=3000)
    parser.add_argument("--time-limit", type=float, default=10.0)
    parser.add_argument("--out", default="bench-out/files.json")
    args = parser.parse_args()
    graph = make_graph_files(args.edges, args.nodes)
    dense = make_dense_file(args.dense)
    rows: list[dict[str, Any]] = []
    for kind in ("edgelist", "csv"):
        r = read_in_child(graph[kind])
        rows.append({"row": f"read {kind} ({args.edges} edges, {r['n']} nodes)", "seconds": r["read"],
                     "target": "≤ 10 s", "rss_mb": r["rss_mb"], "note": f"canonical form {r['canonical']:.2f} s, "
                     f"import {r['import']:.2f} s; peak RSS target 1536 MB", "met": r["read"] <= 10 and r["rss_mb"] <= 1536})
    solve = cli_solve(graph["edgelist"], args.time_limit)
    rows.append({"row": f"spinward solve edge list --time-limit {args.time_limit:g}", "seconds": solve["wall"],
                 "target": "≤ 25 s", "rss_mb": solve["rss_mb"], "note": f"exit {solve['code']}",
                 "met": solve["wall"] <= 25 and solve["code"] == 0})
    for name, path in (("dense Matrix Market array", dense), ("Matrix Market coordinate graph", graph["mtx"])):
        cmp = against_scipy(path)
        mb = os.path.getsize(path) / 1e6
        rows.append({"row": f"read {name} ({mb:.0f} MB)", "seconds": cmp["ours"], "target": "≤ 1.5 × scipy",
                     "note": f"scipy.io.mmread {cmp['scipy']:.2f} s, ratio {cmp['ratio']:.2f}", "met": cmp["ratio"] <= 1.5})
    seconds = evaluate_time(graph["edgelist"])
    rows.append({"row": f"MaxCut.evaluate, {args.edges} edges", "seconds": seconds, "target": "", "note": "math.fsum"})
    stop = ctrl_c(dense)
    rows.append({"row": "Ctrl-C 1 s into 'spinward solve' of the dense file", "seconds": stop["exit_s"],
                 "target": "one line, exit 130 or a saved state",
                 "note": f"exit {stop['code']}, {stop['stderr_lines']} stderr line(s) {stop['status']!r}",
                 "met": stop["code"] in (0, 130) and stop["stderr_lines"] <= 1})
    print(table(rows, ["row", "seconds", "target", "rss_mb", "met", "note"]))
    print(f"\nload average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores; solve output:\n{solve['stdout']}")
    write_json(args.out, {"rows": rows, "solve": solve, "ctrl_c": stop, "load": os.getloadavg()})


if __name__ == "__main__":
    main()
