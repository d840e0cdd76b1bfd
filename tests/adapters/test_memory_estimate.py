"""The dense memory estimate that the resource check uses is honest: a measured solve peaks within 1.2× of it.

Measured in a fresh process: the extra peak RSS (VmHWM after a reset through
/proc/self/clear_refs, minus the RSS before the call, so the caller's own matrix is not
counted) of ``spinward.solve(spinward.QUBO(Q))`` with the default method, a dense float64 Q.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from spinward.adapters.validate import dense_solve_estimate

PROBE = textwrap.dedent("""
    import json, sys, warnings
    import numpy as np
    import spinward

    def kb(field):
        with open("/proc/self/status") as fh:
            return next(int(line.split()[1]) for line in fh if line.startswith(field + ":"))

    n = int(sys.argv[1])
    Q = np.random.default_rng(0).standard_normal((n, n))
    warnings.simplefilter("ignore")
    spinward.solve(spinward.QUBO(Q[:200, :200].copy()), seed=0)  # load kernels and caches first
    try:
        with open("/proc/self/clear_refs", "w") as fh:
            fh.write("5")
    except OSError:
        print(json.dumps(None)); sys.exit()
    before = kb("VmRSS")
    spinward.solve(spinward.QUBO(Q), seed=0)
    print(json.dumps((kb("VmHWM") - before) * 1024))
""")


def extra_peak_bytes(n: int, tmp_path: Path) -> int:
    script = tmp_path / "probe.py"
    script.write_text(PROBE, encoding="utf-8")
    env = {**os.environ, "SPINWARD_CACHE_DIR": str(tmp_path / "cache"), "OMP_NUM_THREADS": "1"}
    out = subprocess.run([sys.executable, str(script), str(n)], capture_output=True, text=True, timeout=900, env=env)
    assert out.returncode == 0, out.stderr[-2000:]
    peak = json.loads(out.stdout.strip().splitlines()[-1])
    if peak is None:
        pytest.skip("this kernel does not let a process reset its peak RSS")
    return int(peak)


def check(n: int, tmp_path: Path) -> None:
    peak, estimate = extra_peak_bytes(n, tmp_path), dense_solve_estimate(n)
    assert estimate / 1.2 <= peak <= 1.2 * estimate, f"peak {peak / 2**20:.0f} MiB, estimate {estimate / 2**20:.0f} MiB"


def test_estimate_holds_at_n4000(tmp_path):
    check(4000, tmp_path)


@pytest.mark.slow
def test_estimate_holds_at_n8000(tmp_path):
    check(8000, tmp_path)
