"""Reports on a tiny hand-made database: every number below is worked out by hand in the comments."""

from __future__ import annotations

import json
import math
import os
import re
import shutil
import subprocess
from concurrent.futures import ThreadPoolExecutor
from html.parser import HTMLParser
from pathlib import Path

import pytest

from spinward.cli import main as bench_main
from spinward.bench.page import build_report, html_page
from spinward.bench.report import family_summary, summarise
from spinward.bench.store import Store


def run(key, instance, solver, objective, trace, wall, *, sense="max", family="toy", n=4, status="feasible",
        bound=None, known=None, seed=0):
    return {"key": key, "instance": instance, "family": family, "n": n, "solver": solver, "options": {},
            "seed": seed, "repetition": 0, "sense": sense, "objective": objective, "trace": trace, "wall_time": wall,
            "status": status, "bound": bound, "known_optimum": known, "params": {}}


HAND = [
    # maximise on instance I1; best known = 10 (reached by A)
    run("a1", "I1", "A", 10.0, [[0.5, 8.0], [1.0, 10.0]], 2.0),
    run("a2", "I1", "A", 9.0, [[0.2, 9.0]], 2.0),
    run("a3", "I1", "A", 10.0, [[3.0, 10.0]], 4.0),
    run("b1", "I1", "B", 7.0, [[0.1, 7.0]], 1.0),
    run("b2", "I1", "B", 9.5, [[0.6, 9.5]], 1.0, bound=11.0),
    # minimise on instance I2; the family knows the optimum −5
    run("c1", "I2", "A", -5.0, [[0.4, -3.0], [0.8, -5.0]], 1.0, sense="min", family="toymin", n=3, known=-5.0),
    run("c2", "I2", "A", -4.0, [[0.3, -4.0]], 1.0, sense="min", family="toymin", n=3, known=-5.0),
    # no answers: left out of every statistic
    run("d1", "I2", "C", None, None, 0.0, sense="min", family="toymin", n=3, status="unsuitable"),
    run("d2", "I1", "C", None, None, 0.0, status="error"),
]


def by_solver(lines):
    return {(l.family, l.solver): l for l in lines}


def test_best_median_success_and_time_to_target_by_hand():
    lines = by_solver(summarise(HAND))
    assert set(lines) == {("toy", "A"), ("toy", "B"), ("toymin", "A")}
    a = lines[("toy", "A")]
    # A: objectives 10, 9, 10 → best 10, median 10; hits at 1.0 and 3.0, one failure of 2.0 s
    assert (a.runs, a.best, a.median) == (3, 10.0, 10.0)
    assert a.success == pytest.approx(2 / 3)
    assert a.ttt == pytest.approx((1.0 + 2.0 + 3.0) / 2)
    b = lines[("toy", "B")]
    assert (b.best, b.median, b.success, b.ttt) == (9.5, 8.25, 0.0, math.inf)
    assert (b.ttt_low, b.ttt_high) == (math.inf, math.inf)
    m = lines[("toymin", "A")]
    # minimise, target −5 (known): hit at 0.8 s, one failure of 1 s → TTT 1.8
    assert (m.best, m.median, m.success) == (-5.0, -4.5, 0.5)
    assert m.ttt == pytest.approx(1.8)
    # bootstrap over 2 runs: both successes (p = 1/4) → 0.8, one each (1/2) → 1.8, none (1/4) → inf,
    # so the 2.5% and 97.5% points are 0.8 and inf
    assert m.ttt_low == pytest.approx(0.8) and m.ttt_high == math.inf
    assert a.mean_time == pytest.approx(8 / 3)
    # bootstrap over A's 3 runs: the lowest value, 1.0, comes from resampling a1 three times (p = 1/27 > 2.5%);
    # resamples without a1 or a3 (p = 1/27 > 2.5%) give inf, so the interval is [1, inf]
    assert (a.ttt_low, a.ttt_high) == (1.0, math.inf)


def test_relative_gap_and_bound_reference_by_hand():
    gap = by_solver(summarise(HAND, gap=0.1))
    # target 10 − 1 = 9: A hits at 1.0, 0.2, 3.0 → p = 1, TTT = 4.2/3; B hits at 0.6 once, fails 1 s once
    assert gap[("toy", "A")].success == 1.0 and gap[("toy", "A")].ttt == pytest.approx(1.4)
    assert gap[("toy", "B")].success == 0.5 and gap[("toy", "B")].ttt == pytest.approx(1.6)
    bound = by_solver(summarise(HAND, reference="bound", gap=0.1))
    # the tightest stored bound on I1 is 11, target 9.9: A succeeds on a1 (1.0) and a3 (3.0), fails a2 (2.0)
    assert bound[("toy", "A")].success == pytest.approx(2 / 3) and bound[("toy", "A")].ttt == pytest.approx(3.0)
    assert bound[("toy", "B")].success == 0.0
    # I2 has no stored bound: no success figure rather than a made-up one
    assert bound[("toymin", "A")].success is None and bound[("toymin", "A")].ttt is None


