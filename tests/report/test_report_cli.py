"""`benchlog report`: real run files in, one self-contained HTML or PDF out; bad input is one line and exit 2."""

from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

import pytest

from benchlog.analysis.fits import fit_run
from benchlog.report.lot_runs import lot_from_runs
from benchlog.specfiles import load_spec
from benchlog.analysis.judging import check_run
from benchlog.cli import main
from benchlog.report import pdffile
from benchlog.report.build import build_report
from benchlog.report.text import with_uncertainty
from benchlog.runs import load

from . import runfiles
from .htmlcheck import external_references, inventory
from .samples import HOSTILE
from .test_pdf import pdf_page_count


def _text(page: str) -> str:
    return " ".join(inventory(page).text)


def test_single_run_report_shows_metadata_fit_verdict_and_escaped_user_text(tmp_path, capsys):
    run = runfiles.hostile_run(tmp_path)
    spec = runfiles.spec_file(tmp_path)
    out = tmp_path / "r.html"
    assert main(["report", str(run), "--spec", str(spec), "-o", str(out), "--at", "2"]) == 0
    assert capsys.readouterr().out.strip() == str(out)
    page = out.read_text(encoding="utf-8")
    inv = inventory(page)
    text = _text(page)

    # user text from the serial, the operator note, the *IDN? reply and a limit note: text, never a tag
    assert "script" not in inv.tags
    for shown in (HOSTILE, f"operator says {HOSTILE}", f"BENCHLOG,{HOSTILE},0,1", f"drop above {HOSTILE}"):
        assert shown in text
    assert external_references(page) == []

    # figures: V–I, loss, residuals, inline
    assert inv.tags.count("svg") == 3
    assert inv.tags.count("figure") == 3

    # metadata: instruments with profile hashes, plan, element, ambient, times
    for item in ("BENCHLOG,SIM-SUPPLY,0001,1.0", "a" * 64, "generic-dmm", "steps: number of steps", "23.5 °C",
                 "2025-01-31T09:15:02Z", "sweep done"):
        assert item in text

    # the verdict and the fit are the analysis' own numbers
    frame, meta = load(run)
    check = check_run(frame, meta, load_spec(spec), at_a=2.0)
    verdict_divs = re.findall(r'<div class="verdict verdict-(\w+)">', page)
    assert verdict_divs == [check.verdict.outcome]
    assert check.verdict.rule in text
    fit = fit_run(frame, meta, check.model)
    b = fit.budgets["r_on_ohm"]
    assert with_uncertainty(fit.params["r_on_ohm"], fit.expanded_u["r_on_ohm"], "Ω", b.k, b.coverage_probability) in text
    assert f"(k = {b.k:.2f}, 95.45 % coverage)" in text

    # events, limit hits and the safety note
    assert "1 limit hit(s) during this run" in text
    assert "unsettled" in text
    assert "local codes" in text and "safety rules" in text


def test_several_runs_add_overlay_and_comparison_and_show_incomplete(tmp_path):
    runs = [runfiles.pfet_run(tmp_path, "a.run", seed=1),
            runfiles.pfet_run(tmp_path, "b.run", r_ohm=0.031, seed=2),
            runfiles.pfet_run(tmp_path, "killed.run", seed=3, finished=False)]
    out = tmp_path / "many.html"
    assert main(["report", *map(str, runs), "-o", str(out)]) == 0
    page = out.read_text(encoding="utf-8")
    assert 'data-name="overlay"' in page
    comparison = page[page.index("Runs side by side"):]
    comparison = comparison[:comparison.index("</table>")]
    assert comparison.count("<tr>") == 1 + 3  # header + one row per run
    assert "INCOMPLETE" in comparison
    text = _text(page)
    assert "INCOMPLETE RUN" in text and "no end record" in text
    assert re.search(r"Run killed\.run.*?<span class=\"status\">incomplete</span>", page)
    # the incomplete run is analysed, not hidden: its figures are there too
    assert page.count('data-name="vi"') == 3


