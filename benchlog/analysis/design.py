"""Design review of an input-protection element: candidates side by side against the product's input, load and ambient.

The design file is our own TOML, read by `benchlog.specfiles.load_design` (analysis does no file I/O):

    name, application ("bench" | "industrial" | "automotive" | "mains" | "other"), note
    [input]    nominal_v, min_v (incl. cold-crank dips), max_v (incl. transients), reverse_v (optional)
    [load]     nominal_a, max_a
    [ambient]  max_c
    [clamp]    zener_v, zener_power_w, resistor_ohm, series ("E24"), target_current_a   (optional, MOSFETs)
    [margins]  voltage_derating, tj_margin_k, power_derating, leakage_max_a, threshold_margin_v (optional)
    [[candidate]]  spec (path, relative to the design file), label

Circuit equations of the gate clamp (zener from gate to source, resistor from the gate to the rail it is
tied to: ground for a P-MOSFET, the input for an N-MOSFET in the return; the gate draws no DC current),
at the input voltage Vin (the same loop for both):
    I = (Vin − Vz)/R,  P_zener = Vz·I,  P_resistor = (Vin − Vz)·I = I²·R
(Ohm's and Kirchhoff's laws). R is picked from the IEC 60063 series. The clamp draws I continuously
whenever the input is above Vz, so at the nominal input it is a quiescent drain (a battery's standing load).

A MOSFET with its gate tied to the opposite rail is enhanced whenever the input is up, and an enhanced
channel conducts both ways: it is not an ideal diode (REVERSE_CONDUCTION). At the low end of the input the
body diode takes over (`low_input.takeover_input_v`), and no R_DS(on) is leaned on below the lowest |Vgs|
the spec states one at (`low_input.guaranteed_vgs_v`).
"""

from __future__ import annotations

from dataclasses import dataclass

from . import eseries
from .predict import Prediction, predict, reverse_leakage
from benchlog.kinds import kind as element_kind
from benchlog.quantity import engineering, margin as quantity_margin

from .low_input import Takeover, guaranteed_vgs_v, takeover_input_v
from .spec import PartSpec
from .thermal import solve_junction

APPLICATIONS = ("bench", "industrial", "automotive", "mains", "other")

#: Standard resistor power ratings (W) a suggestion is rounded up to (common chip and leaded sizes).
RESISTOR_RATINGS_W = (0.0625, 0.1, 0.125, 0.25, 0.5, 1.0, 2.0, 3.0, 5.0)

REMINDERS = {
    "automotive": (
        "automotive: the vehicle's transient and supply standards (e.g. ISO 7637-2, ISO 16750-2) and the "
        "vehicle maker's requirements govern; this review does not replace them"
    ),
    "mains": (
        "mains-connected: the applicable product safety standards (e.g. IEC 62368-1) and local electrical "
        "codes govern; this review covers the low-voltage protection element only"
    ),
}
SWITCHED_GROUND = (
    "{label}: an element in the return switches the board's ground, which then sits the drop above the "
    "supply's return; any other path to ground (a shield or chassis bond, a grounded probe or interface) "
    "bypasses the protection, so every return must pass through the element"
)
REVERSE_CONDUCTION = (
    "{label}: with its gate tied to {rail} the channel stays enhanced while the input is up, and an enhanced "
    "channel conducts in both directions: when the input dips, is shorted or swings negative the output "
    "capacitance discharges backwards into the input until |Vgs| falls below the threshold, so this is not an "
    "ideal diode; a board that must hold up its output through a dip needs a controller that turns the gate off "
    "on reverse current"
)
GENERAL_CAUTION = (
    "predictions come from datasheet values and simple models; confirm on the real board with a "
    "measurement before release"
)


@dataclass(frozen=True)
class Margins:
    """Design margins; the defaults are common practice and each review states them."""

    voltage_derating: float = 0.8  # use voltage ratings up to 80 %
    tj_margin_k: float = 25.0  # keep Tj this far below Tj max
    power_derating: float = 0.5  # run zeners and resistors at up to 50 % of their rating
    leakage_max_a: float = 100e-6  # reverse leakage a blocking element may draw (Schottky duty, common practice)
    threshold_margin_v: float = 1.0  # |Vgs| above Vgs(th)max at the lowest input


@dataclass(frozen=True)
class ClampDesign:
    zener_v: float
    zener_power_w: float | None = None
    resistor_ohm: float | None = None
    series: str = "E24"
    target_current_a: float = 5e-3  # small zeners are specified near 5 mA (common practice)


@dataclass(frozen=True)
class Candidate:
    label: str
    spec: PartSpec


