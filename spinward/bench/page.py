"""Write a report: text tables, PNG figures, and one self-contained HTML page (figures inlined as base64)."""

from __future__ import annotations

import base64
import html
import re
from collections import Counter, defaultdict
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .report import (HEADERS, NO_ANSWER, Line, Reference, answered, cells, family_label, format_text, references,
                     summarise)
from .store import Store

#: the most trace figures drawn (one per family and size)
MAX_TRACE_FIGURES = 24


@dataclass
class Report:
    """What :func:`build_report` produced: the table lines, their text, and figures as PNG bytes."""

    lines: list[Line]
    text: str
    figures: dict[str, bytes] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)


def build_report(rows: Sequence[dict[str, Any]], *, reference: Reference = "best", gap: float = 0.0,
                 plots: bool = True) -> Report:
    """Tables for every (family, n, solver), and the figures when matplotlib is installed."""
    lines = summarise(rows, reference=reference, gap=gap)
    report = Report(lines=lines, text=format_text(lines))
    left_out = Counter(r["status"] for r in rows if r["status"] in NO_ANSWER)
    if left_out:
        report.notes.append("left out (no answer): " + ", ".join(f"{k} {v} runs" for k, v in sorted(left_out.items())))
    if plots:
        try:
            report.figures = figures(answered(rows))
        except ImportError:
            report.notes.append("figures left out: matplotlib is not installed (pip install 'spinward[plot]')")
    return report


def figures(rows: Sequence[dict[str, Any]]) -> dict[str, bytes]:
    """PNG bytes by file stem: the SK study figure, then one trace figure per (family, n) (first instance)."""
    from .plots import png_bytes, sk_figure, trace_figure

    out: dict[str, bytes] = {}
    fig = sk_figure(rows)
    if fig is not None:
        out["sk_energy_vs_n"] = png_bytes(fig)
    best = references(rows, "best")
    groups: dict[tuple[str, int], list[dict[str, Any]]] = defaultdict(list)
    for r in rows:
        groups[(family_label(r), int(r["n"]))].append(r)
    for (family, n), group in sorted(groups.items())[:MAX_TRACE_FIGURES]:
        first = min(group, key=lambda r: (r.get("instance_seed") is None, r.get("instance_seed"), r["instance"]))
        on_it = [r for r in group if r["instance"] == first["instance"]]
        title = f"{family}, n = {n}, instance {first['instance'][:8]}"
        stem = "trace_" + re.sub(r"[^A-Za-z0-9]+", "_", f"{family}_{n}").strip("_")
        out[stem] = png_bytes(trace_figure(on_it, title, best[first["instance"]]))
    return out


def html_page(report: Report, title: str) -> str:
    """One HTML document with the tables and every figure inlined (no outside resources)."""
    parts = [f"<h1>{html.escape(title)}</h1>", f"<p>{len(report.lines)} table rows.</p>"]
    parts += [f"<p class='note'>{html.escape(n)}</p>" for n in report.notes]
    current = None
    for line in report.lines:
        if (line.family, line.n) != current:
            if current is not None:
                parts.append("</tbody></table>")
            current = (line.family, line.n)
            head = "".join(f"<th>{html.escape(h)}</th>" for h in HEADERS)
            parts.append(f"<h2>{html.escape(line.family)}, n = {line.n}</h2><table><thead><tr>{head}</tr></thead><tbody>")
        parts.append("<tr>" + "".join(f"<td>{html.escape(c)}</td>" for c in cells(line)) + "</tr>")
    if current is not None:
        parts.append("</tbody></table>")
    for stem, png in report.figures.items():
        data = base64.b64encode(png).decode("ascii")
        parts.append(f"<figure><img alt='{html.escape(stem)}' src='data:image/png;base64,{data}'>"
                     f"<figcaption>{html.escape(stem)}</figcaption></figure>")
    parts.append("<p id='figure-check'>figures not checked (scripts disabled)</p>")
    return _TEMPLATE.format(title=html.escape(title), body="\n".join(parts))


# The script only reports whether every inlined figure decoded; it loads nothing.
_TEMPLATE = """<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{title}</title>
<style>body{{font-family:sans-serif;margin:2em}}table{{border-collapse:collapse;margin-bottom:1em}}
td,th{{border:1px solid #bbb;padding:2px 8px;text-align:right}}th{{background:#eee}}
figure{{display:inline-block;margin:1em}}.note{{color:#a40}}</style></head>
<body>
{body}
<script>
window.addEventListener("load", function () {{
  var imgs = Array.prototype.slice.call(document.images);
  var bad = imgs.filter(function (i) {{ return !(i.complete && i.naturalWidth > 0); }});
  document.getElementById("figure-check").textContent =
    bad.length ? ("figures failed to decode: " + bad.length) : ("all " + imgs.length + " figures decoded");
}});
</script>
</body></html>
"""


def write_report(db: str | Path, *, html_path: str | Path | None = None, png_dir: str | Path | None = None,
                 reference: Reference = "best", gap: float = 0.0) -> Report:
    """Read ``db``, build the report, write PNGs into ``png_dir`` and the page to ``html_path`` when given."""
    with Store(db) as store:
        rows = store.rows()
    report = build_report(rows, reference=reference, gap=gap, plots=bool(html_path or png_dir))
    if png_dir is not None:
        folder = Path(png_dir)
        folder.mkdir(parents=True, exist_ok=True)
        for stem, png in report.figures.items():
            (folder / f"{stem}.png").write_bytes(png)
    if html_path is not None:
        Path(html_path).write_text(html_page(report, f"spinward report: {Path(db).name}"), encoding="utf-8")
    return report
