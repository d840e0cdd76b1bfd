"""Report figures (matplotlib, the ``[plot]`` extra), drawn without pyplot's global state.

- :func:`trace_figure`: objective against wall time for every run on one
  instance, one colour per solver (caller's units and sense).
- :func:`sk_figure`: Sherrington–Kirkpatrick per-spin energy e = −E/n^{3/2}
  (E the Ising energy, minimised; e is the maximised Σ_{i<j} J_ij σ_i σ_j / n^{3/2})
  of each solver's best state per instance, mean ± standard error over
  instances, against n, with the Parisi value P* = 0.7631667 and the
  finite-size line P* − A·n^{−2/3}, A = 0.7.
"""

from __future__ import annotations

import io
import math
from collections import defaultdict
from collections.abc import Sequence
from typing import Any

import numpy as np

from .report import family_label

#: Parisi ground-state energy per spin of the SK model (Crisanti & Rizzo 2002; from memory)
PARISI = 0.7631667
#: finite-size amplitude of e_n ≈ P* − A n^{-2/3} (Boettcher 2005; "of order 0.7", from memory)
FINITE_SIZE_A = 0.7


def _figure(width: float = 6.0, height: float = 3.6) -> Any:
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width, height), dpi=100, layout="constrained")
    return fig, fig.subplots()


def png_bytes(fig: Any) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=80)
    return buf.getvalue()


def _colours(solvers: Sequence[str]) -> dict[str, Any]:
    from matplotlib import colormaps

    cmap = colormaps["tab10"]
    return {s: cmap(i % 10) for i, s in enumerate(sorted(set(solvers)))}


def trace_figure(rows: Sequence[dict[str, Any]], title: str, reference: float | None = None) -> Any:
    """Step curves of objective against time, one per run on one instance."""
    fig, ax = _figure()
    colours = _colours([r["solver"] for r in rows])
    seen: set[str] = set()
    for r in rows:
        trace = np.array(r.get("trace") or [[r["wall_time"], r["objective"]]], dtype=float)
        t = np.append(np.maximum(trace[:, 0], 1e-4), max(float(r["wall_time"]), trace[-1, 0], 1e-4))
        y = np.append(trace[:, 1], trace[-1, 1])
        label = None if r["solver"] in seen else r["solver"]
        seen.add(r["solver"])
        ax.step(t, y, where="post", color=colours[r["solver"]], alpha=0.8, label=label)
    if reference is not None:
        ax.axhline(reference, color="grey", linestyle=":", label="best known")
    ax.set_xscale("log")
    ax.set_xlabel("wall time (s)")
    ax.set_ylabel(f"objective ({rows[0]['sense']}imise)")
    ax.set_title(title, fontsize=10)
    ax.legend(fontsize=8)
    return fig


def sk_energies(rows: Sequence[dict[str, Any]]) -> dict[str, dict[int, list[float]]]:
    """series → n → per-instance best per-spin energy e = −E/n^{3/2} (SK rows only).

    A series is a solver, with the SK parameters added when the rows hold more than one SK variant.
    """
    sk_rows = [r for r in rows if r["family"] == "sk" and r.get("objective") is not None]
    several = len({family_label(r) for r in sk_rows}) > 1
    best: dict[tuple[str, int, str], float] = {}
    for r in sk_rows:
        series = f"{r['solver']}, {family_label(r)}" if several else r["solver"]
        key = (series, int(r["n"]), r["instance"])
        best[key] = min(best.get(key, math.inf), float(r["objective"]))
    out: dict[str, dict[int, list[float]]] = defaultdict(lambda: defaultdict(list))
    for (series, n, _), energy in best.items():
        out[series][n].append(-energy / n**1.5)
    return out


def sk_figure(rows: Sequence[dict[str, Any]]) -> Any | None:
    """Per-spin energy against n per solver, with the Parisi value and the n^{−2/3} line; None without SK rows."""
    data = sk_energies(rows)
    if not data:
        return None
    fig, ax = _figure()
    colours = _colours(list(data))
    for k, (solver, by_n) in enumerate(sorted(data.items())):
        ns = np.array(sorted(by_n))
        mean = np.array([np.mean(by_n[n]) for n in ns])
        err = np.array([np.std(by_n[n], ddof=1) / math.sqrt(len(by_n[n])) if len(by_n[n]) > 1 else 0 for n in ns])
        # hollow markers shrinking per series, so series that agree (exact vs heuristic) stay visible
        ax.errorbar(ns, mean, yerr=err, marker="osD^v"[k % 5], markersize=max(10 - 2 * k, 4), fillstyle="none",
                    capsize=3, color=colours[solver], label=solver)
    all_n = sorted({n for by_n in data.values() for n in by_n})
    grid = np.geomspace(min(all_n), max(all_n), 50)
    ax.axhline(PARISI, color="black", linestyle="--", label=f"Parisi P* = {PARISI}")
    ax.plot(grid, PARISI - FINITE_SIZE_A * grid ** (-2 / 3), color="grey", linestyle=":",
            label=f"P* − {FINITE_SIZE_A}·n^(−2/3)")
    ax.set_xscale("log")
    ax.set_xticks(all_n, [str(n) for n in all_n])
    ax.minorticks_off()
    ax.set_xlabel("n (spins)")
    ax.set_ylabel("per-spin energy  −E / n^(3/2)")
    ax.set_title("SK: best state per instance (mean ± s.e. over instances)", fontsize=10)
    ax.legend(fontsize=8)
    return fig
