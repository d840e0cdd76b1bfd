"""Tables from a results database: one per instance, and a summary per family and size.

Objectives are in the caller's sense ("min" or "max", per row).  A *series* is a
solver entry of the suite (its label, or the solver's name).

**Reference.**  For each instance the reference is either the best known value
(``--reference best``, the default: the better of the value the suite gives or the
family knows by construction, and the best objective any stored run reached on
it) or the tightest stored bound (``--reference bound``).  A run *succeeds* when
its objective is within ``gap · |reference|`` of the reference (plus a 1e-9
relative tolerance for rounding).

**Residual.**  A run's residual is its distance to the reference in the sense of
the problem (objective − reference when minimising, reference − objective when
maximising; never negative against the best known value); the relative residual
divides it by |reference|.

**Time to target.**  TTT is the expected wall time to reach the target when the
solver is restarted independently until it succeeds:
TTT = (Σ_success t_hit + Σ_failure t_run) / (number of successes), where t_hit
is the first time in the run's trace (the improvements the solver offered, with
their times) at which the target was met.  It is infinite when no run succeeded.
Its confidence interval is the percentile bootstrap over runs (resampling runs
with replacement).

**Family summary.**  Per family, size and series it aggregates per-instance
figures, never raw objectives (instances of one family differ in scale): the
share of instances whose best run met the target, the mean success probability,
the median of the per-instance TTTs, and the mean relative residual of the
median run.
"""

from __future__ import annotations

import math
from collections import defaultdict
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal

import numpy as np

from .text import plain

Reference = Literal["best", "bound"]
#: rows with these statuses hold no answer and are left out of every statistic
NO_ANSWER = ("unsuitable", "error")
RTOL = 1e-9


@dataclass(frozen=True)
class Line:
    """One series' statistics on one instance."""

    family: str
    n: int
    instance: str
    name: str
    solver: str
    runs: int
    best: float
    median: float
    reference: float | None
    success: float | None
    ttt: float | None
    ttt_low: float | None
    ttt_high: float | None
    residual: float | None
    relative: float | None
    mean_time: float


@dataclass(frozen=True)
class FamilyLine:
    """One series aggregated over the instances of one (family, size) group."""

    family: str
    n: int
    solver: str
    instances: int
    solved: float | None
    success: float | None
    ttt: float | None
    relative: float | None


def family_label(row: dict[str, Any]) -> str:
    """The family name with its parameters, e.g. ``sk(couplings=pm1)``."""
    params = row.get("params") or {}
    if not params:
        return str(row["family"])
    return f"{row['family']}({', '.join(f'{k}={v}' for k, v in sorted(params.items()))})"


def instance_name(row: dict[str, Any]) -> str:
    """How reports name a row's instance: the stored name, the file name, or family, size and seed."""
    if row.get("name"):
        return str(row["name"])
    if row.get("path"):
        return Path(str(row["path"])).name
    if row.get("instance_seed") is not None:
        return f"{row['family']} {row.get('size')} seed {row['instance_seed']}"
    return f"{row['family']} {str(row['instance'])[:8]}"


def series(row: dict[str, Any]) -> str:
    """The suite entry a row belongs to: its label, else the solver's name."""
    return str(row.get("label") or row["solver"])


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


def residual_of(value: Any, reference: float, sense: str) -> Any:
    """Distance from ``reference`` in the problem's sense: how much worse ``value`` (a number or an array) is."""
    return value - reference if sense == "min" else reference - value


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
    spent = np.array([h if h is not None else w for h, w in zip(hits, walls)], dtype=float)
    ok = np.array([h is not None for h in hits], dtype=float)
    pick = rng.integers(0, n, (resamples, n))
    wins = ok[pick].sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        stats = np.where(wins > 0, spent[pick].sum(axis=1) / np.maximum(wins, 1), np.inf)
    lo, hi = np.quantile(stats, [(1 - level) / 2, (1 + level) / 2], method="inverted_cdf")
    return float(lo), float(hi)


def summarise(rows: Sequence[dict[str, Any]], *, reference: Reference = "best", gap: float = 0.0,
              resamples: int = 2000, seed: int = 0) -> list[Line]:
    """One :class:`Line` per (instance, series), sorted by family, n, instance name and series."""
    rows = answered(rows)
    refs = references(rows, reference)
    groups: dict[tuple[str, int, str, str, str], list[dict[str, Any]]] = defaultdict(list)
    for r in rows:
        groups[(family_label(r), int(r["n"]), instance_name(r), r["instance"], series(r))].append(r)
    return [_line(key, group, refs[key[3]], gap, resamples, seed) for key, group in sorted(groups.items())]


