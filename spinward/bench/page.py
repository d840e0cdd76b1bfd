"""Write a report: text tables, PNG figures, and one self-contained HTML page (figures inlined as base64).

The page needs nothing from outside (no fonts, scripts or styles to fetch), so it
opens offline.  It states the suite, the limits per solver entry, the reference and
TTT definitions, and the versions and machine of every runner that filled the
database.  Its tables sort by a click on a header (a small inline script).  Every
name a user wrote (suite, instance, solver, label) is HTML-escaped.
"""

from __future__ import annotations

import base64
import html
import json
import math
import os
import platform
import re
from collections import Counter, defaultdict
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from .report import (FAMILY_HEADERS, HEADERS, NO_ANSWER, FamilyLine, Line, Reference, answered, cells, family_cells,
                     family_label, family_sort_values, family_summary, format_text, instance_name, instance_title,
                     references, series, sort_values, summarise)
from .store import Store

#: the most residual figures drawn (one per family and size)
MAX_RESIDUAL_FIGURES = 24
#: the most instances (panels) per residual figure
MAX_PANELS = 6


@dataclass
class Report:
    """What :func:`build_report` produced: the tables, their text, figures as PNG bytes, and the context."""

    lines: list[Line]
    text: str
    family: list[FamilyLine] = field(default_factory=list)
    figures: dict[str, bytes] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    runners: list[dict[str, Any]] = field(default_factory=list)
    suites: list[str] = field(default_factory=list)
    reference: Reference = "best"
    gap: float = 0.0
    runs: int = 0


def build_report(rows: Sequence[dict[str, Any]], *, reference: Reference = "best", gap: float = 0.0,
                 plots: bool = True, runners: Sequence[dict[str, Any]] = ()) -> Report:
    """Tables for every (instance, series), the family summary, and the figures when matplotlib is installed."""
    lines = summarise(rows, reference=reference, gap=gap)
    family = family_summary(lines)
    report = Report(lines=lines, family=family, text=format_text(lines, family), runners=list(runners),
                    suites=sorted({str(r["suite"]) for r in rows if r.get("suite")}), reference=reference, gap=gap,
                    runs=len(rows))
    left_out = Counter(r["status"] for r in rows if r["status"] in NO_ANSWER)
    if left_out:
        report.notes.append("left out (no answer): " + ", ".join(f"{k} {v} runs" for k, v in sorted(left_out.items())))
    if plots:
        try:
            report.figures = figures(answered(rows), lines, reference)
        except ImportError:
            report.notes.append("figures left out: matplotlib is not installed (pip install 'spinward[plot]')")
    return report


def _stem(*parts: object) -> str:
    return re.sub(r"[^A-Za-z0-9]+", "_", "_".join(map(str, parts))).strip("_")[:80]


def figures(rows: Sequence[dict[str, Any]], lines: Sequence[Line], reference: Reference = "best") -> dict[str, bytes]:
    """PNG bytes by file stem: the SK study, one time-to-target chart per family, and one
    residual-against-time figure per (family, n) with a panel per instance (the first ``MAX_PANELS``)."""
    from .plots import png_bytes, residual_figure, sk_figure, ttt_figure

    out: dict[str, bytes] = {}
    names = sorted({series(r) for r in rows})
    fig = sk_figure(rows)
    if fig is not None:
        out["sk_energy_vs_n"] = png_bytes(fig)
    by_family: dict[str, list[Line]] = defaultdict(list)
    for line in lines:
        by_family[line.family].append(line)
    for family, group in sorted(by_family.items()):
        fig = ttt_figure(group, family, names)
        if fig is not None:
            out[_stem("ttt", family)] = png_bytes(fig)
    refs = references(rows, reference)
    groups: dict[tuple[str, int], dict[str, list[dict[str, Any]]]] = defaultdict(lambda: defaultdict(list))
    for r in rows:
        if refs.get(r["instance"]) is not None:
            groups[(family_label(r), int(r["n"]))][r["instance"]].append(r)
    for (family, n), by_instance in sorted(groups.items())[:MAX_RESIDUAL_FIGURES]:
        chosen = sorted(by_instance.items(), key=lambda kv: instance_name(kv[1][0]))[:MAX_PANELS]
        panels = [(instance_name(rs[0]), float(refs[inst]), rs) for inst, rs in chosen]  # type: ignore[arg-type]
        out[_stem("residual", family, n)] = png_bytes(residual_figure(panels, f"{family}, n = {n}", names))
    return out