def test_lot_summary_for_runs_sharing_a_lot_id(tmp_path):
    runs = [runfiles.pfet_run(tmp_path, f"p{i}.run", r_ohm=0.026 + 0.0004 * (i % 4), seed=i,
                              hdr=runfiles.header(serial=f"S-{i:03d}", lot="L-7")) for i in range(6)]
    spec = runfiles.spec_file(tmp_path)
    doc = build_report(runs, spec_path=spec)
    lot = next(s for s in doc.sections if s.title == "Lot L-7")
    summary = lot_from_runs(runs, load_spec(spec))
    names = [type(b).__name__ for b in lot.blocks]
    assert names[:2] == ["Table", "FigureBlock"]
    # the lot's verdict leads the report: the first block of the first section
    first = doc.sections[0]
    assert first.title == "Verdict" and type(first.blocks[0]).__name__ == "VerdictBlock"
    assert first.blocks[0].outcome == summary.outcome and "lot L-7" in first.blocks[0].headline
    # six runs: one median-and-band figure, no per-run figures
    figs = [f.name for f in doc.figures()]
    assert figs.count("band") == 1 and "vi" not in figs
    stats = dict(lot.blocks[0].rows)
    assert stats[summary.capability_name] == f"{summary.capability:.3g}"
    assert stats["parts"] == "6"
    parts = next(b for b in lot.blocks if isinstance(b, type(lot.blocks[0])) and b.caption == "Parts of the lot")
    assert [r[0] for r in parts.rows] == [f"S-{i:03d}" for i in range(6)]


def test_pdf_has_the_same_content_as_pages(tmp_path):
    run = runfiles.pfet_run(tmp_path)
    spec = runfiles.spec_file(tmp_path)
    out = tmp_path / "r.pdf"
    assert main(["report", str(run), "--spec", str(spec), "-o", str(out)]) == 0
    data = out.read_bytes()
    assert data.startswith(b"%PDF")
    plan = pdffile.plan_pages(build_report([run], spec_path=spec))
    assert sum(isinstance(p, pdffile.FigurePage) for p in plan) == 3
    assert pdf_page_count(data) == len(plan)


def test_figures_folder_gets_png_and_svg(tmp_path):
    run = runfiles.pfet_run(tmp_path)
    out = tmp_path / "r.html"
    assert main(["report", str(run), "-o", str(out), "--figures", str(tmp_path / "figs")]) == 0
    names = sorted(p.name for p in (tmp_path / "figs").iterdir())
    assert names == ["figure01-vi.png", "figure01-vi.svg", "figure02-loss.png", "figure02-loss.svg",
                     "figure03-residuals.png", "figure03-residuals.svg"]


def test_diode_run_without_spec(tmp_path):
    current, drop = runfiles.diode_points()
    run = runfiles.write_run(tmp_path / "d.run", current, drop, hdr=runfiles.header(kind="schottky"))
    doc = build_report([run])
    text = " ".join(str(b) for s in doc.sections for sec in s.walk() for b in sec.blocks)
    assert "no part spec was given" in text
    assert "ideality" in text


@pytest.mark.parametrize(
    "argv_tail, needle",
    [
        (["MISSING.run", "-o", "r.html"], "MISSING.run: file not found"),
        (["bad.run", "-o", "r.html"], "bad.run: line 1"),
        (["good.run", "-o", "r.txt"], "-o"),
        (["good.run", "-o", "nofolder/r.html"], "does not exist"),
        (["good.run", "-o", "r.html", "--at", "-1"], "--at"),
        (["good.run", "-o", "r.html", "--at", "lots"], "--at"),
        (["good.run", "-o", "r.html", "--spec", "bad.toml"], "bad.toml"),
        (["good.run", "-o", "r.html", "--model", "cubic"], "--model"),
        (["good.run"], "-o"),
    ],
)
def test_bad_input_is_one_line_and_exit_2(tmp_path, argv_tail, needle, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "bad.run").write_text("this is not a run file\n", encoding="utf-8")
    (tmp_path / "bad.toml").write_text('name = "X"\nkind = "valve"\n', encoding="utf-8")
    runfiles.pfet_run(tmp_path, "good.run")
    rc = _exit_code(["report", *argv_tail])
    err = capsys.readouterr().err
    assert rc == 2
    assert len(err.strip().splitlines()) == 1 and needle in err
    assert "Traceback" not in err
    assert not (tmp_path / "r.html").exists()


