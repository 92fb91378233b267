"""A heat-soak (`analysis.thermal_response`) as a report section: the thermal result, its budget, what DC cannot see, the figure."""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from benchlog.analysis.thermal_response import SoakError, SoakResult, analyse_soak, has_soak

from . import style
from .document import FigureBlock, Paragraph, Section, Table
from .figures import _legend, _new_figure
from .style import plain
from .text import number, with_uncertainty


def soak_figure(r: SoakResult, *, title: str = "") -> Figure:
    """ΔTj from the drift against time since the current step, the fitted response, and the cooling."""
    fig = _new_figure((7.0, 3.6))
    ax = fig.add_subplot()
    ax.plot(r.t_s, r.delta_tj_k, linestyle="none", marker=style.MEASURED.marker, markerfacecolor="none",
            markersize=3, color=style.MEASURED.color, label="ΔTj from the drift")
    end = float(r.t_s[-1]) if r.cool_t_s is None else float(r.cool_t_s[-1])
    grid = np.linspace(0.0, float(r.t_s[-1]), 400)
    ax.plot(grid, r.curve(grid), color=style.FIT.color, linewidth=1.4,
            label=plain(f"{r.chosen.poles}-pole fit: Rθ {r.rth_k_per_w:.3g} K/W"))
    if r.cool_t_s is not None:
        ax.plot(r.cool_t_s, r.cool_delta_tj_k, linestyle="none", marker="x", markersize=3,
                color=style.OUTLIER.color, label="cooling (sense current)")
        predicted = r.cooling_prediction_k()
        if predicted is not None:
            ax.plot(r.cool_t_s, predicted, **style.PREDICTED_TYPICAL.line_kwargs(), linewidth=1.0,
                    label="fit's prediction of the cooling")
    ax.axvline(r.first_reading_s, color="#888888", linewidth=0.6, linestyle=":")
    ax.set_xlim(0.0, end * 1.02)
    ax.set_xlabel("Time since the current step (s)")
    ax.set_ylabel("ΔTj (K)")
    ax.set_title(plain(title or "Heat-soak"))
    ax.grid(True, linewidth=0.4, alpha=0.6)
    _legend(ax)
    return fig


def soak_section(frame, meta, spec=None, label: str = "") -> Section | None:
    """The run's heat-soak, or None when the run has none."""
    if not has_soak(frame):
        return None
    try:
        r = analyse_soak(frame, meta, spec)
    except SoakError as exc:
        return Section("Heat-soak", (Paragraph(f"The heat-soak readings could not be analysed: {exc}.", "warning"),))
    taus = ", ".join(with_uncertainty(t, u, "s") for t, u in zip(r.tau_s, r.tau_u_s))
    rows = [
        ("soak current, power (last reading)", f"{number(r.current_a, 'A', 4)}, {number(r.power_w, 'W', 4)}"),
        ("RθJA on this board (k = 2)", with_uncertainty(r.rth_k_per_w, 2 * r.rth_u_k_per_w, "K/W")),
        ("time constants (k = 2)", taus + f" ({r.chosen.poles} by AICc)"),
        ("Tj at steady state (k = 2)", with_uncertainty(r.tj_steady_c, 2 * r.tj_steady_u_c, "°C")),
        ("margin to Tj max", "—" if r.tj_margin_c is None else f"{number(r.tj_margin_c, 'K', 3)} "
                                                               f"(Tj max {number(r.tj_max_c, '°C')})"),
        ("ambient", f"{number(r.ambient_c, '°C', 4)} ({r.ambient_source})"),
        ("temperature coefficient", f"{with_uncertainty(r.tempco.value, r.tempco.u, r.tempco.unit)} "
                                    f"({r.tempco.source}: {r.tempco.note})"),
        ("AICc, one / two poles", " / ".join(f"{f.aicc:.1f}" for f in r.fits)),
    ]
    budget = Table(("term of u(Rθ)", "standard uncertainty"),
                   tuple((name, number(u, "K/W", 2)) for name, u in r.budget), caption="Budget of Rθ (GUM 5.1.2)")
    blocks: list = [Table(("quantity", "value"), tuple(rows), caption="Thermal response on this board"), budget,
                    Paragraph(r.dc_limit_text() + ".", "note")]
    spec_text = r.spec_text()
    if spec_text:
        blocks.append(Paragraph(spec_text[0].upper() + spec_text[1:] + ".", "note"))
    if r.notes:
        blocks.append(Paragraph("Notes: " + "; ".join(r.notes) + ".", "note"))
    blocks.append(FigureBlock("soak", soak_figure(r, title=f"Heat-soak: {label}" if label else ""),
                              caption="ΔTj from the drift of the drop at the held current, with the fitted "
                                      "response; the dotted line marks the first reading."))
    return Section("Heat-soak", tuple(blocks))
