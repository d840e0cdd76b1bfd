"""Tables from a results database: per instance family and size, per solver.

Objectives are in the caller's sense ("min" or "max", per row).  For each
instance the *reference* is either the best known value (the family's known
optimum, or else the best objective any stored run reached on it) or the
tightest stored bound.  A run *succeeds* when its objective is within
``gap · |reference|`` of the reference (plus a 1e-9 relative tolerance for
rounding).

Time-to-target (TTT) is the expected wall time to reach the target when the
solver is restarted independently until it succeeds:
TTT = (Σ_success t_hit + Σ_failure t_run) / (number of successes), where t_hit
is the first time in the run's trace at which the target was met.  It is
infinite when no run succeeded.  Its confidence interval is the percentile
bootstrap over runs (resampling runs with replacement).
"""

from __future__ import annotations

import math
from collections import defaultdict
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np

Reference = Literal["best", "bound"]
#: rows with these statuses hold no answer and are left out of every statistic
NO_ANSWER = ("unsuitable", "error")
RTOL = 1e-9


@dataclass(frozen=True)
class Line:
    """One solver's statistics on one (family, size) group."""

    family: str
    n: int
    solver: str
    runs: int
    best: float
    median: float
    success: float | None
    ttt: float | None
    ttt_low: float | None
    ttt_high: float | None
    mean_time: float


def family_label(row: dict[str, Any]) -> str:
    """The family name with its parameters, e.g. ``sk(couplings=pm1)``."""
    params = row.get("params") or {}
    if not params:
        return str(row["family"])
    return f"{row['family']}({', '.join(f'{k}={v}' for k, v in sorted(params.items()))})"


def answered(rows: Sequence[dict[str, Any]]) -> list[dict[str, Any]]:
    return [r for r in rows if r["status"] not in NO_ANSWER and r.get("objective") is not None]


def references(rows: Sequence[dict[str, Any]], mode: Reference = "best") -> dict[str, float | None]:
    """Per instance hash: the best known value, or the tightest stored bound (None when there is none)."""
    out: dict[str, float | None] = {}
    for r in rows:
        minimise = r["sense"] == "min"
        if mode == "best":
            candidates, pick = [r["objective"], r.get("known_optimum")], (min if minimise else max)
        else:  # the tightest bound: the largest lower bound when minimising, the smallest upper bound otherwise
            candidates, pick = [r.get("bound")], (max if minimise else min)
        present = [c for c in [*candidates, out.get(r["instance"])] if c is not None]
        out[r["instance"]] = pick(present) if present else None
    return out


def target_of(reference: float, sense: str, gap: float) -> float:
    """The value a run must reach: ``gap`` (relative) short of the reference in the sense of the problem."""
    slack = gap * abs(reference) + RTOL * max(1.0, abs(reference))
    return reference + slack if sense == "min" else reference - slack


def hit_time(row: dict[str, Any], target: float) -> float | None:
    """The first time the run's trace met ``target``; the run's end if only its final state did; else None."""
    def meets(value: float) -> bool:
        return value <= target if row["sense"] == "min" else value >= target

    for t, value in row.get("trace") or []:
        if meets(value):
            return float(t)
    return float(row["wall_time"]) if meets(row["objective"]) else None


def time_to_target(hits: Sequence[float | None], walls: Sequence[float]) -> float:
    """(Σ hit times of successes + Σ run times of failures) / successes; inf without a success."""
    k = sum(h is not None for h in hits)
    if k == 0:
        return math.inf
    spent = sum(h if h is not None else w for h, w in zip(hits, walls))
    return spent / k


def bootstrap_ci(hits: Sequence[float | None], walls: Sequence[float], *, resamples: int = 2000,
                 level: float = 0.95, seed: int = 0) -> tuple[float, float]:
    """Percentile bootstrap interval of :func:`time_to_target`, resampling runs with replacement."""
    rng = np.random.default_rng(seed)
    n = len(hits)
    stats = np.empty(resamples)
    for b in range(resamples):
        pick = rng.integers(0, n, n)
        stats[b] = time_to_target([hits[i] for i in pick], [walls[i] for i in pick])
    lo, hi = np.quantile(stats, [(1 - level) / 2, (1 + level) / 2], method="inverted_cdf")
    return float(lo), float(hi)


def summarise(rows: Sequence[dict[str, Any]], *, reference: Reference = "best", gap: float = 0.0,
              resamples: int = 2000, seed: int = 0) -> list[Line]:
    """One :class:`Line` per (family, n, solver), sorted by family, n and solver."""
    rows = answered(rows)
    refs = references(rows, reference)
    groups: dict[tuple[str, int, str], list[dict[str, Any]]] = defaultdict(list)
    for r in rows:
        groups[(family_label(r), int(r["n"]), r["solver"])].append(r)
    return [_line(key, group, refs, gap, resamples, seed) for key, group in sorted(groups.items())]


def _line(key: tuple[str, int, str], group: list[dict[str, Any]], refs: dict[str, float | None], gap: float,
          resamples: int, seed: int) -> Line:
    sense = group[0]["sense"]
    values = [r["objective"] for r in group]
    walls = [float(r["wall_time"]) for r in group]
    best = min(values) if sense == "min" else max(values)
    success = ttt = lo = hi = None
    if all(refs[r["instance"]] is not None for r in group):
        hits = [hit_time(r, target_of(refs[r["instance"]], sense, gap)) for r in group]  # type: ignore[arg-type]
        success = sum(h is not None for h in hits) / len(hits)
        ttt = time_to_target(hits, walls)
        lo, hi = bootstrap_ci(hits, walls, resamples=resamples, seed=seed)
    return Line(*key, runs=len(group), best=best, median=float(np.median(values)), success=success, ttt=ttt,
                ttt_low=lo, ttt_high=hi, mean_time=float(np.mean(walls)))


HEADERS = ("family", "n", "solver", "runs", "best", "median", "P(success)", "TTT s", "95% CI", "mean s")


def cells(line: Line) -> list[str]:
    """A table row as text cells."""
    def num(x: float | None, fmt: str = ".6g") -> str:
        return "—" if x is None else ("inf" if math.isinf(x) else format(x, fmt))

    ci = "—" if line.ttt_low is None else f"[{num(line.ttt_low, '.3g')}, {num(line.ttt_high, '.3g')}]"
    return [line.family, str(line.n), line.solver, str(line.runs), num(line.best, ".8g"), num(line.median, ".8g"),
            num(line.success, ".2f"), num(line.ttt, ".3g"), ci, num(line.mean_time, ".3g")]


def format_text(lines: Sequence[Line]) -> str:
    """Plain-text tables, one block per (family, n)."""
    if not lines:
        return "no answered runs in the database"
    blocks, current = [], None
    widths = [max(len(h), *(len(cells(l)[i]) for l in lines)) for i, h in enumerate(HEADERS)]
    for line in lines:
        if (line.family, line.n) != current:
            current = (line.family, line.n)
            blocks.append(f"\n{line.family}, n = {line.n}")
            blocks.append("  ".join(h.ljust(w) for h, w in zip(HEADERS, widths)))
        blocks.append("  ".join(c.ljust(w) for c, w in zip(cells(line), widths)))
    return "\n".join(blocks).lstrip("\n")
