"""Reports on a tiny hand-made database: every number below is worked out by hand in the comments."""

from __future__ import annotations

import math
import shutil
import subprocess
from pathlib import Path

import pytest

from spinward.cli import main as bench_main
from spinward.bench.page import build_report, html_page
from spinward.bench.report import summarise
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


def test_text_table_groups_by_family_and_size():
    text = build_report(HAND, plots=False).text
    assert "toy, n = 4" in text and "toymin, n = 3" in text
    row = next(l for l in text.splitlines() if l.startswith("toy ") and " A " in l)
    assert "0.67" in row and " 3 " in row and "[1, inf]" in row


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


def test_report_command_writes_pngs_and_a_self_contained_page(tmp_path, capsys):
    pytest.importorskip("matplotlib", reason="figures need the [plot] extra (matplotlib)")
    db = tmp_path / "hand.sqlite"
    with Store(db) as store:
        assert store.add_many(HAND + sk_rows()) == len(HAND) + 4
    out = tmp_path / "report.html"
    assert bench_main(["report", str(db), "--html", str(out)]) == 0
    printed = capsys.readouterr().out
    assert "toymin, n = 3" in printed and f"report written to {out}" in printed
    pngs = sorted(p.name for p in (tmp_path / "report_figures").glob("*.png"))
    assert "sk_energy_vs_n.png" in pngs and "trace_toy_4.png" in pngs
    page = out.read_text(encoding="utf-8")
    assert page.count("data:image/png;base64,") == len(pngs)
    assert "http://" not in page and "https://" not in page  # nothing to fetch


CHROMIUM = shutil.which("chromium") or (Path("/usr/bin/chromium").is_file() and "/usr/bin/chromium") or None


@pytest.mark.skipif(not CHROMIUM, reason="chromium is not installed (Debian: apt-get install chromium)")
def test_html_report_opens_in_headless_chromium(tmp_path):
    pytest.importorskip("matplotlib", reason="figures need the [plot] extra (matplotlib)")
    page = tmp_path / "r.html"
    report = build_report(HAND + sk_rows())
    page.write_text(html_page(report, "hand"), encoding="utf-8")
    cmd = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
           "--disable-component-update", "--disable-sync", "--no-first-run", f"--user-data-dir={tmp_path / 'prof'}",
           "--enable-logging=stderr", "--virtual-time-budget=3000", "--dump-dom", page.as_uri()]
    done = subprocess.run(cmd, capture_output=True, text=True, timeout=60, check=False)
    assert done.returncode == 0, done.stderr[-2000:]
    # the page's own check: every inlined figure decoded, and no script error was logged
    assert len(report.figures) == 5  # the SK study and one trace figure per (family, n)
    assert "all 5 figures decoded" in done.stdout
    assert "Uncaught" not in done.stderr
    assert "<td>toymin</td>" in done.stdout