def test_text_tables_name_each_instance_and_summarise_families():
    text = build_report(HAND, plots=False).text
    assert "Summary per family and size" in text and "Per instance" in text
    assert "I1 (toy, n = 4; reference 10)" in text and "I2 (toymin, n = 3; reference -5)" in text
    row = next(l for l in text.splitlines() if l.strip().startswith("A ") and "[1, inf]" in l)
    # A on I1: 3 runs, best 10, median 10, P = 0.67, residual of the median run 0
    assert row.split()[:6] == ["A", "3", "10", "10", "0.67", "3"]


def test_residuals_by_hand():
    lines = by_solver(summarise(HAND))
    # maximise, reference 10: B's median 8.25 stops 1.75 short (17.5 %); minimise, reference −5: A's median −4.5
    assert lines[("toy", "B")].residual == pytest.approx(1.75) and lines[("toy", "B")].relative == pytest.approx(0.175)
    assert lines[("toymin", "A")].residual == pytest.approx(0.5) and lines[("toymin", "A")].relative == pytest.approx(0.1)
    bound = by_solver(summarise(HAND, reference="bound"))
    assert bound[("toy", "A")].residual == pytest.approx(1.0)  # the bound 11 against the median 10


def test_family_summary_aggregates_per_instance_ratios_not_raw_objectives():
    """Two instances of one family at scales 10 and 1000: raw objectives would let the large one dominate."""
    rows = [run("s1", "small", "A", 10.0, [[0.1, 10.0]], 1.0, known=10.0),
            run("s2", "small", "A", 10.0, [[0.3, 10.0]], 1.0, known=10.0, seed=1),
            run("b1", "large", "A", 900.0, [[0.2, 900.0]], 2.0, known=1000.0),
            run("b2", "large", "A", 950.0, [[0.2, 950.0]], 2.0, known=1000.0, seed=1)]
    (line,) = family_summary(summarise(rows))
    # small: solved, P = 1, TTT = 0.2, residual 0; large: never reaches 1000, P = 0, TTT inf, median 925 → 7.5 %
    assert (line.instances, line.solved, line.success) == (2, 0.5, 0.5)
    assert line.relative == pytest.approx((0.0 + 0.075) / 2)
    assert line.ttt == math.inf  # the median of (0.2, inf)


def sk_rows():
    """SK rows whose best energies are chosen so the per-spin values are easy: −E/n^{3/2}."""
    rows = []
    for n, energies in ((16, (-40.0, -44.0)), (64, (-380.0, -390.0))):
        for k, e in enumerate(energies):
            rows.append(run(f"s{n}{k}", f"sk{n}_{k}", "A", e, [[0.1, e * 0.9], [0.5, e]], 1.0, sense="min",
                            family="sk", n=n))
    return rows


def test_sk_per_spin_energies_by_hand():
    from spinward.bench.plots import sk_energies

    e = sk_energies(sk_rows())["A"]
    assert sorted(e[16]) == pytest.approx([40 / 64, 44 / 64])  # 16^{3/2} = 64
    assert sorted(e[64]) == pytest.approx([380 / 512, 390 / 512])  # 64^{3/2} = 512


def test_residual_curves_follow_each_runs_improvements_by_hand():
    import numpy as np

    from spinward.bench.plots import _quartiles, best_so_far, residual_curves

    a1 = HAND[0]  # maximise: 8 at 0.5 s, 10 at 1.0 s
    grid = np.array([0.1, 0.5, 0.7, 1.0, 5.0])
    assert np.allclose(best_so_far(a1, grid), [np.nan, 8, 8, 10, 10], equal_nan=True)
    curves = residual_curves(HAND[:3], 10.0, grid)  # relative to the reference 10
    assert np.allclose(curves[0], [np.nan, 0.2, 0.2, 0, 0], equal_nan=True)
    assert np.allclose(curves[1], [np.nan, 0.1, 0.1, 0.1, 0.1], equal_nan=True)  # 9 from 0.2 s on
    assert np.allclose(curves[2], [np.nan] * 4 + [0], equal_nan=True)  # 10 at 3.0 s
    low, mid, high = _quartiles(curves)
    # at 0.5 s the three runs stand at 0.2, 0.1 and "no state yet" (infinitely far): median 0.2, top not drawn
    assert (low[1], mid[1]) == (0.1, 0.2) and np.isnan(high[1])
    assert (low[4], mid[4], high[4]) == (0.0, 0.0, 0.1)


HOSTILE = 'q<script>alert("x")</script> & \'it\'\x1b[31m\nforged row'