def _exit_code(argv: list[str]) -> int:
    """The exit code `benchlog ARGV` ends with, whether argparse exits or the handler returns."""
    try:
        return main(argv)
    except SystemExit as exc:
        return int(exc.code)


def test_bad_run_file_in_a_real_process(tmp_path):
    bad = tmp_path / "torn.run"
    bad.write_text('{"record": "header", "format": "benchlog-run", "schema": 99}\n', encoding="utf-8")
    proc = subprocess.run([sys.executable, "-m", "benchlog", "report", str(bad), "-o", str(tmp_path / "r.html")],
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2
    assert len(proc.stderr.strip().splitlines()) == 1 and str(bad) in proc.stderr
    assert proc.stdout == ""


def test_design_review_section_and_figure(tmp_path):
    from benchlog.specfiles import review_file

    design = runfiles.design_file(tmp_path)
    run = runfiles.pfet_run(tmp_path)
    out = tmp_path / "d.html"
    assert main(["report", str(run), "--design", str(design), "-o", str(out)]) == 0
    page = out.read_text(encoding="utf-8")
    inv = inventory(page)
    assert "b" not in inv.tags  # the design's name "<b>bold</b>" stays text
    assert 'data-name="design"' in page
    review = review_file(design)
    text = _text(page)
    assert review.recommendation[1:] in text
    table = page[page.index("Candidates side by side"):]
    table = table[:table.index("</table>")]
    assert table.count("<tr>") == 1 + len(review.candidates)
    for reminder in review.reminders:
        assert reminder in text


def test_design_alone_needs_no_run(tmp_path):
    out = tmp_path / "d.pdf"
    assert main(["report", "--design", str(runfiles.design_file(tmp_path)), "-o", str(out)]) == 0
    assert out.read_bytes().startswith(b"%PDF")
    assert _exit_code(["report", "-o", str(tmp_path / "x.html")]) == 2


def test_the_answer_comes_first_then_figures_then_traceability(tmp_path):
    run = runfiles.pfet_run(tmp_path)
    spec = runfiles.spec_file(tmp_path)
    out = tmp_path / "r.html"
    assert main(["report", str(run), "--spec", str(spec), "-o", str(out)]) == 0
    page = out.read_text(encoding="utf-8")
    verdict, first_table = page.index('class="verdict '), page.index("<table")
    first_figure, plan = page.index("<figure"), page.index("Plan</caption>")
    assert verdict < first_figure < first_table < plan
    text = _text(page)
    # human labels and engineering units, not plan keys with raw SI numbers
    assert "steps: number of steps" in text and "steps.count" not in text
    assert re.search(r"Report R-[0-9a-f]{8}-\d{8}T\d{4}Z", text)
    assert "Sign-off for report R-" in text and "approved by" in text


def test_two_runs_get_differences_with_numbers(tmp_path):
    runs = [runfiles.pfet_run(tmp_path, "a.run", seed=1),
            runfiles.pfet_run(tmp_path, "b.run", r_ohm=0.031, seed=2)]
    doc = build_report(runs)
    section = next(s for s in doc.sections if s.title == "Comparison of the runs")
    table = next(b for b in section.blocks if getattr(b, "caption", "").startswith("Differences to"))
    r_on = next(r for r in table.rows if r[1] == "r_on_ohm")
    assert r_on[5] == "yes"  # 26 mΩ against 31 mΩ: far beyond U(d)


def test_lab_record_and_a_calibration_past_due_warn_next_to_the_verdict(tmp_path):
    hdr = runfiles.header()
    # the run was made on 2025-01-31; the meter's calibration ran out two weeks before
    hdr["bench"] = {"roles": {"meter": {"resource": "TCPIP0::127.0.0.1::5026::SOCKET", "profile": "generic-dmm",
                                        "asset": "LAB-0042", "calibration_due": "2025-01-15"},
                              "supply": {"resource": "TCPIP0::127.0.0.1::5025::SOCKET", "profile": "generic-dc-supply",
                                         "calibration_due": "2030-01-01"}}}
    hdr["plan"] = {**hdr["plan"], "lab": {"operator": "A. Tester", "board_revision": "B2", "ambient_measured_c": 24.1}}
    run = runfiles.pfet_run(tmp_path, hdr=hdr)
    doc = build_report([run], spec_path=runfiles.spec_file(tmp_path), generated_utc="2025-02-01T08:00:00Z")
    first = doc.sections[0]
    warnings = [b.text for b in first.blocks if getattr(b, "kind", "") == "warning"]
    assert len(warnings) == 1 and "CALIBRATION PAST DUE" in warnings[0] and "LAB-0042" in warnings[0]
    assert "2025-01-15" in warnings[0]
    lab = next(s for s in doc.sections if s.title == "Lab record and sign-off")
    record = dict(lab.blocks[0].rows)
    assert record["operator (pfet.run)"] == "A. Tester" and record["board revision (pfet.run)"] == "B2"
    assert record["ambient, measured (pfet.run)"] == "24.1 °C"
    assert record["report ID"].startswith("R-") and record["report ID"].endswith("-20250201T0800Z")
    sign = lab.blocks[1]
    assert sign.rows[0][:2] == ("measured by", "A. Tester") and [r[0] for r in sign.rows][1:] == ["checked by", "approved by"]


def test_lot_band_is_the_median_and_quantiles_and_the_outlier_is_drawn_alone(tmp_path):
    import numpy as np

    from benchlog.report import from_analysis as fa

    runs = [runfiles.pfet_run(tmp_path, f"p{i}.run", r_ohm=0.026 + 0.0002 * i, seed=i,
                              hdr=runfiles.header(serial=f"S-{i:03d}", lot="L-9")) for i in range(7)]
    runs.append(runfiles.pfet_run(tmp_path, "odd.run", r_ohm=0.040, seed=9,
                                  hdr=runfiles.header(serial="S-ODD", lot="L-9")))
    doc = build_report(runs, spec_path=runfiles.spec_file(tmp_path))
    band = next(f for f in doc.figures() if f.name == "band")
    labels = band.figure.axes[0].get_legend_handles_labels()[1]
    assert "median curve" in labels and any(label.startswith("10–90 %") for label in labels)
    outliers = [p.serial for p in lot_from_runs(runs, load_spec(runfiles.spec_file(tmp_path))).parts if p.outlier]
    assert "S-ODD" in outliers
    assert [label for label in labels if label.startswith("outlier")] == [f"outlier {s}" for s in outliers]
    # the band against numpy's own median and quantiles of the same curves (numpy.quantile, linear method)
    from benchlog.analysis.fits import fit_run
    from benchlog.runs import load

    fits = [fit_run(*load(r)) for r in runs]
    grid, median, low, high = fa.lot_band(fits)
    curves = np.array([[float(f.drop_at(float(i))[0]) for i in grid] for f in fits])
    assert np.allclose(median, np.median(curves, axis=0), rtol=1e-9)
    assert np.allclose(low, np.percentile(curves, 10, axis=0), rtol=1e-9)
    assert np.allclose(high, np.percentile(curves, 90, axis=0), rtol=1e-9)
    assert grid.max() <= min(f.current_a.max() for f in fits)  # no extrapolation
