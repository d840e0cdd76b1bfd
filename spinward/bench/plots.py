"""Report figures (matplotlib, the ``[plot]`` extra), drawn without pyplot's global state.

- :func:`residual_figure`: relative residual against wall time, one panel per instance,
  one colour per series: the median over runs (seeds, repetitions) as a line and the
  quartiles as a band, both on log scales.  A run's curve follows the improvements it
  offered (its trace); before its first one it has no state (not drawn).
- :func:`ttt_figure`: time to target per instance with its bootstrap interval, series
  side by side; a triangle at the top marks "no run reached the target".
- :func:`sk_figure`: Sherrington–Kirkpatrick per-spin energy e = −E/n^{3/2}
  (E the Ising energy, minimised; e is the maximised Σ_{i<j} J_ij σ_i σ_j / n^{3/2})
  of each series' median run per instance, mean ± standard error over instances,
  against n, with the Parisi value P* = 0.7631667 and the finite-size line
  P* − A·n^{−2/3}, A = 0.7; series are offset sideways and marked differently, and a
  second panel shows each series' shortfall from the best known energy per spin.
"""

from __future__ import annotations

import io
import math
from collections import defaultdict
from collections.abc import Sequence
from typing import Any

import numpy as np

from .report import RTOL, Line, family_label, residual_of, series

#: Parisi ground-state energy per spin of the SK model (Crisanti & Rizzo 2002; from memory)
PARISI = 0.7631667
#: finite-size amplitude of e_n ≈ P* − A n^{-2/3} (Boettcher 2005; "of order 0.7", from memory)
FINITE_SIZE_A = 0.7
MARKERS = "osD^vP*Xh<>"
#: time-grid points per residual curve
GRID = 120


def _figure(width: float = 6.0, height: float = 3.6, cols: int = 1, rows: int = 1) -> Any:
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width, height), dpi=100, layout="constrained")
    return fig, fig.subplots(rows, cols, squeeze=False)


def png_bytes(fig: Any) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=80)
    return buf.getvalue()


def colours(names: Sequence[str]) -> dict[str, Any]:
    """One tab10 colour and marker per series name, by sorted name (the same in every figure)."""
    from matplotlib import colormaps

    cmap = colormaps["tab10"]
    return {s: cmap(i % 10) for i, s in enumerate(sorted(set(names)))}


def marker(names: Sequence[str], name: str) -> str:
    return MARKERS[sorted(set(names)).index(name) % len(MARKERS)]


# ---------------------------------------------------------------- residual against time

def best_so_far(row: dict[str, Any], grid: np.ndarray) -> np.ndarray:
    """The run's incumbent objective at each time of ``grid`` (nan before its first offered state)."""
    trace = np.array(row.get("trace") or [[row["wall_time"], row["objective"]]], dtype=float).reshape(-1, 2)
    times, values = trace[:, 0], trace[:, 1]
    running = np.minimum.accumulate(values) if row["sense"] == "min" else np.maximum.accumulate(values)
    idx = np.searchsorted(times, grid, side="right") - 1
    out = np.where(idx >= 0, running[np.clip(idx, 0, None)], np.nan)
    return out


def residual_curves(rows: Sequence[dict[str, Any]], reference: float, grid: np.ndarray) -> np.ndarray:
    """Relative residual of every run at every grid time: shape (runs, len(grid)); nan where no state yet.

    A residual within the report's rounding tolerance (``RTOL``·max(1, |reference|)) counts as 0:
    the same state's objective summed in another order differs in the last bits.
    """
    scale = abs(reference) if reference != 0 else 1.0
    out = np.array([residual_of(best_so_far(r, grid), reference, r["sense"]) for r in rows])
    out[np.abs(out) <= RTOL * max(1.0, abs(reference))] = 0.0
    return out / scale