@dataclass(frozen=True)
class Design:
    name: str
    application: str
    note: str
    vin_nominal_v: float
    vin_min_v: float
    vin_max_v: float
    reverse_v: float | None
    load_nominal_a: float
    load_max_a: float
    ambient_max_c: float
    clamp: ClampDesign | None
    margins: Margins
    candidates: tuple[Candidate, ...]
    path: str = ""


# --------------------------------------------------------------------------- the gate clamp
@dataclass(frozen=True)
class ClampSizing:
    zener_v: float
    resistor_ohm: float
    series: str
    picked: bool  # True when the resistor was chosen here from the E-series
    at_vin_v: float
    active: bool  # the zener conducts at that input
    zener_current_a: float
    zener_power_w: float
    resistor_power_w: float
    resistor_rating_w: float  # smallest standard rating that keeps the resistor within the power derating
    zener_power_rating_w: float | None
    zener_ok: bool | None  # within the derated zener rating (None: no rating given)
    note: str
    nominal_v: float | None = None  # the nominal input the quiescent drain is given at
    quiescent_a: float | None = None  # the clamp's continuous current at the nominal input
    quiescent_w: float | None = None  # zener plus resistor power at the nominal input


def clamp_currents(vin_v: float, zener_v: float, resistor_ohm: float) -> tuple[float, float, float]:
    """(I, P_zener, P_resistor) of the zener clamp at `vin_v` (module docstring); zero below Vz."""
    if vin_v <= zener_v:
        return 0.0, 0.0, 0.0
    i = (vin_v - zener_v) / resistor_ohm
    return i, zener_v * i, (vin_v - zener_v) * i


def size_clamp(clamp: ClampDesign, vin_max_v: float, power_derating: float = 0.5,
               vin_nominal_v: float | None = None) -> ClampSizing:
    """Pick (or check) the series resistor so the zener current at the highest input stays at the target."""
    target = clamp.target_current_a
    notes = []
    if clamp.zener_power_w is not None:
        cap = power_derating * clamp.zener_power_w / clamp.zener_v
        if cap < target:
            notes.append(f"target current lowered to {cap * 1e3:.3g} mA by the zener's derated power")
            target = cap
    picked = clamp.resistor_ohm is None
    if picked:
        needed = max(vin_max_v - clamp.zener_v, 0.0) / target
        resistor = eseries.at_least(needed, clamp.series) if needed > 0 else eseries.at_least(10e3, clamp.series)
        notes.append(f"R = (Vin_max − Vz)/I_target = {needed:.4g} Ω, next {clamp.series} value up {resistor:g} Ω")
    else:
        resistor = clamp.resistor_ohm
    i, pz, pr = clamp_currents(vin_max_v, clamp.zener_v, resistor)
    if i == 0.0:
        notes.append(f"the zener does not conduct below {clamp.zener_v:g} V: the clamp is idle up to the maximum input")
    rating = next((r for r in RESISTOR_RATINGS_W if pr <= power_derating * r), RESISTOR_RATINGS_W[-1])
    zener_ok = None if clamp.zener_power_w is None else pz <= power_derating * clamp.zener_power_w
    qi = qw = None
    if vin_nominal_v is not None:
        qi, qz, qr = clamp_currents(vin_nominal_v, clamp.zener_v, resistor)
        qw = qz + qr
    return ClampSizing(clamp.zener_v, resistor, clamp.series, picked, vin_max_v, i > 0, i, pz, pr, rating,
                       clamp.zener_power_w, zener_ok, "; ".join(notes), vin_nominal_v, qi, qw)


def clamp_drain_text(clamp: ClampSizing) -> str:
    """The clamp's standing current at the nominal input, in words."""
    if not clamp.quiescent_a:
        return (f"gate clamp: idle at the nominal {clamp.nominal_v:g} V input (at or below the {clamp.zener_v:g} V "
                f"zener); it draws current only above {clamp.zener_v:g} V")
    return (f"gate clamp: {clamp.quiescent_a * 1e3:.3g} mA ({clamp.quiescent_w * 1e3:.3g} mW) flows continuously at "
            f"the nominal {clamp.nominal_v:g} V input while the board is powered — a standing drain on a battery")


def suggest_zener_v(vgs_max_v: float, fraction: float = 0.6) -> float:
    """A clamp zener from the E24 voltages at most `fraction` of the gate rating.

    0.6 leaves room for the zener's ±5 % tolerance and the rise of its voltage at
    transient current (common practice); for the usual ±20 V and ±12…16 V gate
    ratings this lands in the 6–12 V range clamp zeners are chosen from.
    """
    return eseries.at_most(fraction * vgs_max_v, "E24")


