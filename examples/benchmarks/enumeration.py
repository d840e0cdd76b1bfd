"""Benchmark: exact Gray-code enumeration at n = 20, 24, 26 (target: n = 26 in ≤ 10 s on 2 cores).

Run: python examples/benchmarks/enumeration.py [--out bench-out/enumeration.json]
Instances: Ising with Gaussian J (dense), with and without Gaussian fields (fields
remove the global flip symmetry, doubling the states).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
from _common import table, timed, write_json  # noqa: E402

import spinward  # noqa: E402


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", default="bench-out/enumeration.json")
    args = parser.parse_args()
    spinward.solve(spinward.Ising(np.zeros((3, 3))), method="enumerate")  # compile once, outside the timings
    rows = []
    for n in (20, 24, 26):
        for fields in (False, True):
            rng = np.random.default_rng(n)
            J = np.triu(rng.normal(size=(n, n)), 1)
            h = rng.normal(size=n) if fields else None
            r, seconds = timed(lambda: spinward.solve(spinward.Ising(J, h), method="enumerate", bound=False))
            states = r.info["states_total"]
            rows.append({"n": n, "fields": fields, "states": states, "seconds": seconds,
                         "Mstates_per_s": states / seconds / 1e6, "exact": r.exact, "target_s": 10.0 if n == 26 else ""})
    print(table(rows, ["n", "fields", "states", "seconds", "Mstates_per_s", "exact", "target_s"]))
    write_json(args.out, {"benchmark": "enumeration", "rows": rows})


if __name__ == "__main__":
    main()
