"""The input-voltage and reverse-leakage sweeps of a run as report blocks: tables and two figures.

R against input voltage (with the spec's R_DS(on) at the same |Vgs| when a spec is given), the
takeover found and predicted; leakage against reverse voltage on a log scale with each limit.
"""

from __future__ import annotations

from typing import Any

from .document import FigureBlock, Paragraph, Section, Table
from .figures import _legend, _new_figure
from .text import number


def _r_figure(p: dict[str, Any]):
    fig = _new_figure()
    ax = fig.add_subplot(1, 1, 1)
    rows = [x for x in p["series"] if x["r_on_ohm"] is not None]
    ax.errorbar([x["input_v"] for x in rows], [x["r_on_ohm"] * 1e3 for x in rows],
                yerr=[x["r_on_expanded_u_ohm"] * 1e3 for x in rows], fmt="o", capsize=3,
                label="measured ± U (95.45 % coverage)")
    spec = [x for x in rows if x["spec_r_on_ohm"] is not None]
    if spec:
        ax.plot([x["input_v"] for x in spec], [x["spec_r_on_ohm"] * 1e3 for x in spec], "s--", label="spec, typical")
        top = [x for x in spec if x["spec_r_on_max_ohm"] is not None]
        if top:
            ax.plot([x["input_v"] for x in top], [x["spec_r_on_max_ohm"] * 1e3 for x in top], "v:", label="spec, max")
    if p.get("takeover_v") is not None:
        ax.axvspan(p["takeover_v"] - (p["takeover_u_v"] or 0.0), p["takeover_v"] + (p["takeover_u_v"] or 0.0),
                   alpha=0.2, color="tab:red", label="body diode takes over (measured)")
    if p.get("predicted_takeover_v") is not None:
        ax.axvline(p["predicted_takeover_v"], color="tab:purple", ls="--", label="takeover predicted (max values)")
    ax.set_yscale("log")
    ax.set_xlabel("Input voltage (V)")
    ax.set_ylabel("R_DS(on) (mΩ)")
    ax.set_title("Channel resistance against input voltage")
    _legend(ax)
    return fig


def _leakage_figure(s: dict[str, Any]):
    fig = _new_figure()
    ax = fig.add_subplot(1, 1, 1)
    v = [x["voltage_v"] for x in s["leakage"]]
    ax.semilogy(v, [max(x["current_a"], 1e-15) for x in s["leakage"]], "o-", label="measured")
    ax.semilogy(v, [x["limit_a"] for x in s["leakage"]], "k--", label="limit")
    ax.set_xlabel("Reverse voltage (V)")
    ax.set_ylabel("Reverse current (A)")
    ax.set_title(f"Leakage against reverse voltage at {s['temperature_c']:g} °C")
    _legend(ax)
    return fig


def sweep_sections(p: dict[str, Any]) -> list[Section]:
    """Sections for the sweeps in `p` (`report.sweeps_data.sweeps_payload`); none when the run has neither."""
    out: list[Section] = []
    if p.get("series"):
        rows = tuple((number(x["input_v"], "V"), number(x["vgs_v"], "V", 4), x["conduction"].replace("_", " "),
                      "—" if x["r_on_ohm"] is None else f"{number(x['r_on_ohm'], 'Ω', 4)} ± "
                                                         f"{number(x['r_on_expanded_u_ohm'], 'Ω', 2)}",
                      number(x["spec_r_on_ohm"], "Ω", 4), number(x["drop_v"], "V", 4), number(x["loss_w"], "W", 4))
                     for x in p["series"])
        blocks: list = [
            Table(("input", "|Vgs|", "conduction", "R ± U (95.45 %)", "spec R typical", "drop", "loss"), rows,
                  caption=f"One series per input voltage; drop and loss at {p['operating_a']:g} A"),
            Paragraph(f"Takeover: {p['takeover_note']}."),
        ]
        if p.get("predicted_note"):
            agree = {True: "the measurement agrees", False: "the measurement DISAGREES",
                     None: "not compared"}[p["takeover_agrees"]]
            blocks.append(Paragraph(f"Design review: {p['predicted_note']}; {agree}."))
        if p.get("worst_input_v") is not None:
            blocks.append(Paragraph(f"Worst case across the input range: {number(p['worst_loss_w'], 'W', 4)} at "
                                    f"{number(p['worst_input_v'], 'V')} input."))
        blocks.append(Paragraph(f"Rule: {p['conduction_rule']}.", "note"))
        blocks.append(FigureBlock("input", _r_figure(p), caption="Fitted R against input voltage (log scale), the "
                                  "spec's R_DS(on) at the same |Vgs|, and where the body diode takes over."))
        out.append(Section("Input-voltage sweep", tuple(blocks)))
    s = p.get("leakage_sweep")
    if s:
        rows = tuple((number(x["voltage_v"], "V"), number(x["current_a"], "A", 4), number(x["limit_a"], "A", 3),
                      x["limit_source"], "ok" if x["passed"] else "FAIL") for x in s["leakage"])
        blocks = [Table(("reverse voltage", "current", "limit", "limit from", "result"), rows,
                        caption=f"Leakage sweep {s['outcome'].upper()} at {s['temperature_c']:g} °C "
                                f"({s['temperature_source']})")]
        if s["hot_a"] is not None:
            blocks.append(Paragraph(f"At Tj max {s['hot_tj_c']:g} °C: {number(s['hot_a'], 'A', 3)} by the model "
                                    f"'{s['hot_model']}'."))
        if s["runaway"] is not None:
            blocks.append(Paragraph(s["runaway"]["text"] + ".", "warning" if s["runaway"]["runaway"] else "text"))
        blocks.append(FigureBlock("leakage", _leakage_figure(s), caption="Reverse current against reverse voltage "
                                  "(log scale) with the limit at each voltage."))
        out.append(Section("Reverse-leakage sweep", tuple(blocks)))
    return out