# --------------------------------------------------------------------------- per candidate
@dataclass(frozen=True)
class DesignCheck:
    name: str
    ok: bool | None  # None: not applicable or no data
    detail: str


@dataclass(frozen=True)
class CandidateReview:
    label: str
    part: str
    kind: str
    spec_path: str
    drop_v: float | None  # nominal input and load, at the maximum ambient
    loss_w: float | None
    efficiency: float | None
    tj_c: float | None  # worst case: maximum load and ambient, minimum input, maximum datasheet values
    tj_max_c: float | None
    tj_margin_k: float | None
    worst_loss_w: float | None
    blocking_rating_v: float | None
    blocking_needed_v: float
    blocking_headroom_v: float | None
    vgs_unclamped_v: float | None
    vgs_clamped_v: float | None
    vgs_max_v: float | None
    threshold_margin_v: float | None
    min_input_conduction: str | None
    leakage_a: float | None
    reverse_tj_c: float | None
    nominal: Prediction
    worst: Prediction
    checks: tuple[DesignCheck, ...]
    takeover: Takeover | None = None  # MOSFETs: where the body diode takes over at the maximum load
    guaranteed_vgs_v: float | None = None  # MOSFETs: the lowest |Vgs| the spec states an R_DS(on) at

    @property
    def takeover_v(self) -> float | None:
        return None if self.takeover is None else self.takeover.input_v

    @property
    def acceptable(self) -> bool:
        return all(c.ok is not False for c in self.checks)

    @property
    def thermal_fault(self) -> bool:
        """The loop ran away (no steady state) or settled above Tj max, at nominal or worst case."""
        ops = [op for p in (self.nominal, self.worst) for op in (p.typical, p.maximum) if op is not None]
        return any(op.runaway or op.over_tj_max for op in ops)

    @property
    def failed(self) -> tuple[DesignCheck, ...]:
        return tuple(c for c in self.checks if c.ok is False)


