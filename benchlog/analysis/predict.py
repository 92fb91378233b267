"""Loss prediction from a part spec at an operating point (current, ambient, input voltage), with self-heating.

Models, each a textbook form scaled through the one datasheet point we have:
- diode: Shockley's law with an ideality factor (Sze, *Physics of Semiconductor
  Devices*, ch. 2), Vf(I, Tj) = Vf0 + n·Vt(Tj)·ln(I/I0) + Rs·(I − I0) + dVf/dT·(Tj − T0),
  Vt = k·T/q; loss = Vf·I;
- MOSFET channel in its linear region: R_DS(on)(Vgs) = Rf + K/(Vgs − Vth)
  (square-law device, triode region for small Vds: Id = K'(Vgs − Vth)·Vds, so
  the channel part ∝ 1/(Vgs − Vth); Rf is the Vgs-independent rest — drift
  region, bond wires — fitted when the spec gives R_DS(on) at two gate
  voltages, else 0, the cautious choice). Above the highest datasheet Vgs no
  further fall is credited (also cautious). R_DS(on)(Tj) follows the spec's
  tempco or normalised curve. Loss = I²·R_DS(on), with the body diode in
  parallel (it takes over below threshold);
- P-MOSFET in the supply line with its gate to ground, and N-MOSFET in the
  return with its gate to the input (Kirchhoff's voltage law gives both the
  same magnitude): |Vgs| = Vin − drop, clamped at the zener voltage when the
  design has one;
- resistor: R(Tj) = R0·(1 + α(Tj − T0)).
The junction temperature comes from `thermal.solve_junction`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from benchlog.ambient import DEFAULT_AMBIENT_C
from benchlog.badinput import BadInput

from .spec import (
    DEFAULT_BODY_DIODE,
    DEFAULT_IR_DOUBLING_K,
    DEFAULT_RDS_ON_TEMPCO_PER_K,
    DiodeSpec,
    MosfetSpec,
    PartSpec,
)
from .roots import brent_root
from .si_constants import BOLTZMANN_J_PER_K as Boltzmann, ELEMENTARY_CHARGE_C as elementary_charge, \
    ZERO_C_K as zero_Celsius
from .thermal import ThermalSolution, solve_junction

#: Body-diode share of the current below which we call the conduction "channel" (and above 1 − it "body_diode").
BODY_SHARE_NEGLIGIBLE = 0.01
BODY_VF_TEMPCO_V_PER_K = -2.0e-3  # silicon junction, common practice


def thermal_voltage_v(tj_c: float) -> float:
    """Vt = k·T/q (CODATA constants via scipy.constants)."""
    return Boltzmann * (tj_c + zero_Celsius) / elementary_charge


@dataclass(frozen=True)
class OperatingPoint:
    """One variant (typical or maximum datasheet values) at one operating point, after the thermal loop."""

    variant: str  # "typical" | "max"
    drop_v: float | None
    loss_w: float | None
    tj_c: float | None
    iterations: int
    converged: bool
    runaway: bool
    over_tj_max: bool
    conduction: str  # "forward", "channel", "channel+body_diode", "body_diode", "resistive", "none"
    vgs_v: float | None  # |Vgs| at the solution, MOSFETs only
    resistance_ohm: float | None  # R_DS(on) or R at Tj (channel only), None for diodes
    body_share: float | None  # fraction of the current in the body diode, MOSFETs only
    method: str
    message: str


@dataclass(frozen=True)
class Prediction:
    """Typical and (when the spec gives one) maximum prediction; attribute shortcuts read the typical one."""

    part: str
    kind: str
    current_a: float
    ambient_c: float
    vin_v: float | None
    zener_v: float | None
    tj_max_c: float | None
    typical: OperatingPoint
    maximum: OperatingPoint | None
    notes: tuple[str, ...]

    drop_v = property(lambda self: self.typical.drop_v)
    loss_w = property(lambda self: self.typical.loss_w)
    tj_c = property(lambda self: self.typical.tj_c)
    iterations = property(lambda self: self.typical.iterations)
    converged = property(lambda self: self.typical.converged)
    runaway = property(lambda self: self.typical.runaway)
    conduction = property(lambda self: self.typical.conduction)
    vgs_v = property(lambda self: self.typical.vgs_v)

    @property
    def limit(self) -> OperatingPoint:
        """The variant a verdict is judged against: the maximum when the spec has one, else the typical."""
        return self.maximum if self.maximum is not None else self.typical


# --------------------------------------------------------------------------- diodes
def _diode_params(spec: PartSpec, notes: list[str]) -> tuple[float, float]:
    d = spec.part
    n = d.ideality
    if n is None:
        n, why = spec.element.default_ideality
        notes.append(f"ideality n = {n:g} assumed: {why}")
    tc = d.vf_tempco_v_per_k
    if tc is None:
        tc, why = spec.element.default_vf_tempco_v_per_k
        notes.append(f"Vf tempco {tc * 1e3:g} mV/K assumed: {why}")
    return n, tc


def diode_drop_v(d: DiodeSpec, n: float, tempco_v_per_k: float, current_a: float, tj_c: float, vf_ref_v: float) -> float:
    """Forward drop by the diode law through the datasheet point (vf_ref_v at vf_at_a, vf_at_c)."""
    if current_a <= 0.0:
        return 0.0
    v = (
        vf_ref_v
        + n * thermal_voltage_v(tj_c) * math.log(current_a / d.vf_at_a)
        + d.rs_ohm * (current_a - d.vf_at_a)
        + tempco_v_per_k * (tj_c - d.vf_at_c)
    )
    return max(v, 0.0)


# --------------------------------------------------------------------------- MOSFETs
@dataclass(frozen=True)
class ChannelModel:
    """R_DS(on)(Vgs, Tj) = R_ref · h(Vgs)/h(V_ref) · f(Tj)/f(T_ref), h(V) = Rf + K/(V − Vth)."""

    r_ref_ohm: float
    vgs_ref_v: float
    vth_v: float | None  # None: the spec gives no threshold, so no Vgs dependence is modelled
    rf_ohm: float  # Vgs-independent part of h (at the typical R_ref scale)
    k_ohm_v: float
    temperature_factor: Callable[[float], float]
    vgs_top_v: float = math.inf  # no credit for drive above the highest datasheet point

    def rds_on_ohm(self, vgs_v: float, tj_c: float) -> float:
        vgs_v = min(vgs_v, self.vgs_top_v)
        if self.vth_v is None:
            shape = 1.0
        elif vgs_v <= self.vth_v:
            return math.inf
        else:
            h = lambda v: self.rf_ohm + self.k_ohm_v / (v - self.vth_v)  # noqa: E731
            shape = h(vgs_v) / h(self.vgs_ref_v)
        return self.r_ref_ohm * shape * self.temperature_factor(tj_c)


def _temperature_factor(m: MosfetSpec, notes: list[str]) -> Callable[[float], float]:
    if m.rds_on_tj_c is not None:
        tj = np.asarray(m.rds_on_tj_c)
        fac = np.asarray(m.rds_on_factor)

        def curve(t: float) -> float:
            # Linear interpolation in the datasheet curve; the end segments are extended.
            if t <= tj[0]:
                i = 0
            elif t >= tj[-1]:
                i = len(tj) - 2
            else:
                return float(np.interp(t, tj, fac))
            slope = (fac[i + 1] - fac[i]) / (tj[i + 1] - tj[i])
            return float(fac[i] + slope * (t - tj[i]))

        ref = curve(m.rds_on_at_c)
        if not (m.rds_on_tj_c[0] <= m.rds_on_at_c <= m.rds_on_tj_c[-1]):
            notes.append("R_DS(on)-vs-Tj curve extended linearly beyond its end points")
        return lambda t: curve(t) / ref
    alpha = m.rds_on_tempco_per_k
    if alpha is None:
        alpha, why = DEFAULT_RDS_ON_TEMPCO_PER_K
        notes.append(f"R_DS(on) tempco {alpha * 100:g} %/K assumed: {why}")
    return lambda t: 1.0 + alpha * (t - m.rds_on_at_c)


def channel_model(m: MosfetSpec, variant: str, notes: list[str]) -> ChannelModel:
    """Build the channel model for the typical or the maximum datasheet values."""
    factor = _temperature_factor(m, notes)
    r_ref = m.rds_on_max_ohm if variant == "max" else m.rds_on_ohm
    vth = m.vgs_th_v
    if variant == "max" and m.vgs_th_max_v is not None:
        vth = m.vgs_th_max_v  # a high-threshold part is the worst case at low gate drive
    if vth is None:
        if variant == "typical":
            notes.append("no vgs_th_v in the spec: R_DS(on) taken as independent of Vgs")
        return ChannelModel(r_ref, m.rds_on_vgs_v, None, r_ref, 0.0, factor)
    # The shape Rf + K/(V − Vth) is fixed by the typical data; the max variant keeps it
    # with its own threshold and is scaled to rds_on_max_ohm at rds_on_vgs_v.
    vt0 = m.vgs_th_v if m.vgs_th_v is not None else vth
    rf, k = 0.0, m.rds_on_ohm * (m.rds_on_vgs_v - vt0)
    if m.rds_on_2_ohm is not None:
        v1, r1, v2, r2 = m.rds_on_vgs_v, m.rds_on_ohm, m.rds_on_2_vgs_v, m.rds_on_2_ohm
        k2 = (r2 - r1) / (1.0 / (v2 - vt0) - 1.0 / (v1 - vt0))
        rf2 = r1 - k2 / (v1 - vt0)
        if k2 > 0 and rf2 >= 0:
            rf, k = rf2, k2
        elif variant == "typical":
            notes.append("the two R_DS(on) points do not fit Rf + K/(Vgs − Vth) with Rf ≥ 0; using the first only")
    elif variant == "typical":
        notes.append("one R_DS(on) point only: all of it taken as channel, ∝ 1/(Vgs − Vth) (cautious at low Vgs)")
    top = max(m.rds_on_vgs_v, m.rds_on_2_vgs_v or 0.0)
    return ChannelModel(r_ref, m.rds_on_vgs_v, vth, rf, k, factor, top)


@dataclass(frozen=True)
class BodyDiode:
    vf_v: float
    at_a: float
    ideality: float

    def drop_v(self, current_a: float, tj_c: float) -> float:
        if current_a <= 0.0:
            return 0.0
        v = self.vf_v + self.ideality * thermal_voltage_v(tj_c) * math.log(current_a / self.at_a)
        return max(v + BODY_VF_TEMPCO_V_PER_K * (tj_c - 25.0), 0.0)

    def current_a(self, v: float, tj_c: float) -> float:
        v0 = self.vf_v + BODY_VF_TEMPCO_V_PER_K * (tj_c - 25.0)
        return self.at_a * math.exp((v - v0) / (self.ideality * thermal_voltage_v(tj_c)))


def body_diode(m: MosfetSpec, notes: list[str]) -> BodyDiode:
    if m.body_vf_v is None:
        vf, at, n, why = DEFAULT_BODY_DIODE
        notes.append(why)
        return BodyDiode(vf, at, n)
    return BodyDiode(m.body_vf_v, m.body_vf_at_a, m.body_ideality or DEFAULT_BODY_DIODE[2])


def channel_with_body(current_a: float, r_ohm: float, body: BodyDiode, tj_c: float) -> tuple[float, float]:
    """Drop and body-diode share for the channel in parallel with the body diode: V/R + Id(V) = I."""
    vb = body.drop_v(current_a, tj_c)
    if not math.isfinite(r_ohm):
        return vb, 1.0
    if current_a <= 0.0:
        return 0.0, 0.0
    f = lambda v: v / r_ohm + body.current_a(v, tj_c) - current_a  # noqa: E731
    if f(0.0) >= 0.0 or vb <= 0.0:
        return 0.0, 1.0
    v, _ = brent_root(f, 0.0, vb, xtol=1e-12, rtol=1e-12)
    return v, min(max(body.current_a(v, tj_c) / current_a, 0.0), 1.0)


# --------------------------------------------------------------------------- the prediction
def _check_args(current_a, ambient_c, vin_v, zener_v) -> None:
    for name, value, lo in (("current_a", current_a, 0.0), ("ambient_c", ambient_c, -273.15),
                            ("vin_v", vin_v, 0.0), ("zener_v", zener_v, 0.0)):
        if value is None and name in ("vin_v", "zener_v"):
            continue
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) or value < lo:
            raise BadInput("argument", name, f"is {value!r}", f"a finite number of at least {lo:g}")


def predict(
    spec: PartSpec,
    current_a: float,
    ambient_c: float = DEFAULT_AMBIENT_C,
    vin_v: float | None = None,
    zener_v: float | None = None,
) -> Prediction:
    """Drop, loss and junction temperature of `spec` carrying `current_a` at `ambient_c`.

    `vin_v` sets the gate drive of a MOSFET with its gate to ground (|Vgs| = Vin − drop,
    clamped at `zener_v`); without it the gate is taken as driven at the spec's rds_on_vgs_v.
    """
    _check_args(current_a, ambient_c, vin_v, zener_v)
    notes: list[str] = []
    variants = ["typical"] + (["max"] if spec.has_max else [])
    points = {}
    for variant in variants:
        drop_at = _drop_function(spec, variant, current_a, vin_v, zener_v, notes)
        solution = solve_junction(lambda t: current_a * drop_at(t)[0], ambient_c, spec.thermal.rth_ja_k_per_w)
        points[variant] = _operating_point(spec, variant, current_a, solution, drop_at)
    if vin_v is None and spec.element.has_gate:
        notes.append(f"no input voltage given: gate taken as driven at {spec.part.rds_on_vgs_v:g} V (the spec's rds_on_vgs_v)")
    if not spec.has_max:
        notes.append("the spec gives no maximum; only the typical prediction exists")
    return Prediction(
        part=spec.name, kind=spec.kind, current_a=float(current_a), ambient_c=float(ambient_c),
        vin_v=vin_v, zener_v=zener_v, tj_max_c=spec.thermal.tj_max_c,
        typical=points["typical"], maximum=points.get("max"), notes=tuple(dict.fromkeys(notes)),
    )


# The drop function returns (drop_v, conduction, vgs_v, resistance_ohm, body_share) at a Tj.
DropAt = Callable[[float], tuple[float, str, float | None, float | None, float | None]]


def _drop_function(spec, variant, current_a, vin_v, zener_v, notes) -> DropAt:
    """The drop model of the spec's family (the registry's `family`)."""
    return _DROP_MODELS[spec.element.family](spec, variant, current_a, vin_v, zener_v, notes)


def _diode_drop(spec, variant, current_a, vin_v, zener_v, notes) -> DropAt:
    n, tc = _diode_params(spec, notes)
    d = spec.part
    ref = d.vf_max_v if variant == "max" else d.vf_v
    return lambda t: (diode_drop_v(d, n, tc, current_a, t, ref), "forward", None, None, None)


def _resistor_drop(spec, variant, current_a, vin_v, zener_v, notes) -> DropAt:
    r = spec.part
    r0 = r.resistance_max_ohm if variant == "max" else r.resistance_ohm

    def resistive(t):
        rt = r0 * (1.0 + r.resistance_tempco_per_k * (t - r.resistance_at_c))
        return current_a * rt, "resistive", None, rt, None

    return resistive


def _mosfet_drop(spec, variant, current_a, vin_v, zener_v, notes) -> DropAt:
    channel = channel_model(spec.part, variant, notes)
    body = body_diode(spec.part, notes)

    def mosfet(t):
        if vin_v is None:
            vgs = spec.part.rds_on_vgs_v
            r = channel.rds_on_ohm(vgs, t)
            drop, share = channel_with_body(current_a, r, body, t)
        else:
            def gate(d: float) -> float:
                v = vin_v - d
                return min(v, zener_v) if zener_v is not None else v

            # Start where a powered-up circuit starts, on the body diode, and let the channel
            # take over: d -> V(d) rises with d, so from the body-diode drop the iteration falls
            # monotonically to the largest self-consistent drop (the one the circuit reaches).
            drop = body.drop_v(current_a, t)
            for _ in range(500):
                new = channel_with_body(current_a, channel.rds_on_ohm(gate(drop), t), body, t)[0]
                if abs(new - drop) <= 1e-12:
                    break
                drop = new
            vgs = gate(drop)
            r = channel.rds_on_ohm(vgs, t)
            drop, share = channel_with_body(current_a, r, body, t)
        if current_a <= 0:
            mode = "none"
        elif share >= 1.0 - BODY_SHARE_NEGLIGIBLE:
            mode = "body_diode"
        elif share > BODY_SHARE_NEGLIGIBLE:
            mode = "channel+body_diode"
        else:
            mode = "channel"
        return drop, mode, max(vgs, 0.0), (r if math.isfinite(r) else None), share

    return mosfet


_DROP_MODELS = {"diode": _diode_drop, "mosfet": _mosfet_drop, "resistor": _resistor_drop}


def _operating_point(spec, variant, current_a, solution: ThermalSolution, drop_at: DropAt) -> OperatingPoint:
    if solution.tj_c is None:
        return OperatingPoint(variant, None, None, None, solution.iterations, solution.converged, solution.runaway,
                              False, "unknown", None, None, None, solution.method, solution.message)
    drop, mode, vgs, r, share = drop_at(solution.tj_c)
    if current_a <= 0:
        mode = "none"
    tj_max = spec.thermal.tj_max_c
    over = tj_max is not None and solution.tj_c > tj_max
    message = solution.message
    if over:
        message += f"; Tj {solution.tj_c:.1f} °C is above Tj max {tj_max:g} °C: outside the part's rating"
    return OperatingPoint(variant, drop, drop * current_a, solution.tj_c, solution.iterations, True, False, over,
                          mode, vgs, r, share, solution.method, message)


# --------------------------------------------------------------------------- reverse leakage
@dataclass(frozen=True)
class Leakage:
    current_a: float | None
    reverse_v: float
    tj_c: float
    note: str


def reverse_leakage(spec: PartSpec, reverse_v: float, tj_c: float) -> Leakage:
    """Reverse (blocking) leakage at `reverse_v` and `tj_c`, scaled from the datasheet point.

    Temperature: leakage doubles every `ir_doubling_k` kelvin (default 10 K, common practice).
    Voltage: at or below the datasheet's test voltage the datasheet value is used (leakage rises
    with reverse voltage, so this is cautious); above it the value is scaled in proportion.
    """
    if not spec.element.blocks_reverse:
        return Leakage(None, reverse_v, tj_c, f"a {spec.element.title} does not block")
    value, at_v, at_c, doubling = spec.part.leakage
    rating, _symbol, rating_key = spec.part.blocking
    if value is None:
        return Leakage(None, reverse_v, tj_c, "the spec gives no reverse leakage")
    notes = []
    if doubling is None:
        doubling, why = DEFAULT_IR_DOUBLING_K
        notes.append(why)
    scaled = value * 2.0 ** ((tj_c - at_c) / doubling)
    if reverse_v > at_v:
        scaled *= reverse_v / at_v
        notes.append(f"scaled in proportion from {at_v:g} V")
    if rating is not None and reverse_v > rating:
        notes.append(f"{reverse_v:g} V is beyond {rating_key} = {rating:g} V: breakdown, not leakage")
    return Leakage(scaled, reverse_v, tj_c, "; ".join(notes))


__all__ = [
    "OperatingPoint", "Prediction", "Leakage", "ChannelModel", "BodyDiode",
    "predict", "reverse_leakage", "diode_drop_v", "channel_model", "thermal_voltage_v"
]