def _quartiles(curves: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """25/50/75 % over runs at each time; a run without a state yet counts as infinitely far (not drawn)."""
    filled = np.where(np.isnan(curves), np.inf, curves)
    q = np.quantile(filled, [0.25, 0.5, 0.75], axis=0, method="inverted_cdf")
    q[~np.isfinite(q)] = np.nan
    return q[0], q[1], q[2]


def residual_figure(panels: Sequence[tuple[str, float, Sequence[dict[str, Any]]]], title: str,
                    names: Sequence[str]) -> Any:
    """One panel per (instance name, reference, its answered rows); a line per series (median, quartile band)."""
    cols = min(len(panels), 3)
    nrows = math.ceil(len(panels) / cols)
    fig, axes = _figure(max(3.8 * cols + 0.4, 5.0), 2.8 * nrows + 1.0, cols, nrows)
    palette = colours(names)
    start = min(min(float(t) for t, _ in (r.get("trace") or [[r["wall_time"], 0]])) for _, _, rs in panels for r in rs)
    end = max(float(r["wall_time"]) for _, _, rs in panels for r in rs)
    grid = np.geomspace(max(start, 1e-5), max(end, 2 * max(start, 1e-5)), GRID)
    curves = {k: residual_curves(rs, ref, grid) for k, (_, ref, rs) in enumerate(panels)}
    positive = np.concatenate([c[np.isfinite(c) & (c > 0)] for c in curves.values()] + [np.array([1.0])])
    floor = float(positive.min()) / 10
    for k, (name, _, rows) in enumerate(panels):
        ax = axes.flat[k]
        for label in sorted({series(r) for r in rows}):
            mine = np.array([i for i, r in enumerate(rows) if series(r) == label])
            low, mid, high = (np.maximum(q, floor) for q in _quartiles(curves[k][mine]))
            ax.plot(grid, mid, color=palette[label], label=label, drawstyle="steps-post",
                    marker=marker(names, label), markevery=max(GRID // 6, 1), markersize=4)
            ax.fill_between(grid, low, high, color=palette[label], alpha=0.15, step="post", linewidth=0)
        ax.axhline(floor, color="grey", linestyle=":", linewidth=1)
        ax.text(grid[0], floor * 1.15, "reached the reference", fontsize=7, color="grey", va="bottom")
        ax.set_xscale("log")
        ax.set_yscale("log")
        ax.set_title(name, fontsize=9)
        ax.set_xlabel("wall time (s)", fontsize=8)
        ax.set_ylabel("relative residual", fontsize=8)
        ax.tick_params(labelsize=7)
    for ax in list(axes.flat)[len(panels):]:
        ax.set_visible(False)
    handles, labels = axes.flat[0].get_legend_handles_labels()
    fig.legend(handles, labels, fontsize=7, loc="outside lower center", ncol=min(len(labels), 6))
    fig.suptitle(f"{title}\nresidual to the reference: median over runs (band: quartiles)", fontsize=9)
    return fig


# ---------------------------------------------------------------- time to target

def ttt_figure(lines: Sequence[Line], title: str, names: Sequence[str]) -> Any | None:
    """TTT per instance (x: instances by size and name), series side by side, with bootstrap intervals."""
    scored = [l for l in lines if l.ttt is not None]
    if not scored:
        return None
    instances = sorted({(l.n, l.name) for l in scored})
    where = {key: i for i, key in enumerate(instances)}
    labels = sorted({l.solver for l in scored})
    palette = colours(names)
    finite = [v for l in scored for v in (l.ttt, l.ttt_low, l.ttt_high) if v is not None and math.isfinite(v) and v > 0]
    top = (max(finite) if finite else 1.0) * 4
    bottom = (min(finite) if finite else 1e-3) / 4
    fig, axes = _figure(min(max(5.0, 0.12 * len(instances) * len(labels) + 2.5), 11.0), 3.9)
    ax = axes[0, 0]
    for k, size in enumerate(sorted({n for n, _ in instances})):  # shade every other size
        xs = [where[key] for key in instances if key[0] == size]
        if k % 2:
            ax.axvspan(min(xs) - 0.5, max(xs) + 0.5, color="0.93", linewidth=0)
    width = 0.8 / len(labels)
    for j, label in enumerate(labels):
        mine = [l for l in scored if l.solver == label]
        x = np.array([where[(l.n, l.name)] + (j - (len(labels) - 1) / 2) * width for l in mine])
        ttt = np.array([l.ttt for l in mine], dtype=float)
        lo = np.array([l.ttt_low if l.ttt_low is not None else np.nan for l in mine], dtype=float)
        hi = np.array([l.ttt_high if l.ttt_high is not None else np.nan for l in mine], dtype=float)
        ok = np.isfinite(ttt)
        shown_hi = np.where(np.isfinite(hi), hi, top)
        ax.errorbar(x[ok], ttt[ok], yerr=[ttt[ok] - np.where(np.isfinite(lo[ok]), lo[ok], ttt[ok]),
                                          shown_hi[ok] - ttt[ok]],
                    fmt=marker(names, label), color=palette[label], markersize=5, capsize=2, linewidth=1, label=label)
        if (~ok).any():
            ax.scatter(x[~ok], np.full((~ok).sum(), top), marker="^", color=palette[label], s=22)
    ax.axhline(top, color="grey", linestyle=":", linewidth=1)
    ax.text(-0.5, top * 1.1, "▲ no run reached the target; bars to this line: interval unbounded", fontsize=7,
            color="grey")
    ax.set_yscale("log")
    ax.set_ylim(bottom, top * 3)
    ax.set_xticks(range(len(instances)), [_short(name, title) for _, name in instances], rotation=75, fontsize=6,
                  ha="right")
    ax.set_xlim(-0.6, len(instances) - 0.4)
    ax.set_ylabel("time to target (s)", fontsize=8)
    ax.set_title(f"{title}\nexpected time to target with restarts (95% bootstrap interval)", fontsize=9)
    fig.legend(fontsize=7, loc="outside lower center", ncol=min(len(labels), 6))
    return fig


def _short(name: str, family: str) -> str:
    """An instance name without its family's name in front ("sk n=12 seed 1" → "n=12 seed 1")."""
    base = family.split("(", 1)[0]
    return name[len(base) + 1:] if name.startswith(base + " ") else name


# ---------------------------------------------------------------- SK per-spin energy

def sk_energies(rows: Sequence[dict[str, Any]], pick: str = "best") -> dict[str, dict[int, list[float]]]:
    """series → n → per-instance per-spin energy e = −E/n^{3/2} of the ``pick`` ("best" or "median") run.

    SK rows only; a series is a solver entry, with the SK parameters added when the rows hold
    more than one SK variant.
    """
    sk_rows = [r for r in rows if r["family"] == "sk" and r.get("objective") is not None]
    several = len({family_label(r) for r in sk_rows}) > 1
    energies: dict[tuple[str, int, str], list[float]] = defaultdict(list)
    for r in sk_rows:
        name = f"{series(r)}, {family_label(r)}" if several else series(r)
        energies[(name, int(r["n"]), r["instance"])].append(float(r["objective"]))
    out: dict[str, dict[int, list[float]]] = defaultdict(lambda: defaultdict(list))
    for (name, n, _), values in sorted(energies.items()):
        energy = min(values) if pick == "best" else float(np.median(values))
        out[name][n].append(-energy / n**1.5)
    return out


def _shortfalls(rows: Sequence[dict[str, Any]]) -> dict[str, dict[int, list[float]]]:
    """series → n → per-instance (E_median − E_best known)/n^{3/2}: how far per spin the median run stops short."""
    sk_rows = [r for r in rows if r["family"] == "sk" and r.get("objective") is not None]
    best: dict[str, float] = {}
    for r in sk_rows:
        known = [v for v in (r["objective"], r.get("known_optimum"), best.get(r["instance"])) if v is not None]
        best[r["instance"]] = min(known)
    energies: dict[tuple[str, int, str], list[float]] = defaultdict(list)
    for r in sk_rows:
        energies[(series(r), int(r["n"]), r["instance"])].append(float(r["objective"]))
    out: dict[str, dict[int, list[float]]] = defaultdict(lambda: defaultdict(list))
    for (name, n, inst), values in sorted(energies.items()):
        out[name][n].append((float(np.median(values)) - best[inst]) / n**1.5)
    return out


def _mean_se(by_n: dict[int, list[float]]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    ns = np.array(sorted(by_n))
    mean = np.array([np.mean(by_n[n]) for n in ns])
    err = np.array([np.std(by_n[n], ddof=1) / math.sqrt(len(by_n[n])) if len(by_n[n]) > 1 else 0 for n in ns])
    return ns, mean, err


def sk_figure(rows: Sequence[dict[str, Any]]) -> Any | None:
    """e(n) of the median run against the Parisi line, and each series' shortfall; None without SK rows."""
    data = sk_energies(rows, pick="median")
    if not data:
        return None
    fig, axes = _figure(7.0, 6.2, 1, 2)
    top, bottom = axes[0, 0], axes[1, 0]
    names = sorted(data)
    palette = colours(names)
    short = _shortfalls(rows) if len({family_label(r) for r in rows if r["family"] == "sk"}) == 1 else {}
    for k, name in enumerate(names):
        shift = 1.0 + 0.035 * (k - (len(names) - 1) / 2)  # sideways, so series that agree stay visible
        ns, mean, err = _mean_se(data[name])
        top.errorbar(ns * shift, mean, yerr=err, marker=marker(names, name), markersize=5, fillstyle="none",
                     capsize=2, linestyle="none", color=palette[name], label=name)
        if name in short:
            ns, mean, err = _mean_se(short[name])
            bottom.errorbar(ns * shift, mean, yerr=err, marker=marker(names, name), markersize=5, capsize=2,
                            color=palette[name], label=name, linewidth=1)
    all_n = sorted({n for by_n in data.values() for n in by_n})
    grid = np.geomspace(min(all_n), max(all_n), 50)
    top.axhline(PARISI, color="black", linestyle="--", linewidth=1, label=f"Parisi P* = {PARISI}")
    top.plot(grid, PARISI - FINITE_SIZE_A * grid ** (-2 / 3), color="grey", linestyle=":",
             label=f"P* − {FINITE_SIZE_A}·n^(−2/3)")
    for ax in (top, bottom):
        ax.set_xscale("log")
        ax.set_xticks(all_n, [str(n) for n in all_n])
        ax.minorticks_off()
        ax.tick_params(labelsize=8)
    top.set_ylabel("per-spin energy  −E / n^(3/2)", fontsize=8)
    top.set_title("SK: median run per instance (mean ± s.e. over instances; series offset sideways)", fontsize=9)
    top.legend(fontsize=7, ncol=2)
    bottom.axhline(0, color="black", linewidth=0.8)
    bottom.set_xlabel("n (spins)", fontsize=8)
    bottom.set_ylabel("shortfall per spin\n(E_median − E_best) / n^(3/2)", fontsize=8)
    bottom.set_title("distance of the median run from the best known state (0: found it)", fontsize=9)
    return fig