def _line(key: tuple[str, int, str, str, str], group: list[dict[str, Any]], ref: float | None, gap: float,
          resamples: int, seed: int) -> Line:
    family, n, name, instance, solver = key
    sense = group[0]["sense"]
    values = [float(r["objective"]) for r in group]
    walls = [float(r["wall_time"]) for r in group]
    best = min(values) if sense == "min" else max(values)
    median = float(np.median(values))
    success = ttt = lo = hi = residual = relative = None
    if ref is not None:
        hits = [hit_time(r, target_of(ref, sense, gap)) for r in group]
        success = sum(h is not None for h in hits) / len(hits)
        ttt = time_to_target(hits, walls)
        lo, hi = bootstrap_ci(hits, walls, resamples=resamples, seed=seed)
        residual = residual_of(median, ref, sense)
        relative = residual / abs(ref) if ref != 0 else None
    return Line(family, n, instance, name, solver, runs=len(group), best=best, median=median, reference=ref,
                success=success, ttt=ttt, ttt_low=lo, ttt_high=hi, residual=residual, relative=relative,
                mean_time=float(np.mean(walls)))


def family_summary(lines: Sequence[Line]) -> list[FamilyLine]:
    """Per (family, n, series): per-instance figures aggregated over the group's instances."""
    groups: dict[tuple[str, int, str], list[Line]] = defaultdict(list)
    for line in lines:
        groups[(line.family, line.n, line.solver)].append(line)
    out = []
    for (family, n, solver), group in sorted(groups.items()):
        scored = [l for l in group if l.reference is not None]
        solved = success = ttt = relative = None
        if scored:
            solved = float(np.mean([l.success is not None and l.success > 0 for l in scored]))
            success = float(np.mean([l.success for l in scored]))
            ttt = float(np.median([l.ttt for l in scored]))
            rel = [l.relative for l in scored if l.relative is not None]
            relative = float(np.mean(rel)) if rel else None
        out.append(FamilyLine(family, n, solver, instances=len(group), solved=solved, success=success, ttt=ttt,
                              relative=relative))
    return out


def number(x: float | None, fmt: str = ".6g") -> str:
    """A table cell for a number: "—" for none, "inf" for infinity."""
    if x is None:
        return "—"
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    return format(x, fmt)


def percent(x: float | None) -> str:
    return "—" if x is None else f"{100 * x:.3g}%"


HEADERS = ("solver", "runs", "best", "median", "P(success)", "TTT s", "95% CI", "residual", "rel. residual",
           "mean s")
FAMILY_HEADERS = ("solver", "instances", "solved", "mean P(success)", "median TTT s", "mean rel. residual")


def cells(line: Line) -> list[str]:
    """A per-instance table row as text cells (names as written; escape them for the medium)."""
    ci = "—" if line.ttt_low is None else f"[{number(line.ttt_low, '.3g')}, {number(line.ttt_high, '.3g')}]"
    return [line.solver, str(line.runs), number(line.best, ".8g"), number(line.median, ".8g"),
            number(line.success, ".2f"), number(line.ttt, ".3g"), ci, number(line.residual, ".4g"),
            percent(line.relative), number(line.mean_time, ".3g")]


def family_cells(line: FamilyLine) -> list[str]:
    return [line.solver, str(line.instances), percent(line.solved), number(line.success, ".2f"),
            number(line.ttt, ".3g"), percent(line.relative)]


def sort_values(line: Line) -> list[float | str]:
    """What each per-instance column sorts by (numbers where the cell shows one)."""
    return [line.solver, line.runs, line.best, line.median, _key(line.success), _key(line.ttt), _key(line.ttt_low),
            _key(line.residual), _key(line.relative), line.mean_time]


def family_sort_values(line: FamilyLine) -> list[float | str]:
    return [line.solver, line.instances, _key(line.solved), _key(line.success), _key(line.ttt), _key(line.relative)]


def _key(x: float | None) -> float:
    return math.nan if x is None else x


def instance_title(line: Line) -> str:
    return f"{line.name} ({line.family}, n = {line.n}; reference {number(line.reference, '.10g')})"


def _table(headers: Sequence[str], rows: list[list[str]], indent: str = "  ") -> list[str]:
    widths = [max(len(h), *(len(r[i]) for r in rows)) for i, h in enumerate(headers)]
    out = [indent + "  ".join(h.ljust(w) for h, w in zip(headers, widths))]
    out += [indent + "  ".join(c.ljust(w) for c, w in zip(r, widths)) for r in rows]
    return out


def format_text(lines: Sequence[Line], family: Sequence[FamilyLine] | None = None) -> str:
    """Plain-text tables: the family summary, then one block per instance.  User names are escaped."""
    if not lines:
        return "no answered runs in the database"
    family = family_summary(lines) if family is None else family
    out = ["Summary per family and size (per-instance figures aggregated over instances)"]
    groups: dict[tuple[str, int], list[FamilyLine]] = defaultdict(list)
    for f in family:
        groups[(f.family, f.n)].append(f)
    for (name, n), group in groups.items():
        out.append(f"\n{plain(name)}, n = {n}")
        out += _table(FAMILY_HEADERS, [[plain(c) for c in family_cells(f)] for f in group])
    out.append("\nPer instance")
    by_instance: dict[tuple[str, int, str, str], list[Line]] = defaultdict(list)
    for line in lines:
        by_instance[(line.family, line.n, line.name, line.instance)].append(line)
    for group_lines in by_instance.values():
        out.append(f"\n{plain(instance_title(group_lines[0]))}")
        out += _table(HEADERS, [[plain(c) for c in cells(l)] for l in group_lines])
    return "\n".join(out)