def hostile_rows():
    rows = []
    for r in HAND:
        rows.append({**r, "suite": HOSTILE, "name": f"{r['instance']}<b>&amp;\"", "solver": r["solver"] + "<i>",
                     "label": f"{r['solver']} \"fast\" & <em>"})
    return rows


def test_user_names_are_escaped_in_the_html_page_and_the_console(tmp_path):
    report = build_report(hostile_rows(), plots=False, runners=[{
        "started_at": "2026-01-01T00:00:00+00:00", "host": "h<1>", "limits": [
            {"label": "A \"fast\" & <em>", "solver": "A<i>", "options": {"x": "<y>"}, "per_spin": {},
             "time_limit": 1.0}]}])
    page = html_page(report, f"spinward report: {HOSTILE}")
    for raw in ("<script>alert", "<b>&amp;", "<i>", "<em>", "\"fast\"", "<1>", "<y>"):
        assert raw not in page
    assert "&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt; &amp; &#x27;it&#x27;" in page
    assert "I1&lt;b&gt;&amp;amp;&quot;" in page and "A &quot;fast&quot; &amp; &lt;em&gt;" in page
    assert page.count("<script>") == 1  # only the page's own
    text = report.text
    assert "\x1b" not in text and "\\x1b[31m" not in text  # the suite name is not in the text tables
    bad = build_report([{**r, "name": "evil\x1b[2J\nname", "label": "L\u202e"} for r in HAND], plots=False).text
    assert "\x1b" not in bad and "\u202e" not in bad
    assert "evil\\x1b[2J\\nname" in bad and "L\\u202e" in bad


def test_hostile_suite_name_through_the_commands(tmp_path, capsys):
    """A suite file whose name holds markup and a terminal escape: the runner's lines and the page escape it."""
    from spinward.bench.runner import run_suite
    from spinward.bench.suite import load_suite

    suite_file = tmp_path / "h.toml"
    suite_file.write_text("name = " + json.dumps(HOSTILE) + '\n[[generate]]\nfamily = "sk"\nsizes = [6]\n'
                          '[[solvers]]\nname = "enumerate"\nlabel = "<enum> & \\"co\\""\n', encoding="utf-8")
    with Store(tmp_path / "h.sqlite") as store, ThreadPoolExecutor(1) as ex:
        run_suite(load_suite(suite_file), store, executor=ex, progress="lines")
    out = capsys.readouterr().out
    assert "\x1b" not in out and "<enum> & \"co\"" in out  # console: control characters escaped, text as written
    page = tmp_path / "h.html"
    assert bench_main(["report", str(tmp_path / "h.sqlite"), "--html", str(page)]) == 0
    html_text = page.read_text(encoding="utf-8")
    assert "<script>alert" not in html_text and "&lt;enum&gt; &amp; &quot;co&quot;" in html_text
    assert "\x1b" not in capsys.readouterr().out


class PageCheck(HTMLParser):
    """Collects tables (header and row cell counts), images and outside references of a page."""

    def __init__(self) -> None:
        super().__init__()
        self.tables: list[dict] = []
        self.images: list[str] = []
        self.outside: list[str] = []
        self.text: list[str] = []
        self._in = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        for name in ("src", "href"):
            if a.get(name) and not a[name].startswith(("data:", "#")):
                self.outside.append(a[name])
        if tag == "table":
            self.tables.append({"head": 0, "rows": [], "thead": False})
        elif tag == "thead":
            self.tables[-1]["thead"] = True
            self._in = "head"
        elif tag == "tbody":
            self._in = "body"
        elif tag == "tr" and self.tables and self._in == "body":
            self.tables[-1]["rows"].append(0)
        elif tag == "th" and self._in == "head":
            self.tables[-1]["head"] += 1
        elif tag == "td" and self.tables and self._in == "body":
            self.tables[-1]["rows"][-1] += 1
        elif tag == "img":
            self.images.append(a.get("src", ""))

    def handle_endtag(self, tag):
        if tag in ("thead", "tbody", "table"):
            self._in = None

    def handle_data(self, data):
        self.text.append(data)


def check_page(page: str, figures: int) -> PageCheck:
    """Every image decodes as a PNG, every sortable table has a header row as wide as its rows, nothing is fetched."""
    import base64
    import io

    from matplotlib.image import imread

    parsed = PageCheck()
    parsed.feed(page)
    assert not parsed.outside
    assert len(parsed.images) == figures
    for src in parsed.images:
        assert src.startswith("data:image/png;base64,")
        pixels = imread(io.BytesIO(base64.b64decode(src.split(",", 1)[1], validate=True)), format="png")
        assert pixels.shape[0] > 100 and pixels.shape[1] > 100
    data = [t for t in parsed.tables if t["rows"]]
    assert data and all(t["thead"] and t["head"] > 0 and all(r == t["head"] for r in t["rows"]) for t in data)
    return parsed


