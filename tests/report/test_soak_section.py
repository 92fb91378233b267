"""The report's heat-soak section: present for a soak run with its numbers and figure, absent otherwise."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from benchlog import runs
from benchlog.analysis.thermal_response import analyse_soak
from benchlog.report import build_report, render_html
from benchlog.specfiles import load_spec

ROOT = Path(__file__).resolve().parents[2]
SOAK = ROOT / "sample_runs" / "pmos-heat-soak.run"
SPEC = ROOT / "benchlog" / "demo" / "specs" / "demo-pfet-10m.toml"


def _sections(doc):
    for section in doc.sections:
        yield from section.walk()


def test_soak_run_gets_its_section_with_the_thermal_result_and_figure():
    doc = build_report([SOAK], spec_path=SPEC)
    soak = [s for s in _sections(doc) if s.title == "Heat-soak"]
    assert len(soak) == 1
    table = soak[0].blocks[0]
    values = dict(table.rows)
    frame, meta = runs.load(SOAK)
    result = analyse_soak(frame, meta, load_spec(SPEC))
    assert f"{result.rth_k_per_w:.3g}"[:3] in values["RθJA on this board (k = 2)"]
    assert "AICc" in values["time constants (k = 2)"]
    figure = [b for b in soak[0].blocks if getattr(b, "name", "") == "soak"]
    assert len(figure) == 1
    # the plotted fit is the analysis' own response at the same times (numpy: same arrays)
    ax = figure[0].figure.axes[0]
    fit_line = next(line for line in ax.get_lines() if "pole fit" in line.get_label())
    x, y = fit_line.get_data()
    assert np.allclose(y, result.curve(np.asarray(x)))
    html = render_html(doc)
    assert "Heat-soak" in html and "√t" in html and "JESD51" in html


def test_a_run_without_a_soak_has_no_soak_section():
    doc = build_report([ROOT / "sample_runs" / "pmos-prototype.run"], spec_path=SPEC)
    assert not [s for s in _sections(doc) if s.title == "Heat-soak"]