def review_candidate(design: Design, cand: Candidate, clamp: ClampSizing | None) -> CandidateReview:
    spec, m = cand.spec, design.margins
    has_gate = spec.element.has_gate
    zener = clamp.zener_v if (clamp is not None and has_gate) else None
    ta = design.ambient_max_c
    nominal = predict(spec, design.load_nominal_a, ta, vin_v=design.vin_nominal_v, zener_v=zener)
    worst = predict(spec, design.load_max_a, ta, vin_v=design.vin_min_v, zener_v=zener)
    checks: list[DesignCheck] = []
    w = worst.limit
    efficiency = None if nominal.drop_v is None else 1.0 - nominal.drop_v / design.vin_nominal_v

    # Thermal
    tj_max = spec.thermal.tj_max_c
    margin = None
    if w.runaway or not w.converged:
        checks.append(DesignCheck("junction temperature", False, w.message))
    elif tj_max is None:
        checks.append(DesignCheck("junction temperature", None, "the spec gives no tj_max_c"))
    else:
        margin = tj_max - w.tj_c
        checks.append(DesignCheck(
            "junction temperature", margin >= m.tj_margin_k,
            f"Tj {w.tj_c:.1f} °C at {design.load_max_a:g} A, {ta:g} °C ambient ({w.variant} values): "
            f"{quantity_margin(margin, 'K', f'Tj max {tj_max:g} °C')} (wanted ≥ {m.tj_margin_k:g} K below)"))

    # Blocking voltage: the element must stand off the highest input, and the reversed input.
    needed = max(design.vin_max_v, design.reverse_v or 0.0)
    rating, rating_name, _key = spec.part.blocking
    headroom = None
    if not spec.element.blocks_reverse:
        checks.append(DesignCheck("blocking voltage", None, "a resistor does not block reverse polarity"))
    elif rating is None:
        checks.append(DesignCheck("blocking voltage", None, f"the spec gives no {rating_name} rating"))
    else:
        headroom = rating - needed
        checks.append(DesignCheck(
            "blocking voltage", rating * m.voltage_derating >= needed,
            f"{rating_name} rating {rating:g} V against {needed:g} V (max input / reverse): headroom "
            f"{headroom:g} V; wanted rating × {m.voltage_derating:g} ≥ {needed:g} V"))

    # Gate: rating with and without the clamp, and the drive left at the lowest input.
    vgs_un = vgs_cl = vgs_max = thr_margin = None
    takeover: Takeover | None = None
    guaranteed: float | None = None
    min_mode = worst.conduction if has_gate else None
    if has_gate:
        mos = spec.part
        vgs_max = mos.vgs_max_v
        at_max = predict(spec, design.load_nominal_a, ta, vin_v=design.vin_max_v)
        vgs_un = at_max.vgs_v
        if zener is not None:
            vgs_cl = min(vgs_un, zener) if vgs_un is not None else None
        if vgs_max is None:
            checks.append(DesignCheck("gate voltage", None, "the spec gives no vgs_max_v"))
        else:
            ok_un = vgs_un is not None and vgs_un <= vgs_max * m.voltage_derating
            text = f"|Vgs| {vgs_un:.3g} V at {design.vin_max_v:g} V input without a clamp against the ±{vgs_max:g} V rating"
            if vgs_cl is not None:
                ok = vgs_cl <= vgs_max * m.voltage_derating
                text += f"; {vgs_cl:.3g} V with the {zener:g} V zener clamp"
            else:
                ok = ok_un
                if not ok_un:
                    text += f"; needs a gate clamp, e.g. a {suggest_zener_v(vgs_max):g} V zener"
            checks.append(DesignCheck("gate voltage", ok, text))
        vth = mos.vgs_th_max_v or mos.vgs_th_v
        guaranteed = guaranteed_vgs_v(spec)
        if vth is None or worst.limit.vgs_v is None:
            checks.append(DesignCheck("threshold margin", None, "the spec gives no vgs_th_v"))
        else:
            thr_margin = worst.limit.vgs_v - vth
            # The margin over Vgs(th) says the channel is on; only a |Vgs| the spec states R_DS(on) at says
            # how well: below it the predicted loss leans on an extrapolation nothing guarantees.
            backed = guaranteed is None or worst.limit.vgs_v >= guaranteed
            text = (f"|Vgs| {worst.limit.vgs_v:.3g} V at the lowest input {design.vin_min_v:g} V, "
                    f"{thr_margin:.2f} V above Vgs(th) {vth:g} V (wanted ≥ {m.threshold_margin_v:g} V); "
                    f"conduction: {worst.limit.conduction}")
            if guaranteed is not None:
                text += (f"; the spec states R_DS(on) down to |Vgs| {guaranteed:g} V"
                         + ("" if backed else ": below it the predicted loss is not guaranteed"))
            checks.append(DesignCheck(
                "threshold margin",
                thr_margin >= m.threshold_margin_v and worst.limit.conduction == "channel" and backed, text))
        takeover = takeover_input_v(spec, design.load_max_a, ta, zener_v=zener)
        if takeover.input_v is None:
            checks.append(DesignCheck("body-diode takeover", None, takeover.note))
        else:
            checks.append(DesignCheck(
                "body-diode takeover", takeover.input_v < design.vin_min_v,
                f"{takeover.note}; the lowest input is {design.vin_min_v:g} V"))
        if clamp is not None:
            checks.append(DesignCheck(
                "gate clamp power", clamp.zener_ok,
                f"zener {clamp.zener_current_a * 1e3:.3g} mA, {clamp.zener_power_w * 1e3:.3g} mW; resistor "
                f"{clamp.resistor_ohm:g} Ω, {clamp.resistor_power_w * 1e3:.3g} mW (use ≥ {clamp.resistor_rating_w:g} W)"))

    # Reverse leakage (and its own heating) at the reverse voltage and the maximum ambient.
    leak_a = rev_tj = None
    if design.reverse_v is not None and spec.element.blocks_reverse:
        leak = reverse_leakage(spec, design.reverse_v, ta)
        if leak.current_a is None:
            checks.append(DesignCheck("reverse leakage", None, leak.note))
        else:
            sol = solve_junction(lambda t: design.reverse_v * reverse_leakage(spec, design.reverse_v, t).current_a,
                                 ta, spec.thermal.rth_ja_k_per_w)
            leak_a = reverse_leakage(spec, design.reverse_v, sol.tj_c).current_a if sol.converged else None
            rev_tj = sol.tj_c
            if not sol.converged:
                checks.append(DesignCheck("reverse leakage", False, f"reversed at {design.reverse_v:g} V: {sol.message}"))
            else:
                checks.append(DesignCheck(
                    "reverse leakage", leak_a <= m.leakage_max_a,
                    f"{engineering(leak_a, 'A', 3)} at {design.reverse_v:g} V reversed, Tj {rev_tj:.1f} °C "
                    f"(wanted ≤ {engineering(m.leakage_max_a, 'A', trim=True)}){'; ' + leak.note if leak.note else ''}"))
    current_rating, check_name, symbol = spec.part.current_rating
    if current_rating is not None:
        checks.append(DesignCheck(check_name, design.load_max_a <= current_rating,
                                  f"{design.load_max_a:g} A against {symbol} rating {current_rating:g} A"))

    return CandidateReview(
        label=cand.label, part=spec.name, kind=spec.kind, spec_path=spec.path,
        drop_v=nominal.drop_v, loss_w=nominal.loss_w, efficiency=efficiency,
        tj_c=w.tj_c, tj_max_c=tj_max, tj_margin_k=margin, worst_loss_w=w.loss_w,
        blocking_rating_v=rating, blocking_needed_v=needed, blocking_headroom_v=headroom,
        vgs_unclamped_v=vgs_un, vgs_clamped_v=vgs_cl, vgs_max_v=vgs_max, threshold_margin_v=thr_margin,
        min_input_conduction=min_mode, leakage_a=leak_a, reverse_tj_c=rev_tj,
        nominal=nominal, worst=worst, checks=tuple(checks), takeover=takeover, guaranteed_vgs_v=guaranteed,
    )


