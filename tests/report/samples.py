"""Invented view data for the report tests (demo numbers, not references)."""

from __future__ import annotations

import numpy as np

from benchlog.report import figures, views
from benchlog.report.document import Document, FigureBlock, Paragraph, Section, Table, VerdictBlock

HOSTILE = "<script>alert(1)</script>"


def measured(label: str = "run 1", n: int = 20, r_ohm: float = 0.03, seed: int = 1) -> views.MeasuredSeries:
    i = np.linspace(0.1, 3.0, n)
    v = 0.002 + r_ohm * i + np.random.default_rng(seed).normal(0.0, 2e-4, n)
    out = np.zeros(n, dtype=bool)
    out[n // 3] = True
    return views.MeasuredSeries(label, i, v, outlier=out)


def fit_curve(r_ohm: float = 0.03) -> views.FitCurve:
    g = np.linspace(0.0, 3.0, 40)
    return views.FitCurve("R = 30.0 mΩ", g, 0.002 + r_ohm * g, 0.0015 + 0.995 * r_ohm * g,
                          0.0025 + 1.005 * r_ohm * g)


def spec_curve(quantity: str = "drop") -> views.SpecCurve:
    g = np.linspace(0.0, 3.0, 40)
    if quantity == "drop":
        return views.SpecCurve("DEMO-PFET-26M", g, 0.026 * g, 0.035 * g)
    return views.SpecCurve("DEMO-PFET-26M", g, 0.026 * g * g, 0.035 * g * g, quantity="loss")


def all_figures(label: str = "run 1"):
    m = measured(label)
    fc = fit_curve()
    return {
        "vi": figures.vi_figure(m, fc, spec_curve()),
        "loss": figures.loss_figure(m, fc, spec_curve("loss"), views.OperatingPoint(2.0, 0.124, 0.004, 0.104, 0.14)),
        "residuals": figures.residuals_figure(
            views.Residuals(label, m.current_a, m.drop_v - (0.002 + 0.03 * m.current_a), m.outlier, u_v=2e-4)),
        "lot": figures.lot_figure(views.LotView(
            "R_DS(on)", "Ω", np.random.default_rng(3).normal(0.026, 0.001, 20), None, 0.035, 3.0, "Cpu",
            scale=1e3, scaled_unit="mΩ")),
        "design": figures.design_figure([
            views.CandidateView("DEMO-RECT-1A", "rectifier", 1.7, 112.0, 150.0, (("Tj", 25.0), ("VR headroom", 70.0))),
            views.CandidateView("DEMO-SKY-2A", "schottky", 1.1, 95.0, 125.0, (("Tj", 24.0), ("VR headroom", 50.0))),
            views.CandidateView("DEMO-PFET-26M", "pmos", 0.104, 62.0, 150.0, (("Tj", 58.0), ("Vds headroom", 70.0))),
        ]),
        "overlay": figures.overlay_figure([m, measured("run 2", r_ohm=0.032, seed=2)], [fc, None]),
    }


def hostile_document() -> Document:
    """A document where user-supplied text (serial, note, *IDN?) is hostile markup."""
    fig = figures.vi_figure(measured(f"serial {HOSTILE}"), fit_curve(), None, title=f"Element {HOSTILE}")
    return Document(
        title=f"Report for {HOSTILE}",
        subtitle="generated for a test",
        sections=(
            Section(
                title=f"Run {HOSTILE}",
                status="incomplete",
                blocks=(
                    Paragraph(f"Operator note: {HOSTILE} & \"quoted\" 'single'"),
                    Table(("key", "value"), (("serial", HOSTILE), ("idn", f"ACME,{HOSTILE},0,1"))),
                    VerdictBlock("pass", "drop within the typical limit", "guard band: value + U <= limit",
                                 (f"note {HOSTILE}",)),
                    FigureBlock("vi", fig, caption=f"caption {HOSTILE}"),
                ),
            ),
        ),
    )
