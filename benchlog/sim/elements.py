"""The protection elements under test: rectifier, Schottky, P- and N-MOSFET with their body diodes, resistor.

Every element answers two questions for the circuit solver: the forward drop
at a given current (a MOSFET also needs its input voltage, because its gate is
tied to the supply and |Vgs| comes from the circuit), and the reverse current
at a given reverse voltage. Which physics a kind gets is the registry's
`family` (benchlog.kinds).

Sources of the formulas:
- Shockley diode with series resistance, V = n·Vt·ln(I/Is + 1) + I·Rs, Vt = kT/q
  (any semiconductor text, e.g. Sze, "Physics of Semiconductor Devices", ch. 2);
  k and q from scipy.constants (exact SI values since 2019).
- Temperature: Is(T) = A·exp(-Vb/(n·Vt)) (activation form), which gives
  dVj/dT = (Vj - Vb)/T; Vb is chosen so that Vf falls by the element's tempco
  (about 2 mV/K for silicon, common practice) at the reference current.
- Reverse leakage doubles about every 10 K (common practice for Schottky diodes;
  used for all elements with its own doubling interval).
- MOSFET (P- or N-channel): channel off for |Vgs| <= Vth; above it R_DS(on) = r_on·[(1-f) +
  f·(Vfull - Vth)/(min(|Vgs|, Vfull) - Vth)]·(1 + α·(Tj - 25 °C)), i.e. a fixed
  part (drift region, package) plus a channel part inversely proportional to
  the gate overdrive, flat from the full-enhancement Vgs on (common practice).
- Gate wiring (Kirchhoff's voltage law): a P-MOSFET in the supply line with its
  gate on the return has its source at the input less the drop, so
  Vgs = -(Vin - drop); an N-MOSFET in the return with its gate on the input has
  its source at the board's ground, the drop above the supply's return, so
  Vgs = +(Vin - drop). Same |Vgs|, opposite sign; reversed, both gates are off.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields, replace
from typing import Mapping

from scipy import constants
from scipy.optimize import brentq
from scipy.special import lambertw

from benchlog.kinds import ELEMENT_KINDS, kind as element_kind

from .thermal import Thermal

T0_C = 25.0
KELVIN = constants.zero_Celsius
BOLTZMANN_OVER_Q = constants.k / constants.e  # V/K


def thermal_voltage_v(temperature_c: float) -> float:
    """Vt = kT/q."""
    return BOLTZMANN_OVER_Q * (temperature_c + KELVIN)


def shockley_drop_v(current_a: float, i_s_a: float, ideality: float, r_s_ohm: float, temperature_c: float) -> float:
    """V = n·Vt·ln(I/Is + 1) + I·Rs at a fixed Is (no temperature law)."""
    nvt = ideality * thermal_voltage_v(temperature_c)
    return nvt * math.log1p(current_a / i_s_a) + current_a * r_s_ohm


def _w_of_exp(x: float) -> float:
    """W(e^x) without overflow: the Lambert W function of an exponential."""
    if x < 500.0:
        return float(lambertw(math.exp(x)).real)
    w = x - math.log(x)  # w + ln w = x, solved by Newton from the asymptote
    for _ in range(50):
        step = (w + math.log(w) - x) / (1.0 + 1.0 / w)
        w -= step
        if abs(step) < 1e-15 * w:
            break
    return w


def shockley_current_a(drop_v: float, i_s_a: float, ideality: float, r_s_ohm: float, temperature_c: float) -> float:
    """Inverse of `shockley_drop_v`: the current at a given drop (closed form with Lambert W)."""
    if drop_v <= 0:
        return 0.0
    nvt = ideality * thermal_voltage_v(temperature_c)
    plain = i_s_a * math.expm1(drop_v / nvt) if drop_v < 700 * nvt else math.inf
    if r_s_ohm <= 0 or plain * r_s_ohm < 1e-9 * nvt:
        return plain  # the series resistance changes nothing measurable: skip Lambert W
    # V = nVt ln(I/Is + 1) + I Rs  =>  I + Is = (nVt/Rs) W((Is Rs/nVt) exp((V + Is Rs)/nVt))
    x = math.log(i_s_a * r_s_ohm / nvt) + (drop_v + i_s_a * r_s_ohm) / nvt
    return max(0.0, nvt / r_s_ohm * _w_of_exp(x) - i_s_a)


def gate_source_v(input_v: float, drop_v: float, zener_v: float | None, channel: str = "p") -> float:
    """Vgs of a protection MOSFET whose gate is tied to the supply (module docstring).

    P-channel in the supply line, gate on the return: Vgs = -(input - drop).
    N-channel in the return, gate on the input: Vgs = +(input - drop).
    A zener from gate to source clamps |Vgs| to its voltage (common practice in
    reverse-protection circuits). The enhancing sign is negative for P, positive for N.
    """
    vgs = (input_v - drop_v) * (-1.0 if channel == "p" else 1.0)
    if zener_v is not None:
        vgs = max(-zener_v, min(zener_v, vgs))
    return vgs


@dataclass(frozen=True)
class Leakage:
    """Reverse current: I_R = I_R25·2^((Tj-25)/doubling)·(1 - exp(-Vr/Vt))·(1 + Vr/v_scale)·M(Vr).

    (1 - exp(-Vr/Vt)) is Shockley's reverse branch, I = I_S·(exp(-V/Vt) - 1): the current
    saturates at I_S once Vr is a few Vt (Sze, ch. 2). (1 + Vr/v_scale) is the slow rise real
    junctions show above saturation (generation in the widening depletion layer, barrier
    lowering: common practice). M(Vr) = 1/(1 - (Vr/BV)^m) is Miller's empirical avalanche
    multiplication (S. L. Miller, Phys. Rev. 99, 1234, 1955), the soft knee below breakdown;
    above 0.999·BV it is held at its value there (the sim's supply limit does the rest).
    """

    leak_a: float
    doubling_k: float = 10.0
    v_scale_v: float = 20.0
    breakdown_v: float | None = None
    breakdown_m: float = 4.0

    def multiplication(self, reverse_v: float) -> float:
        if self.breakdown_v is None:
            return 1.0
        x = min(reverse_v / self.breakdown_v, 0.999)
        return 1.0 / (1.0 - x ** self.breakdown_m)

    def current_a(self, reverse_v: float, temperature_c: float) -> float:
        if reverse_v <= 0:
            return 0.0
        saturation = -math.expm1(-reverse_v / thermal_voltage_v(temperature_c))
        scale = self.leak_a * 2.0 ** ((temperature_c - T0_C) / self.doubling_k)
        return scale * saturation * (1.0 + reverse_v / self.v_scale_v) * self.multiplication(reverse_v)


@dataclass(frozen=True)
class DiodeLaw:
    """Shockley with series resistance and a temperature law fixed by the Vf tempco at `tempco_ref_a`."""

    ideality: float
    i_s_a: float  # at 25 °C
    r_s_ohm: float
    tempco_v_per_k: float  # dVf/dT at tempco_ref_a, 25 °C (negative)
    tempco_ref_a: float = 1.0

    @property
    def barrier_v(self) -> float:
        vj = self.ideality * thermal_voltage_v(T0_C) * math.log1p(self.tempco_ref_a / self.i_s_a)
        return vj - self.tempco_v_per_k * (T0_C + KELVIN)

    def i_s_at(self, temperature_c: float) -> float:
        # Is(T) = A exp(-Vb/(n Vt(T))) normalised to Is at 25 °C
        n, vb = self.ideality, self.barrier_v
        return self.i_s_a * math.exp(vb / n * (1.0 / thermal_voltage_v(T0_C) - 1.0 / thermal_voltage_v(temperature_c)))

    def drop_v(self, current_a: float, temperature_c: float) -> float:
        return shockley_drop_v(current_a, self.i_s_at(temperature_c), self.ideality, self.r_s_ohm, temperature_c)

    def current_a(self, drop_v: float, temperature_c: float) -> float:
        return shockley_current_a(drop_v, self.i_s_at(temperature_c), self.ideality, self.r_s_ohm, temperature_c)


def thermal_of(params) -> Thermal:
    """The element's junction–case–ambient network from its parameters."""
    return Thermal(params.rth_ja_k_per_w, params.cth_j_per_k, params.rth_jc_k_per_w, params.cth_case_j_per_k)


def thermal_truth(thermal: Thermal) -> dict:
    """The network's true figures: RθJA, its parts, the time constants and the Foster terms (dominant first)."""
    return {
        "rth_ja_k_per_w": thermal.rth_ja_k_per_w, "cth_j_per_k": thermal.cth_j_per_k,
        "rth_jc_k_per_w": thermal.rth_jc_k_per_w, "cth_case_j_per_k": thermal.cth_case_j_per_k,
        "tau_s": list(thermal.tau_s), "foster_rth_k_per_w": [r for r, _ in thermal.foster()],
    }


class Element:
    """Interface the circuit solver uses."""

    kind: str
    thermal: Thermal
    gate_driven = False

    def forward_drop_v(self, current_a: float, temperature_c: float, *, input_v: float | None = None,
                       source_v: float | None = None) -> float:
        raise NotImplementedError

    def reverse_current_a(self, reverse_v: float, temperature_c: float) -> float:
        raise NotImplementedError

    def conduction(self, current_a: float, temperature_c: float, vgs_v: float | None) -> str:
        return "forward" if current_a > 0 else ("reverse" if current_a < 0 else "none")

    def truth(self) -> dict:
        raise NotImplementedError


@dataclass(frozen=True)
class DiodeParams:
    ideality: float
    i_s_a: float
    r_s_ohm: float
    tempco_v_per_k: float
    leak_a: float
    leak_doubling_k: float
    rth_ja_k_per_w: float
    cth_j_per_k: float
    rth_jc_k_per_w: float = 0.0  # junction to case; the rest of RθJA is case to ambient
    cth_case_j_per_k: float = 0.0  # the case node's heat capacity; 0: the single-pole model
    breakdown_v: float | None = None  # soft reverse breakdown (Leakage.multiplication); None: none modelled


class Diode(Element):
    def __init__(self, kind: str, params: DiodeParams) -> None:
        self.kind = kind
        self.params = params
        self.law = DiodeLaw(params.ideality, params.i_s_a, params.r_s_ohm, params.tempco_v_per_k)
        self.leakage = Leakage(params.leak_a, params.leak_doubling_k, breakdown_v=params.breakdown_v)
        self.thermal = thermal_of(params)

    def forward_drop_v(self, current_a, temperature_c, *, input_v=None, source_v=None):
        return self.law.drop_v(current_a, temperature_c) if current_a > 0 else 0.0

    def reverse_current_a(self, reverse_v, temperature_c):
        return self.leakage.current_a(reverse_v, temperature_c)

    def truth(self) -> dict:
        p = self.params
        return {
            "kind": self.kind, "ideality": p.ideality, "i_s_a": p.i_s_a, "r_s_ohm": p.r_s_ohm,
            "tempco_v_per_k": p.tempco_v_per_k, "tempco_ref_a": self.law.tempco_ref_a,
            "vf_at_1a_v": self.law.drop_v(1.0, T0_C), "reverse_leak_a": p.leak_a,
            "reverse_leak_doubling_k": p.leak_doubling_k, "reverse_v_scale_v": self.leakage.v_scale_v,
            "reverse_breakdown_v": p.breakdown_v, "reverse_breakdown_m": self.leakage.breakdown_m,
            **thermal_truth(self.thermal),
        }


@dataclass(frozen=True)
class MosfetParams:
    r_on_ohm: float  # at 25 °C and full enhancement
    vgs_th_v: float
    vgs_full_v: float
    channel_fraction: float
    tempco_per_k: float
    zener_v: float | None
    gate_resistor_ohm: float
    body_ideality: float
    body_i_s_a: float
    body_r_s_ohm: float
    body_tempco_v_per_k: float
    leak_a: float
    leak_doubling_k: float
    rth_ja_k_per_w: float
    cth_j_per_k: float
    rth_jc_k_per_w: float = 0.0  # junction to case; the rest of RθJA is case to ambient
    cth_case_j_per_k: float = 0.0  # the case node's heat capacity; 0: the single-pole model


class Mosfet(Element):
    """A MOSFET as reverse protection, its gate tied to the supply (module docstring).

    P-channel: drain at the input, source to the load, gate to the return.
    N-channel: drain at the supply's return, source to the board's ground, gate to the input.
    """

    gate_driven = True

    def __init__(self, kind: str, params: MosfetParams) -> None:
        self.kind = kind
        self.channel = element_kind(kind).channel
        self._enhance_sign = -1.0 if self.channel == "p" else 1.0
        self.params = params
        self.body = DiodeLaw(params.body_ideality, params.body_i_s_a, params.body_r_s_ohm, params.body_tempco_v_per_k)
        self.leakage = Leakage(params.leak_a, params.leak_doubling_k)
        self.thermal = thermal_of(params)

    def channel_ohm(self, vgs_v: float, temperature_c: float) -> float | None:
        """R_DS(on) at this Vgs and Tj; None when the channel is off."""
        p = self.params
        drive = self._enhance_sign * vgs_v
        if drive <= p.vgs_th_v:
            return None
        overdrive = min(drive, p.vgs_full_v) - p.vgs_th_v
        shape = (1.0 - p.channel_fraction) + p.channel_fraction * (p.vgs_full_v - p.vgs_th_v) / overdrive
        return p.r_on_ohm * shape * (1.0 + p.tempco_per_k * (temperature_c - T0_C))

    def vgs_v(self, input_v: float, drop_v: float) -> float:
        return gate_source_v(input_v, drop_v, self.params.zener_v, self.channel)

    def _current_at(self, drop_v: float, vgs_v: float, temperature_c: float) -> float:
        r = self.channel_ohm(vgs_v, temperature_c)
        channel = drop_v / r if r is not None else 0.0
        return channel + self.body.current_a(drop_v, temperature_c)

    def forward_drop_v(self, current_a, temperature_c, *, input_v=None, source_v=None):
        if current_a <= 0:
            return 0.0
        diode_only = self.body.drop_v(current_a, temperature_c)
        if source_v is not None:
            vgs = self.vgs_v(source_v, 0.0)
            if self.channel_ohm(vgs, temperature_c) is None:
                return diode_only
            g = lambda v: self._current_at(v, vgs, temperature_c) - current_a  # noqa: E731
        elif input_v is not None:
            if self.channel_ohm(self.vgs_v(input_v, 0.0), temperature_c) is None:
                return diode_only  # even with no drop the gate cannot open the channel
            g = lambda v: self._current_at(v, self.vgs_v(input_v, v), temperature_c) - current_a  # noqa: E731
        else:
            raise ValueError("a gate-driven element needs input_v or source_v")
        if g(diode_only) <= 0:
            return diode_only
        if input_v is not None:
            # strongly enhanced channel: V = (I - I_body(V))·R(Vgs(V)) converges in a few steps
            v = current_a * (self.channel_ohm(self.vgs_v(input_v, 0.0), temperature_c) or 0.0)
            for _ in range(30):
                r = self.channel_ohm(self.vgs_v(input_v, v), temperature_c)
                if r is None:
                    break
                nxt = (current_a - self.body.current_a(v, temperature_c)) * r
                if not 0.0 <= nxt <= diode_only:
                    break
                if abs(nxt - v) <= 1e-13 + 1e-12 * abs(nxt):
                    return nxt
                v = nxt
        return brentq(g, 0.0, diode_only, xtol=1e-13, rtol=1e-12)

    def reverse_current_a(self, reverse_v, temperature_c):
        # reversed, the gate is pulled the off way: the channel is off and the body diode blocks
        return self.leakage.current_a(reverse_v, temperature_c)

    def conduction(self, current_a, temperature_c, vgs_v):
        if current_a < 0:
            return "blocking"
        if current_a == 0:
            return "none"
        return "channel" if vgs_v is not None and self.channel_ohm(vgs_v, temperature_c) is not None else "body_diode"

    def truth(self) -> dict:
        p = self.params
        return {
            "kind": self.kind, "r_on_ohm": p.r_on_ohm, "vgs_th_v": p.vgs_th_v, "vgs_full_v": p.vgs_full_v,
            "channel_fraction": p.channel_fraction, "tempco_per_k": p.tempco_per_k, "zener_v": p.zener_v,
            "gate_resistor_ohm": p.gate_resistor_ohm,
            "body_diode": {"ideality": p.body_ideality, "i_s_a": p.body_i_s_a, "r_s_ohm": p.body_r_s_ohm,
                           "tempco_v_per_k": p.body_tempco_v_per_k},
            "reverse_leak_a": p.leak_a, "reverse_leak_doubling_k": p.leak_doubling_k,
            **thermal_truth(self.thermal),
        }


@dataclass(frozen=True)
class ResistorParams:
    r_on_ohm: float
    tempco_per_k: float
    rth_ja_k_per_w: float
    cth_j_per_k: float
    rth_jc_k_per_w: float = 0.0  # junction to case; the rest of RθJA is case to ambient
    cth_case_j_per_k: float = 0.0  # the case node's heat capacity; 0: the single-pole model


class Resistor(Element):
    def __init__(self, kind: str, params: ResistorParams) -> None:
        self.kind = kind
        self.params = params
        self.thermal = thermal_of(params)

    def ohm(self, temperature_c: float) -> float:
        return self.params.r_on_ohm * (1.0 + self.params.tempco_per_k * (temperature_c - T0_C))

    def forward_drop_v(self, current_a, temperature_c, *, input_v=None, source_v=None):
        return max(0.0, current_a) * self.ohm(temperature_c)

    def reverse_current_a(self, reverse_v, temperature_c):
        return max(0.0, reverse_v) / self.ohm(temperature_c)

    def truth(self) -> dict:
        p = self.params
        return {"kind": self.kind, "r_on_ohm": p.r_on_ohm, "tempco_per_k": p.tempco_per_k,
                **thermal_truth(self.thermal)}


# -- nominal demo parts (invented) and their seeded part-to-part spread -------------------------
# Thermal network (sim/thermal.py): a junction capacity behind RθJC (for the MOSFETs a fast pole under a
# second) and the case and board copper behind RθCA (the dominant pole, 10–25 s), so a heat-soak
# of the default P-MOSFET settles within a minute; `thermal_time_scale` in the sim settings scales both.
NOMINAL: dict[str, object] = {
    "rectifier": DiodeParams(ideality=1.8, i_s_a=5e-9, r_s_ohm=0.030, tempco_v_per_k=-2.0e-3,
                             leak_a=1e-6, leak_doubling_k=10.0, rth_ja_k_per_w=50.0, cth_j_per_k=0.4,
                             rth_jc_k_per_w=15.0, cth_case_j_per_k=0.2),
    "schottky": DiodeParams(ideality=1.05, i_s_a=5e-8, r_s_ohm=0.040, tempco_v_per_k=-1.5e-3,
                            leak_a=20e-6, leak_doubling_k=10.0, rth_ja_k_per_w=50.0, cth_j_per_k=0.4,
                            rth_jc_k_per_w=15.0, cth_case_j_per_k=0.2,
                            breakdown_v=55.0),  # a 40 V part breaks down a little above its rating (invented)
    "pmos": MosfetParams(r_on_ohm=0.010, vgs_th_v=2.0, vgs_full_v=10.0, channel_fraction=0.3, tempco_per_k=0.005,
                       zener_v=None, gate_resistor_ohm=100e3, body_ideality=1.3, body_i_s_a=1e-10,
                       body_r_s_ohm=0.010, body_tempco_v_per_k=-2.0e-3, leak_a=0.1e-6, leak_doubling_k=10.0,
                       rth_ja_k_per_w=62.5, cth_j_per_k=0.1, rth_jc_k_per_w=12.0, cth_case_j_per_k=0.12),
    # An N-channel die of the same size has about a third of the P-channel's resistance (electron
    # mobility is 2-3x the hole mobility; common practice), so the invented N part is lower.
    "nmos": MosfetParams(r_on_ohm=0.004, vgs_th_v=1.8, vgs_full_v=10.0, channel_fraction=0.3, tempco_per_k=0.005,
                         zener_v=None, gate_resistor_ohm=100e3, body_ideality=1.3, body_i_s_a=1e-10,
                         body_r_s_ohm=0.008, body_tempco_v_per_k=-2.0e-3, leak_a=0.1e-6, leak_doubling_k=10.0,
                         rth_ja_k_per_w=62.5, cth_j_per_k=0.1, rth_jc_k_per_w=12.0, cth_case_j_per_k=0.12),
    "resistor": ResistorParams(r_on_ohm=0.050, tempco_per_k=1e-4, rth_ja_k_per_w=40.0, cth_j_per_k=0.1,
                               rth_jc_k_per_w=10.0, cth_case_j_per_k=0.2),
}
KINDS = ELEMENT_KINDS
#: The physics of each registry family.
FAMILIES = {"diode": Diode, "mosfet": Mosfet, "resistor": Resistor}
# relative half-width of the uniform part-to-part spread applied to these fields (seeded)
SPREAD = {"r_on_ohm": 0.10, "i_s_a": 0.30, "r_s_ohm": 0.10, "ideality": 0.03, "vgs_th_v": 0.10,
          "rth_ja_k_per_w": 0.05}


def element_param_names(kind: str) -> tuple[str, ...]:
    return tuple(f.name for f in fields(NOMINAL[kind]))  # type: ignore[arg-type]


def build_element(kind: str, rng, overrides: Mapping[str, float | None] | None = None) -> Element:
    """The element of `kind`, with seeded part-to-part spread, then exact `overrides` applied."""
    if kind not in NOMINAL:
        raise ValueError(f"element kind {kind!r} is not one of {', '.join(KINDS)}")
    params = NOMINAL[kind]
    spread = {}
    for name, half in SPREAD.items():
        if hasattr(params, name):
            spread[name] = getattr(params, name) * (1.0 + rng.uniform(-half, half))
    params = replace(params, **spread)  # type: ignore[type-var]
    overrides = dict(overrides or {})
    unknown = set(overrides) - set(element_param_names(kind))
    if unknown:
        raise ValueError(f"unknown parameter(s) for {kind}: {', '.join(sorted(unknown))}")
    params = replace(params, **overrides)  # type: ignore[type-var]
    return FAMILIES[element_kind(kind).family](kind, params)  # type: ignore[arg-type]