# --------------------------------------------------------------------------- the review
@dataclass(frozen=True)
class DesignReview:
    design: Design
    candidates: tuple[CandidateReview, ...]
    clamp: ClampSizing | None
    recommended: str | None  # the label of the recommended candidate
    recommendation: str
    reasons: tuple[str, ...]
    reminders: tuple[str, ...]
    margins_note: str


def review(design: Design) -> DesignReview:
    """Review every candidate and recommend the lowest-loss one that meets every check."""
    clamp = (size_clamp(design.clamp, design.vin_max_v, design.margins.power_derating, design.vin_nominal_v)
             if design.clamp else None)
    rows = tuple(review_candidate(design, c, clamp) for c in design.candidates)
    ok = [r for r in rows if r.acceptable and r.worst_loss_w is not None]
    reasons: list[str] = []
    if ok:
        best = min(ok, key=lambda r: r.worst_loss_w)
        others = [r for r in rows if r is not best]
        reasons.append(f"meets every check ({len(best.checks)}) at the design's worst case")
        for r in others:
            if r.acceptable and r.worst_loss_w is not None:
                reasons.append(f"lowest worst-case loss: {best.worst_loss_w:.3g} W against {r.worst_loss_w:.3g} W "
                               f"for {r.label}")
            else:
                reasons.append(f"{r.label} fails: " + "; ".join(c.name for c in r.failed))
        if best.efficiency is not None:
            reasons.append(f"efficiency {best.efficiency * 100:.2f} % at nominal input and load")
        if best.tj_margin_k is not None:
            reasons.append(f"Tj margin {best.tj_margin_k:.0f} K at {design.ambient_max_c:g} °C ambient")
        text = f"recommended: {best.label} ({best.part})"
        if clamp is not None and element_kind(best.kind).has_gate:
            text += f", with the {clamp.zener_v:g} V zener and {clamp.resistor_ohm:g} Ω gate clamp"
        recommended = best.label
    else:
        recommended = None
        text = "no candidate meets every check"
        for r in rows:
            reasons.append(f"{r.label}: " + ("; ".join(f"{c.name} ({c.detail})" for c in r.failed) or "no loss result"))
    reminders = [REMINDERS[design.application]] if design.application in REMINDERS else []
    for r in rows:
        k = element_kind(r.kind)
        if k.switches_ground:
            reminders.append(SWITCHED_GROUND.format(label=r.label))
        if k.has_gate and k.passive_gate:
            reminders.append(REVERSE_CONDUCTION.format(label=r.label, rail=k.gate_to))
    if clamp is not None and clamp.quiescent_a is not None and any(element_kind(r.kind).has_gate for r in rows):
        reminders.append(clamp_drain_text(clamp))
    reminders.append(GENERAL_CAUTION)
    m = design.margins
    margins_note = (f"margins: voltage ratings used to {m.voltage_derating * 100:g} %, Tj ≥ {m.tj_margin_k:g} K below "
                    f"Tj max, zener/resistor power to {m.power_derating * 100:g} % of rating, reverse leakage ≤ "
                    f"{m.leakage_max_a * 1e6:g} µA, |Vgs| ≥ Vgs(th) + {m.threshold_margin_v:g} V at the lowest input")
    return DesignReview(design, rows, clamp, recommended, text, tuple(reasons), tuple(reminders), margins_note)


__all__ = [
    "Design", "Margins", "ClampDesign", "Candidate", "ClampSizing", "DesignCheck", "CandidateReview",
    "DesignReview", "review", "size_clamp", "clamp_currents", "suggest_zener_v",
]