def test_report_command_writes_pngs_and_a_self_contained_page(tmp_path, capsys):
    pytest.importorskip("matplotlib", reason="figures need the [plot] extra (matplotlib)")
    db = tmp_path / "hand.sqlite"
    with Store(db) as store:
        assert store.add_many(HAND + sk_rows()) == len(HAND) + 4
    out = tmp_path / "report.html"
    assert bench_main(["report", str(db), "--html", str(out)]) == 0
    printed = capsys.readouterr().out
    assert "I2 (toymin, n = 3; reference -5)" in printed and f"report written to {out}" in printed
    pngs = sorted(p.name for p in (tmp_path / "report_figures").glob("*.png"))
    # the SK study, a TTT chart per family, a residual figure per (family, n)
    assert pngs == ["residual_sk_16.png", "residual_sk_64.png", "residual_toy_4.png", "residual_toymin_3.png",
                    "sk_energy_vs_n.png", "ttt_sk.png", "ttt_toy.png", "ttt_toymin.png"]
    page = out.read_text(encoding="utf-8")
    parsed = check_page(page, len(pngs))
    words = " ".join(parsed.text)
    # what the page must state (spinward.bench.page); this database has no runner records, and says so
    for fact in ("report written", "Python", "numpy", "CPUs", "Reference", "TTT (time to target)", "Limits per "
                 "solver entry", "predates runner records", "Summary per family and size", "Per instance"):
        assert fact in words, fact


def test_page_states_the_runs_machine_and_limits(tmp_path):
    """A database filled by the runner records versions, CPU count, dates and each entry's limit."""
    from spinward.bench.runner import run_suite
    from spinward.bench.suite import load_suite

    suite_file = tmp_path / "s.toml"
    suite_file.write_text('name = "tiny"\ntime_limit = 0.2\n[[generate]]\nfamily = "sk"\nsizes = [8]\n'
                          '[[solvers]]\nname = "local"\n[[solvers]]\nname = "anneal"\nlabel = "anneal 2n"\n'
                          'time_limit = inf\nper_spin = { sweeps = 2 }\n', encoding="utf-8")
    with Store(tmp_path / "s.sqlite") as store, ThreadPoolExecutor(1) as ex:
        run_suite(load_suite(suite_file), store, executor=ex, progress="none")
        runners = store.runners()
    (runner,) = runners
    assert runner["suite"] == "tiny" and runner["cpus"] == os.cpu_count() and runner["finished_at"]
    assert runner["numpy"] and runner["python"] and runner["spinward"]
    report = build_report([], plots=False, runners=runners)
    words = " ".join(check_page(html_page(report, "t"), 0).text)
    assert "0.2 s wall time" in words and "none: work fixed by its options" in words and '"sweeps": "2·n"' in words


CHROMIUM = shutil.which("chromium") or (Path("/usr/bin/chromium").is_file() and "/usr/bin/chromium") or None


def test_html_report_opens_in_headless_chromium(tmp_path):
    """A real browser loads the page offline, decodes every figure, and sorts every column of every table.

    Skipped without chromium (Debian: apt-get install chromium), unless SPINWARD_REQUIRE_BROWSER=1 (CI
    installs it and sets that), where a missing browser fails; the html.parser check above runs everywhere.
    """
    if not CHROMIUM:
        if os.environ.get("SPINWARD_REQUIRE_BROWSER") == "1":
            pytest.fail("SPINWARD_REQUIRE_BROWSER=1 but chromium is not installed")
        pytest.skip("chromium is not installed (Debian: apt-get install chromium; CI installs it)")
    pytest.importorskip("matplotlib", reason="figures need the [plot] extra (matplotlib)")
    page = tmp_path / "r.html"
    report = build_report(hostile_rows() + sk_rows())
    page.write_text(html_page(report, "hand"), encoding="utf-8")
    cmd = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
           "--disable-component-update", "--disable-sync", "--no-first-run", f"--user-data-dir={tmp_path / 'prof'}",
           "--enable-logging=stderr", "--virtual-time-budget=5000", "--dump-dom", page.as_uri() + "#self-test"]
    done = subprocess.run(cmd, capture_output=True, text=True, timeout=120, check=False)
    assert done.returncode == 0, done.stderr[-2000:]
    tables = len(report.family) and html_page(report, "hand").count("class='sortable'")
    assert f"all {len(report.figures)} figures decoded" in done.stdout
    assert re.search(rf"sorted \d+ columns of {tables} tables, 0 out of order", done.stdout), done.stdout[-3000:]
    assert "Uncaught" not in done.stderr
    assert "<script>alert" not in done.stdout  # the hostile names stayed text
