"""The lot summary of incoming inspection (`report.lot_runs.lot_from_runs`) as a report section with its histogram."""

from __future__ import annotations

import numpy as np

from benchlog.analysis.lot import LotSummary
from benchlog.analysis.spec import PartSpec
from benchlog.quantity import label_of

from . import figures
from .lot_runs import lot_from_runs
from .document import FigureBlock, Paragraph, Section, Table, VerdictBlock
from .text import number, unit_of, with_uncertainty
from .views import LotView



def lot_view(summary: LotSummary) -> LotView:
    unit = unit_of(summary.quantity)
    scale, scaled = (1e3, "m" + unit) if summary.quantity == "r_on_ohm" else (1.0, unit)
    return LotView(
        quantity=label_of(summary.quantity), unit=unit,
        values=np.array([p.value for p in summary.parts]),
        lower_limit=summary.lsl, upper_limit=summary.usl,
        capability=summary.capability, capability_name=summary.capability_name,
        outlier=np.array([p.outlier for p in summary.parts], dtype=bool),
        scale=scale, scaled_unit=scaled,
    )


def summary_section(lot: str, summary: LotSummary) -> Section:
    unit = unit_of(summary.quantity)
    cap = "—" if summary.capability is None else f"{summary.capability:.3g}"
    stats = Table(("statistic", "value"), (
        ("part", summary.part), ("quantity", f"{label_of(summary.quantity)} ({summary.quantity})"),
        ("parts", str(summary.n)), ("mean", number(summary.mean, unit)), ("σ (sample)", number(summary.std, unit)),
        ("min", number(summary.min, unit)), ("max", number(summary.max, unit)),
        ("upper spec limit", number(summary.usl, unit)), ("lower spec limit", number(summary.lsl, unit)),
        ("limits from", summary.limit_source), (summary.capability_name, cap),
        (f"{summary.capability_name} {summary.capability_confidence:.0%} lower bound",
         "—" if summary.capability_lower is None else
         f"{summary.capability_lower:.3g} ({summary.capability_method})"),
        ("outliers", f"{summary.outliers} ({summary.outlier_rule})"),
        ("parts pass / conditional / fail",
         f"{summary.counts.get('pass', 0)} / {summary.counts.get('conditional', 0)} / {summary.counts.get('fail', 0)}"),
    ), caption=f"Lot {lot}")
    parts = Table(("serial", "run", "value ± U (95.45 % coverage)", "verdict", "outlier"), tuple(
        (p.serial, p.run, with_uncertainty(p.value, p.expanded_u, unit, None), p.outcome, "OUTLIER" if p.outlier else "")
        for p in summary.parts), caption="Parts of the lot")
    blocks: list = [
        VerdictBlock(summary.outcome, f"lot {lot}: {summary.n} parts of {summary.part}, "
                     f"{summary.capability_name} = {cap}", summary.rule,
                     (f"Each part: {summary.part_rule}",)),
        stats,
        FigureBlock("lot", figures.lot_figure(lot_view(summary), title=f"Lot {lot}: "
                    f"{label_of(summary.quantity)} over {summary.n} parts, "
                    f"{summary.capability_name} = {cap}"),
                    caption="Histogram of the lot with the spec limits and the mean; outliers are marked."),
        parts,
    ]
    if summary.notes:
        blocks.append(Paragraph("Lot notes: " + "; ".join(summary.notes) + ".", "note"))
    return Section(f"Lot {lot}", tuple(blocks))


def lot_section(lot: str, runs, spec: PartSpec, at_a: float | None = None) -> Section:
    """Summarise the runs of one lot (complete or not: an incomplete run is named in the notes)."""
    summary = lot_from_runs([ra.path for ra in runs], spec, at_a)
    section = summary_section(lot, summary)
    incomplete = [ra.path.name for ra in runs if not ra.meta.complete]
    if incomplete:
        warn = Paragraph(f"{len(incomplete)} run(s) of this lot are incomplete and included as recorded: "
                         + ", ".join(incomplete), "warning")
        section = Section(section.title, (warn,) + section.blocks, section.subsections, "incomplete runs")
    return section