# ---------------------------------------------------------------- HTML

def _e(text: object) -> str:
    return html.escape(str(text), quote=True)


def _sortable(headers: Sequence[str], rows: Sequence[tuple[Sequence[str], Sequence[float | str]]]) -> str:
    """A table whose header cells sort it; each cell carries its sort value (numbers as numbers)."""
    head = "".join(f"<th scope='col' title='sort by {_e(h)}'>{_e(h)}</th>" for h in headers)
    body = []
    for texts, keys in rows:
        tds = "".join(f"<td data-v='{_e(_sort_text(k))}'>{_e(t)}</td>" for t, k in zip(texts, keys))
        body.append(f"<tr>{tds}</tr>")
    return f"<table class='sortable'><thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>"


def _sort_text(key: float | str) -> str:
    if isinstance(key, str):
        return key
    if math.isnan(key):
        return ""
    return "Infinity" if key == math.inf else ("-Infinity" if key == -math.inf else repr(float(key)))


def _about(report: Report, title: str) -> list[str]:
    now = datetime.now(UTC).isoformat(timespec="seconds")
    from spinward import __version__

    import numpy as np

    facts = [("suite", ", ".join(report.suites) or "—"), ("runs stored", str(report.runs)),
             ("report written", f"{now} by spinward {__version__} (Python {platform.python_version()}, "
                                f"numpy {np.__version__}, {os.cpu_count()} CPUs)")]
    rows = "".join(f"<tr><th scope='row'>{_e(k)}</th><td>{_e(v)}</td></tr>" for k, v in facts)
    parts = [f"<h1>{_e(title)}</h1>", f"<table class='facts'>{rows}</table>", "<h2>Where the runs ran</h2>"]
    if report.runners:
        heads = ("started", "finished", "host", "workers", "spinward", "Python", "numpy", "CPUs", "platform")
        body = [[r.get("started_at"), r.get("finished_at") or "— (killed or running)", r.get("host"), r.get("workers"),
                 r.get("spinward"), r.get("python"), r.get("numpy"), r.get("cpus"), r.get("platform")]
                for r in report.runners]
        parts.append(_plain_table(heads, body))
    else:
        parts.append("<p>Not recorded: this database predates runner records.</p>")
    return parts


