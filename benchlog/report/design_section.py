"""A design review (`analysis.design.review`) as a report section: candidates side by side, checks, clamp, figure."""

from __future__ import annotations

from benchlog.analysis.design import CandidateReview, DesignReview

from . import figures
from .document import FigureBlock, Paragraph, Section, Table
from .text import number
from .views import CandidateView


def _pct(part: float | None, whole: float | None) -> float | None:
    if part is None or whole is None or whole == 0:
        return None
    return 100.0 * part / whole


def candidate_view(c: CandidateReview, ambient_c: float) -> CandidateView:
    """Margins as a share of each rating: Tj budget left (Tj max − Tj over Tj max − Ta), blocking and Vgs headroom."""
    margins: list[tuple[str, float]] = []
    tj_budget = None if c.tj_max_c is None else c.tj_max_c - ambient_c
    for label, value in (
        ("Tj budget left", _pct(c.tj_margin_k, tj_budget)),
        ("blocking headroom", _pct(c.blocking_headroom_v, c.blocking_rating_v)),
        ("Vgs headroom", _pct(None if c.vgs_max_v is None else c.vgs_max_v - (c.vgs_clamped_v if c.vgs_clamped_v
                                                                             is not None else c.vgs_unclamped_v or 0.0),
                              c.vgs_max_v)),
    ):
        if value is not None:
            margins.append((label, value))
    loss = c.worst_loss_w if c.worst_loss_w is not None else float("nan")
    return CandidateView(c.label, c.kind, loss, c.tj_c, c.tj_max_c, tuple(margins))


def _check_word(ok: bool | None) -> str:
    return "ok" if ok else ("FAIL" if ok is False else "n/a")


def design_section(r: DesignReview) -> Section:
    d = r.design
    inputs = Table(("design input", "value"), (
        ("name", d.name), ("application", d.application), ("note", d.note or "—"),
        ("input nominal / min / max", f"{number(d.vin_nominal_v, 'V')} / {number(d.vin_min_v, 'V')} / "
                                      f"{number(d.vin_max_v, 'V')}"),
        ("reverse voltage", number(d.reverse_v, "V")),
        ("load nominal / max", f"{number(d.load_nominal_a, 'A')} / {number(d.load_max_a, 'A')}"),
        ("ambient max", number(d.ambient_max_c, "°C")),
        ("file", d.path),
    ), caption="Design")
    side = Table(
        ("candidate", "part", "kind", "drop (nominal)", "loss (nominal)", "efficiency", "loss (worst)",
         "Tj (worst)", "Tj margin", "blocking headroom", "|Vgs| unclamped / clamped / max", "threshold margin",
         "R_DS(on) stated down to |Vgs|", "body diode takes over below", "reverse leakage"),
        tuple((c.label, c.part, c.kind, number(c.drop_v, "V", 4), number(c.loss_w, "W", 4),
               "—" if c.efficiency is None else f"{c.efficiency * 100:.2f} %", number(c.worst_loss_w, "W", 4),
               number(c.tj_c, "°C", 4), number(c.tj_margin_k, "K", 3), number(c.blocking_headroom_v, "V", 4),
               f"{number(c.vgs_unclamped_v, 'V', 4)} / {number(c.vgs_clamped_v, 'V', 4)} / {number(c.vgs_max_v, 'V')}",
               number(c.threshold_margin_v, "V", 3), number(c.guaranteed_vgs_v, "V", 3),
               "—" if c.takeover_v is None else f"{number(c.takeover_v, 'V', 3)} ({number(c.takeover.body_loss_w, 'W', 3)}, "
               f"Tj {number(c.takeover.body_tj_c, '°C', 3)})",
               number(c.leakage_a, "A", 3))
              for c in r.candidates),
        caption="Candidates side by side (worst case: maximum load and ambient, minimum input, maximum datasheet values)")
    checks = Table(("candidate", "check", "result", "detail"), tuple(
        (c.label, k.name, _check_word(k.ok), k.detail) for c in r.candidates for k in c.checks), caption="Checks")
    blocks: list = [
        Paragraph(r.recommendation[:1].upper() + r.recommendation[1:] + "."
                  + (" Why: " + "; ".join(r.reasons) + "." if r.reasons else "")),
        inputs, side,
        FigureBlock("design", figures.design_figure([candidate_view(c, d.ambient_max_c) for c in r.candidates],
                                                    title=f"Design review: {d.name}"),
                    caption="Worst-case loss, junction temperature against Tj max, and margins as a share of "
                    "each rating (Tj budget = Tj max − maximum ambient)."),
        checks,
    ]
    if r.clamp is not None:
        c = r.clamp
        blocks.append(Table(("gate clamp", "value"), (
            ("zener", number(c.zener_v, "V")), ("series resistor", f"{number(c.resistor_ohm, 'Ω')} ({c.series}"
                                                 f"{', picked here' if c.picked else ''})"),
            ("at input", number(c.at_vin_v, "V")), ("zener conducts", "yes" if c.active else "no"),
            ("zener current", number(c.zener_current_a, "A", 3)), ("zener power", number(c.zener_power_w, "W", 3)),
            ("resistor power", f"{number(c.resistor_power_w, 'W', 3)} (use a {number(c.resistor_rating_w, 'W')} part)"),
            ("at the nominal input", "—" if c.quiescent_a is None else
             f"{number(c.quiescent_a, 'A', 3)} continuous, {number(c.quiescent_w, 'W', 3)} at {number(c.nominal_v, 'V')}"),
            ("note", c.note or "—"),
        ), caption="Gate clamp sizing"))
    blocks.append(Paragraph(r.margins_note[0].upper() + r.margins_note[1:] + ".", "note"))
    for reminder in r.reminders:
        blocks.append(Paragraph(reminder, "warning"))
    return Section(f"Design review: {d.name}", tuple(blocks))
