"""Benchmark: Ctrl-C during ``spinward solve`` for every solver: latency, status, JSON written.

Run: python examples/benchmarks/interrupts.py [--after 2.0] [--out bench-out/interrupts.json]
Each solver runs through the CLI on a problem it accepts with a 60 s limit; SIGINT
arrives after ``--after`` seconds; we record how long the process took to exit,
its exit code, and the status stored in the result JSON.
"""

from __future__ import annotations

import argparse
import json
import signal
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import networkx as nx
import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
from _common import table, write_json  # noqa: E402

import spinward  # noqa: E402


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--after", type=float, default=2.0)
    parser.add_argument("--out", default="bench-out/interrupts.json")
    args = parser.parse_args()
    tmp = Path(tempfile.mkdtemp())
    rng = np.random.default_rng(0)
    g = nx.random_regular_graph(3, 20000, seed=1)
    nx.set_edge_attributes(g, {e: float(w) for e, w in zip(g.edges, rng.normal(size=g.number_of_edges()))}, "weight")
    spinward.write_problem(spinward.MaxCut(g), tmp / "sparse.txt")
    np.save(tmp / "dense.npy", np.triu(rng.normal(size=(3000, 3000)), 1))
    rows = []
    for name in spinward.solvers():
        for label, path, form in (("sparse-20000", tmp / "sparse.txt", None), ("sk-3000", tmp / "dense.npy", "ising")):
            cmd = [sys.executable, "-m", "spinward", "solve", str(path), "--method", name, "--time-limit", "60",
                   "-o", str(tmp / "r.json")] + (["--form", form] if form else [])
            (tmp / "r.json").unlink(missing_ok=True)
            proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
            time.sleep(args.after)
            sent = time.perf_counter()
            proc.send_signal(signal.SIGINT)
            out, err = proc.communicate(timeout=120)
            latency = time.perf_counter() - sent
            status = json.loads((tmp / "r.json").read_text())["status"] if (tmp / "r.json").exists() else None
            rows.append({"solver": name, "instance": label, "exit": proc.returncode, "latency_s": latency,
                         "status": status, "note": (err.strip().splitlines() or [""])[-1][:60]})
    print(table(rows, ["solver", "instance", "exit", "latency_s", "status", "note"]))
    write_json(args.out, {"benchmark": "interrupts", "after_s": args.after, "rows": rows})


if __name__ == "__main__":
    main()