def _plain_table(headers: Sequence[str], rows: Sequence[Sequence[Any]]) -> str:
    head = "".join(f"<th scope='col'>{_e(h)}</th>" for h in headers)
    body = "".join("<tr>" + "".join(f"<td>{_e('—' if c is None else c)}</td>" for c in r) + "</tr>" for r in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _limits(report: Report) -> list[str]:
    """Each solver entry's limit: a time limit, or the work its options fix."""
    seen: dict[str, list[Any]] = {}
    for runner in report.runners:
        for entry in runner.get("limits") or []:
            limit = entry.get("time_limit")
            per_spin = {k: f"{v:g}·n" for k, v in (entry.get("per_spin") or {}).items()}
            work = {**entry.get("options", {}), **per_spin}
            what = f"{limit:g} s wall time" if limit is not None else "none: work fixed by its options"
            seen[str(entry["label"])] = [entry["label"], entry["solver"], what,
                                         json.dumps(work, ensure_ascii=False) if work else "defaults"]
    parts = ["<h2>Limits per solver entry</h2>"]
    if seen:
        parts.append(_plain_table(("series", "solver", "time limit", "options (work)"), list(seen.values())))
        parts.append("<p>Without a time limit a run does fixed work, so its stored state does not depend on the "
                     "machine or its load; under a time limit, how much work fits depends on the clock.</p>")
    else:
        parts.append("<p>Not recorded (no runner records in this database).</p>")
    return parts


def _definitions(report: Report) -> str:
    ref = ("the best known value: the better of the value the suite gives or the family knows by construction, "
           "and the best objective any stored run reached on the instance" if report.reference == "best"
           else "the tightest bound any stored run proved on the instance")
    gap = "the reference itself" if report.gap == 0 else f"within {report.gap:g}·|reference| of the reference"
    items = [
        ("Reference", ref + "."),
        ("Success", f"a run succeeds when its objective reaches {gap} (relative tolerance 1e-9 for rounding)."),
        ("TTT (time to target)", "the expected wall time to success when the solver is restarted independently "
                                 "until it succeeds: (Σ hit times of successes + Σ run times of failures) / successes. "
                                 "A hit time is the first time in the run's trace of improvements at which the target "
                                 "was met. Infinite when no run succeeded."),
        ("95% CI", "percentile bootstrap over runs (2000 resamples)."),
        ("Residual", "distance from the reference in the problem's sense, of the median run; relative: divided by "
                     "|reference|."),
        ("Family summary", "per-instance figures aggregated over the instances of a family and size: share of "
                           "instances solved (best run met the target), mean success probability, median TTT, mean "
                           "relative residual — never raw objectives."),
    ]
    body = "".join(f"<dt>{_e(k)}</dt><dd>{_e(v)}</dd>" for k, v in items)
    return f"<h2>Definitions</h2><dl>{body}</dl>"


def html_page(report: Report, title: str) -> str:
    """One HTML document with the context, the tables and every figure inlined (no outside resources)."""
    parts = _about(report, title) + _limits(report) + [_definitions(report)]
    parts += [f"<p class='note'>{_e(n)}</p>" for n in report.notes]
    parts.append("<h2>Summary per family and size</h2>")
    groups: dict[tuple[str, int], list[FamilyLine]] = defaultdict(list)
    for f in report.family:
        groups[(f.family, f.n)].append(f)
    for (family, n), group in groups.items():
        parts.append(f"<h3>{_e(family)}, n = {n}</h3>")
        parts.append(_sortable(FAMILY_HEADERS, [(family_cells(f), family_sort_values(f)) for f in group]))
    parts.append("<h2>Per instance</h2>")
    by_instance: dict[tuple[str, int, str, str], list[Line]] = defaultdict(list)
    for line in report.lines:
        by_instance[(line.family, line.n, line.name, line.instance)].append(line)
    for group_lines in by_instance.values():
        parts.append(f"<h3>{_e(instance_title(group_lines[0]))}</h3>")
        parts.append(_sortable(HEADERS, [(cells(l), sort_values(l)) for l in group_lines]))
    if report.figures:
        parts.append("<h2>Figures</h2>")
    for stem, png in report.figures.items():
        data = base64.b64encode(png).decode("ascii")
        parts.append(f"<figure><img alt='{_e(stem)}' src='data:image/png;base64,{data}'>"
                     f"<figcaption>{_e(stem)}</figcaption></figure>")
    parts.append("<p id='figure-check'>figures not checked (scripts disabled)</p>")
    parts.append("<p id='self-test'></p>")
    return _TEMPLATE.replace("{title}", _e(title)).replace("{body}", "\n".join(parts))


# The script sorts tables by a click on a header, and reports whether every inlined figure decoded;
# with "#self-test" in the address it sorts every column of every table and checks the order
# (the browser test reads the result).  It loads nothing.
_TEMPLATE = """<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{title}</title>
<style>body{font-family:sans-serif;margin:2em;max-width:110em}table{border-collapse:collapse;margin-bottom:1em}
td,th{border:1px solid #bbb;padding:2px 8px;text-align:right}th{background:#eee}
table.sortable th{cursor:pointer}th[aria-sort=ascending]::after{content:" \\25B2"}
th[aria-sort=descending]::after{content:" \\25BC"}table.facts th{text-align:left}
dt{font-weight:bold}figure{display:inline-block;margin:1em}.note{color:#a40}</style></head>
<body>
{body}
<script>
(function () {
  function key(td) {
    var v = td.getAttribute("data-v");
    if (v === "") return {num: true, v: NaN};
    var x = Number(v);
    return isNaN(x) ? {num: false, v: v} : {num: true, v: x};
  }
  function compare(a, b) {
    if (a.num && b.num) {
      if (isNaN(a.v)) return isNaN(b.v) ? 0 : 1;
      if (isNaN(b.v)) return -1;
      return a.v < b.v ? -1 : (a.v > b.v ? 1 : 0);
    }
    return String(a.v).localeCompare(String(b.v));
  }
  function sortBy(table, col, descending) {
    var body = table.tBodies[0];
    var rows = Array.prototype.slice.call(body.rows);
    rows.sort(function (r, s) {
      var c = compare(key(r.cells[col]), key(s.cells[col]));
      return descending ? -c : c;
    });
    rows.forEach(function (r) { body.appendChild(r); });
    Array.prototype.forEach.call(table.tHead.rows[0].cells, function (th, i) {
      if (i === col) th.setAttribute("aria-sort", descending ? "descending" : "ascending");
      else th.removeAttribute("aria-sort");
    });
  }
  function sorted(table, col) {
    var rows = table.tBodies[0].rows;
    for (var i = 1; i < rows.length; i++) {
      if (compare(key(rows[i - 1].cells[col]), key(rows[i].cells[col])) > 0) return false;
    }
    return true;
  }
  var tables = Array.prototype.slice.call(document.querySelectorAll("table.sortable"));
  tables.forEach(function (table) {
    Array.prototype.forEach.call(table.tHead.rows[0].cells, function (th, col) {
      th.addEventListener("click", function () {
        sortBy(table, col, th.getAttribute("aria-sort") === "ascending");
      });
    });
  });
  window.addEventListener("load", function () {
    var imgs = Array.prototype.slice.call(document.images);
    var bad = imgs.filter(function (i) { return !(i.complete && i.naturalWidth > 0); });
    document.getElementById("figure-check").textContent =
      bad.length ? ("figures failed to decode: " + bad.length) : ("all " + imgs.length + " figures decoded");
    if (location.hash !== "#self-test") return;
    var checked = 0, wrong = 0;
    tables.forEach(function (table) {
      for (var col = 0; col < table.tHead.rows[0].cells.length; col++) {
        table.tHead.rows[0].cells[col].click();
        checked++;
        if (!sorted(table, col)) wrong++;
      }
    });
    document.getElementById("self-test").textContent =
      "sorted " + checked + " columns of " + tables.length + " tables, " + wrong + " out of order";
  });
})();
</script>
</body></html>
"""


def write_report(db: str | Path, *, html_path: str | Path | None = None, png_dir: str | Path | None = None,
                 reference: Reference = "best", gap: float = 0.0) -> Report:
    """Read ``db``, build the report, write PNGs into ``png_dir`` and the page to ``html_path`` when given."""
    with Store(db) as store:
        rows = store.rows()
        runners = store.runners()
    report = build_report(rows, reference=reference, gap=gap, plots=bool(html_path or png_dir), runners=runners)
    if png_dir is not None:
        folder = Path(png_dir)
        folder.mkdir(parents=True, exist_ok=True)
        for stem, png in report.figures.items():
            (folder / f"{stem}.png").write_bytes(png)
    if html_path is not None:
        title = f"spinward report: {', '.join(report.suites) or Path(db).name}"
        Path(html_path).write_text(html_page(report, title), encoding="utf-8")
    return report
