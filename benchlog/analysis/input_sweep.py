"""An input-voltage sweep: R_DS(on) per input voltage, where the body diode takes over, and the loss across the range.

Each series of the run (`benchlog.runs.series`) is a current sweep at one input
voltage. With the gate tied to the opposite rail |Vgs| = Vin − drop (Kirchhoff's
voltage law), so each series measures the channel at its own gate drive.

Per series: V = V0 + R·I is fitted (`fit_resistive`, GUM uncertainties) while the
channel carries the current; the drop at the operating current is read from the
measured points (linear interpolation between the two nearest; the fitted line
only outside the measured range, and then said so), and the loss is I·V there.

Which element carries the current — the rule, stated in every result
(`CONDUCTION_RULE`): the body diode when the drop at the operating current is at
least `BODY_DIODE_DROP_V` (0.3 V: a silicon junction carries amperes only from
about 0.5 V, while a channel of tens of milliohms drops tens of millivolts at a
few amperes — common practice), else the channel. The takeover voltage is the
midpoint between the highest input at which the body diode carried the current
and the next input up, at which the channel did; its uncertainty is half that
gap (a rectangular interval: GUM 4.3.7 gives u = half-width/√3, we state the
half-width itself as the bound).

Between |Vgs| = Vth and Vth + Vf(body) the circuit has two self-consistent states:
the channel on with a small drop, or the body diode on with |Vgs| = Vin − Vf below
the threshold. Which one a board sits in depends on its history (it powers up on
the body diode), so inputs inside that band may read either way; the takeover found
is where this run's points changed over.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .fit_resistive import fit_resistive
from .fit_result import FitError

BODY_DIODE_DROP_V = 0.3
#: The top point of a series stands for the operating current when its read-back is this close below it.
READBACK_SLACK = 0.02
CONDUCTION_RULE = (f"body diode when the drop at the operating current is ≥ {BODY_DIODE_DROP_V:g} V (a silicon "
                   "junction conducts amperes only from about 0.5 V; a channel drops tens of mV; common practice), "
                   "else channel")


@dataclass(frozen=True)
class InputSeries:
    """One input voltage of the sweep."""

    index: int
    input_v: float
    points: int
    conduction: str  # "channel" | "body_diode"
    r_on_ohm: float | None  # fitted while the channel conducts
    r_on_u_ohm: float | None  # expanded uncertainty (k_p of its budget, 95.45 % coverage)
    drop_v: float | None  # at the operating current
    loss_w: float | None  # at the operating current
    vgs_v: float | None  # |Vgs| = Vin − drop at the operating current
    spec_r_on_ohm: float | None = None  # the spec's typical R_DS(on) at that |Vgs|
    spec_r_on_max_ohm: float | None = None
    note: str = ""


@dataclass(frozen=True)
class InputSweepResult:
    series: tuple[InputSeries, ...]
    operating_a: float
    takeover_v: float | None  # measured: below it the body diode carries the operating current
    takeover_u_v: float | None  # half the gap between the two inputs that bracket it
    takeover_note: str
    worst: InputSeries | None  # the highest loss at the operating current
    predicted_takeover_v: float | None = None  # the design review's figure (max datasheet values)
    predicted_full_v: float | None = None
    predicted_note: str = ""
    rule: str = CONDUCTION_RULE

    @property
    def agrees(self) -> bool | None:
        """The measured takeover lies within the predicted band (typical full takeover … max first share ± u)."""
        if self.takeover_v is None or self.predicted_takeover_v is None:
            return None
        u = self.takeover_u_v or 0.0
        low = self.predicted_full_v if self.predicted_full_v is not None else self.predicted_takeover_v
        return low - u <= self.takeover_v <= self.predicted_takeover_v + u


def _drop_at(current: np.ndarray, drop: np.ndarray, at_a: float, fit) -> tuple[float | None, str]:
    order = np.argsort(current)
    c, d = current[order], drop[order]
    if c.size and c[0] <= at_a <= c[-1]:
        return float(np.interp(at_a, c, d)), ""
    if c.size and c[-1] < at_a <= c[-1] * (1 + READBACK_SLACK):
        # the read-back current sits a little below its setpoint: the top point stands for the operating current
        return float(d[-1]), ""
    if fit is not None:
        return float(fit.params["v0_v"] + fit.params["r_on_ohm"] * at_a), (
            f"drop at {at_a:g} A from the fitted line: outside the measured {c[0]:.3g}–{c[-1]:.3g} A")
    return None, f"{at_a:g} A is outside the measured range"


def analyse_input_sweep(frame, inputs_v, series_k, *, offset_v: float | None = None,
                        operating_a: float | None = None, spec=None,
                        ambient_c: float | None = None) -> InputSweepResult | None:
    """The input sweep of a run's points (None without series).

    `inputs_v` are the series' input voltages in the order run, `series_k` the series of each point
    (−1: none; `benchlog.runs.series.series_column`), `offset_v` the zero-current reading to subtract.
    """
    inputs = tuple(inputs_v)
    if not inputs:
        return None
    k_of = np.asarray(series_k)
    from .columns import column

    current = column(frame, "current_a")
    drop = column(frame, "drop_v")
    ok = np.isfinite(current) & np.isfinite(drop)
    if offset_v is not None and math.isfinite(float(offset_v)):
        drop = drop - float(offset_v)
    if operating_a is None:
        operating_a = float(np.nanmax(current[ok])) if ok.any() else float("nan")
    channel_model = None
    if spec is not None and spec.element.has_gate:
        from .predict import channel_model as build

        notes: list[str] = []
        channel_model = (build(spec.part, "typical", notes),
                         build(spec.part, "max", notes) if spec.has_max else None)
    temperature_c = ambient_c if ambient_c is not None else 25.0
    rows: list[InputSeries] = []
    for k, vin in enumerate(inputs):
        sel = (k_of == k) & ok
        if not sel.any():
            continue
        i, v = current[sel], drop[sel]
        fit = None
        note = ""
        r = ru = None
        try:
            fit = fit_resistive(i, v) if i.size >= 3 else None
        except FitError as exc:
            note = str(exc)
        d, why = _drop_at(i, v, operating_a, fit)
        note = "; ".join(x for x in (note, why) if x)
        conduction = "body_diode" if (d is not None and d >= BODY_DIODE_DROP_V) else "channel"
        if conduction == "channel" and fit is not None:
            r, ru = fit.params["r_on_ohm"], fit.expanded_u["r_on_ohm"]
        vgs = None if d is None else vin - d
        spec_r = spec_r_max = None
        if channel_model is not None and vgs is not None and conduction == "channel":
            typ, mx = channel_model
            spec_r = _finite(typ.rds_on_ohm(vgs, temperature_c))
            spec_r_max = None if mx is None else _finite(mx.rds_on_ohm(vgs, temperature_c))
        rows.append(InputSeries(k, vin, int(sel.sum()), conduction, r, ru, d,
                                None if d is None else d * operating_a, vgs, spec_r, spec_r_max, note))
    takeover, u, text = _takeover(rows, operating_a)
    losses = [s for s in rows if s.loss_w is not None]
    worst = max(losses, key=lambda s: s.loss_w) if losses else None
    predicted = full = None
    p_note = ""
    if spec is not None and spec.element.has_gate and math.isfinite(operating_a):
        from .low_input import takeover_input_v

        t_max = takeover_input_v(spec, operating_a, temperature_c, variant="max")
        t_typ = takeover_input_v(spec, operating_a, temperature_c, variant="typical")
        predicted, full = t_max.input_v, t_typ.full_v
        p_note = (f"predicted from the spec at {operating_a:g} A, {temperature_c:g} °C: the body diode shares below "
                  f"{_v(t_max.input_v)} (max values) and carries all below {_v(t_typ.full_v)} (typical values)")
    return InputSweepResult(tuple(rows), operating_a, takeover, u, text, worst, predicted, full, p_note)


def _v(x: float | None) -> str:
    return "—" if x is None else f"{x:.2f} V"


def _finite(x: float) -> float | None:
    return x if math.isfinite(x) else None


def _takeover(rows: list[InputSeries], operating_a: float) -> tuple[float | None, float | None, str]:
    ordered = sorted((s for s in rows if s.drop_v is not None), key=lambda s: s.input_v)
    body = [s for s in ordered if s.conduction == "body_diode"]
    if not ordered:
        return None, None, "no series reached the operating current"
    if not body:
        return None, None, (f"the channel carried {operating_a:g} A at every input down to {ordered[0].input_v:g} V: "
                            "the takeover lies below the sweep")
    top_body = max(body, key=lambda s: s.input_v)
    above = [s for s in ordered if s.input_v > top_body.input_v and s.conduction == "channel"]
    if not above:
        return None, None, (f"the body diode carried {operating_a:g} A at every input up to {ordered[-1].input_v:g} V: "
                            "the takeover lies above the sweep")
    nxt = above[0]
    mid, half = 0.5 * (top_body.input_v + nxt.input_v), 0.5 * (nxt.input_v - top_body.input_v)
    return mid, half, (f"the body diode carried {operating_a:g} A at {top_body.input_v:g} V input (drop "
                       f"{top_body.drop_v:.3g} V) and the channel at {nxt.input_v:g} V (drop {nxt.drop_v:.3g} V): "
                       f"takeover {mid:.3g} ± {half:.2g} V")


__all__ = ["InputSeries", "InputSweepResult", "analyse_input_sweep",
           "BODY_DIODE_DROP_V", "CONDUCTION_RULE"]
