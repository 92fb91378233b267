"""Part specs: what a datasheet promises for one protection element, read from our TOML format.

One flat table per file; every key carries its SI unit suffix. Voltages and
currents of a P-channel part are written as magnitudes (|Vgs|, |Vds|), because
that is how a datasheet's tables are read in practice.

Keys by kind (`@` reads 'at'; required: name, kind, and vf_v @ vf_at_a,
rds_on_ohm @ rds_on_vgs_v or resistance_ohm by kind):
  all        name, kind, note, rth_ja_k_per_w, tj_max_c
  diodes     vf_v @ vf_at_a [vf_at_c], vf_max_v, vf_min_v, ideality, rs_ohm,
             vf_tempco_v_per_k, vr_max_v, ir_max_a @ ir_at_v [ir_at_c],
             ir_doubling_k, if_max_a
  MOSFETs    rds_on_ohm @ rds_on_vgs_v [rds_on_at_c], rds_on_max_ohm, rds_on_min_ohm,
             rds_on_2_ohm @ rds_on_2_vgs_v (a second datasheet point: Vgs dependence),
             rds_on_tempco_per_k | rds_on_tj_c + rds_on_factor (normalised curve),
             vgs_th_v, vgs_th_max_v, vgs_max_v, vds_max_v, id_max_a,
             body_vf_v @ body_vf_at_a, body_ideality, idss_a @ idss_at_v
  resistor   resistance_ohm [resistance_at_c], resistance_max_ohm, resistance_min_ohm,
             resistance_tempco_per_k
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from benchlog.badinput import BadInput
from benchlog.tomlcheck import Table, load_toml

KINDS = ("rectifier", "schottky", "pmos", "nmos", "resistor")
DIODE_KINDS = ("rectifier", "schottky")
MOSFET_KINDS = ("pmos", "nmos")

_COMMON = ("name", "kind", "note", "rth_ja_k_per_w", "tj_max_c")
_DIODE = (
    "vf_v", "vf_at_a", "vf_at_c", "vf_max_v", "vf_min_v", "ideality", "rs_ohm",
    "vf_tempco_v_per_k", "vr_max_v", "ir_max_a", "ir_at_v", "ir_at_c", "ir_doubling_k", "if_max_a",
)
_MOSFET = (
    "rds_on_ohm", "rds_on_vgs_v", "rds_on_at_c", "rds_on_max_ohm", "rds_on_min_ohm",
    "rds_on_2_ohm", "rds_on_2_vgs_v", "rds_on_tempco_per_k", "rds_on_tj_c", "rds_on_factor",
    "vgs_th_v", "vgs_th_max_v", "vgs_max_v", "vds_max_v", "id_max_a",
    "body_vf_v", "body_vf_at_a", "body_ideality", "idss_a", "idss_at_v",
)
_RESISTOR = (
    "resistance_ohm", "resistance_at_c", "resistance_max_ohm", "resistance_min_ohm", "resistance_tempco_per_k",
)
KEYS: dict[str, tuple[str, ...]] = {
    "rectifier": _COMMON + _DIODE,
    "schottky": _COMMON + _DIODE,
    "pmos": _COMMON + _MOSFET,
    "nmos": _COMMON + _MOSFET,
    "resistor": _COMMON + _RESISTOR,
}

# Defaults used when a datasheet is silent; each prediction that uses one says so.
DEFAULT_IDEALITY = {
    "rectifier": (2.0, "silicon PN rectifiers at rated current run in high-level injection, n ≈ 2 (common practice)"),
    "schottky": (1.2, "metal-semiconductor barriers are near-ideal, n ≈ 1.0–1.3 (common practice)"),
}
DEFAULT_VF_TEMPCO_V_PER_K = {
    "rectifier": (-2.0e-3, "silicon junction Vf falls about 2 mV/K (common practice)"),
    "schottky": (-1.5e-3, "Schottky Vf falls about 1–2 mV/K (common practice)"),
}
DEFAULT_RDS_ON_TEMPCO_PER_K = (
    5.0e-3, "R_DS(on) rises about 0.5 %/K, roughly 1.6x from 25 to 150 °C (common practice)"
)
DEFAULT_IR_DOUBLING_K = (10.0, "reverse leakage doubles about every 10 K (common practice)")
DEFAULT_BODY_DIODE = (
    0.8, 1.0, 1.5,
    "no body-diode data in the spec: 0.8 V at 1 A, n = 1.5, typical of a silicon body diode (common practice)",
)


@dataclass(frozen=True)
class Thermal:
    rth_ja_k_per_w: float | None = None
    tj_max_c: float | None = None


@dataclass(frozen=True)
class DiodeSpec:
    vf_v: float
    vf_at_a: float
    vf_at_c: float = 25.0
    vf_max_v: float | None = None
    vf_min_v: float | None = None
    ideality: float | None = None
    rs_ohm: float = 0.0
    vf_tempco_v_per_k: float | None = None
    vr_max_v: float | None = None
    ir_max_a: float | None = None
    ir_at_v: float | None = None
    ir_at_c: float = 25.0
    ir_doubling_k: float | None = None
    if_max_a: float | None = None


@dataclass(frozen=True)
class MosfetSpec:
    rds_on_ohm: float
    rds_on_vgs_v: float
    rds_on_at_c: float = 25.0
    rds_on_max_ohm: float | None = None
    rds_on_min_ohm: float | None = None
    rds_on_2_ohm: float | None = None
    rds_on_2_vgs_v: float | None = None
    rds_on_tempco_per_k: float | None = None
    rds_on_tj_c: tuple[float, ...] | None = None
    rds_on_factor: tuple[float, ...] | None = None
    vgs_th_v: float | None = None
    vgs_th_max_v: float | None = None
    vgs_max_v: float | None = None
    vds_max_v: float | None = None
    id_max_a: float | None = None
    body_vf_v: float | None = None
    body_vf_at_a: float | None = None
    body_ideality: float | None = None
    idss_a: float | None = None
    idss_at_v: float | None = None


@dataclass(frozen=True)
class ResistorSpec:
    resistance_ohm: float
    resistance_at_c: float = 25.0
    resistance_max_ohm: float | None = None
    resistance_min_ohm: float | None = None
    resistance_tempco_per_k: float = 0.0


@dataclass(frozen=True)
class PartSpec:
    """One part's datasheet values. Exactly one of `diode`, `mosfet`, `resistor` is set, by `kind`."""

    name: str
    kind: str
    thermal: Thermal
    diode: DiodeSpec | None = None
    mosfet: MosfetSpec | None = None
    resistor: ResistorSpec | None = None
    note: str = ""
    path: str = ""

    @property
    def is_diode(self) -> bool:
        return self.kind in DIODE_KINDS

    @property
    def is_mosfet(self) -> bool:
        return self.kind in MOSFET_KINDS

    @property
    def has_max(self) -> bool:
        """Whether the datasheet gives a maximum for the conduction parameter (Vf, R_DS(on), R)."""
        if self.diode is not None:
            return self.diode.vf_max_v is not None
        if self.mosfet is not None:
            return self.mosfet.rds_on_max_ohm is not None
        return self.resistor is not None and self.resistor.resistance_max_ohm is not None


def load_spec(path: str | Path) -> PartSpec:
    """Read and validate one part spec; every fault is a `BadInput` naming the file and the key."""
    return spec_from_table(load_toml(path), str(path))


def spec_from_table(t: Table, path: str = "") -> PartSpec:
    kind = t.string("kind", choices=KINDS)
    t.only(KEYS[kind])
    name = t.string("name")
    if not name.strip():
        raise t.fail("name", "is empty", "the part's name")
    thermal = Thermal(
        rth_ja_k_per_w=t.number("rth_ja_k_per_w", None, positive=True, unit="K/W"),
        tj_max_c=t.number("tj_max_c", None, min=-55.0, max=400.0, unit="°C"),
    )
    common = dict(name=name, kind=kind, thermal=thermal, note=t.string("note", ""), path=path)
    if kind in DIODE_KINDS:
        return PartSpec(diode=_diode(t), **common)
    if kind in MOSFET_KINDS:
        return PartSpec(mosfet=_mosfet(t), **common)
    return PartSpec(resistor=_resistor(t), **common)


def _pair(t: Table, value_key: str, at_key: str) -> None:
    """A value given 'at' a condition needs both keys (a leakage without its voltage means nothing)."""
    if t.has(value_key) != t.has(at_key):
        missing = at_key if t.has(value_key) else value_key
        present = value_key if t.has(value_key) else at_key
        raise t.fail(missing, "is missing", f"'{missing}' together with '{present}'")


def _at_least(t: Table, key: str, value: float | None, floor: float | None, floor_key: str) -> None:
    if value is not None and floor is not None and value < floor:
        raise t.fail(key, f"is {value:g}, below {floor_key} = {floor:g}", f"at least {floor_key}")


def _diode(t: Table) -> DiodeSpec:
    vf = t.number("vf_v", positive=True, max=5.0, unit="V")
    vf_max = t.number("vf_max_v", None, positive=True, max=5.0, unit="V")
    vf_min = t.number("vf_min_v", None, positive=True, max=5.0, unit="V")
    _at_least(t, "vf_max_v", vf_max, vf, "vf_v")
    if vf_min is not None and vf_min > vf:
        raise t.fail("vf_min_v", f"is {vf_min:g}, above vf_v = {vf:g}", "at most vf_v")
    _pair(t, "ir_max_a", "ir_at_v")
    return DiodeSpec(
        vf_v=vf,
        vf_at_a=t.number("vf_at_a", positive=True, unit="A"),
        vf_at_c=t.number("vf_at_c", 25.0, min=-55.0, max=200.0, unit="°C"),
        vf_max_v=vf_max,
        vf_min_v=vf_min,
        ideality=t.number("ideality", None, min=0.5, max=5.0),
        rs_ohm=t.number("rs_ohm", 0.0, min=0.0, max=100.0, unit="Ω"),
        vf_tempco_v_per_k=t.number("vf_tempco_v_per_k", None, min=-0.01, max=0.01, unit="V/K"),
        vr_max_v=t.number("vr_max_v", None, positive=True, unit="V"),
        ir_max_a=t.number("ir_max_a", None, positive=True, max=10.0, unit="A"),
        ir_at_v=t.number("ir_at_v", None, positive=True, unit="V"),
        ir_at_c=t.number("ir_at_c", 25.0, min=-55.0, max=200.0, unit="°C"),
        ir_doubling_k=t.number("ir_doubling_k", None, min=1.0, max=100.0, unit="K"),
        if_max_a=t.number("if_max_a", None, positive=True, unit="A"),
    )


def _mosfet(t: Table) -> MosfetSpec:
    r = t.number("rds_on_ohm", positive=True, max=100.0, unit="Ω")
    vgs = t.number("rds_on_vgs_v", positive=True, max=50.0, unit="V")
    r_max = t.number("rds_on_max_ohm", None, positive=True, max=100.0, unit="Ω")
    r_min = t.number("rds_on_min_ohm", None, positive=True, max=100.0, unit="Ω")
    _at_least(t, "rds_on_max_ohm", r_max, r, "rds_on_ohm")
    if r_min is not None and r_min > r:
        raise t.fail("rds_on_min_ohm", f"is {r_min:g}, above rds_on_ohm = {r:g}", "at most rds_on_ohm")
    _pair(t, "rds_on_2_ohm", "rds_on_2_vgs_v")
    r2 = t.number("rds_on_2_ohm", None, positive=True, max=100.0, unit="Ω")
    vgs2 = t.number("rds_on_2_vgs_v", None, positive=True, max=50.0, unit="V")
    if vgs2 is not None and vgs2 == vgs:
        raise t.fail("rds_on_2_vgs_v", f"equals rds_on_vgs_v ({vgs:g} V)", "a second, different gate voltage")
    if r2 is not None and (vgs2 - vgs) * (r2 - r) >= 0:
        raise t.fail("rds_on_2_ohm", "does not fall as the gate voltage rises", "a higher R_DS(on) at the lower Vgs")
    tempco = t.number("rds_on_tempco_per_k", None, min=-0.01, max=0.05, unit="1/K")
    tj = t.numbers("rds_on_tj_c", None, min=-55.0, max=300.0, unit="°C")
    factor = t.numbers("rds_on_factor", None, positive=True, max=10.0)
    if (tj is None) != (factor is None):
        missing = "rds_on_factor" if factor is None else "rds_on_tj_c"
        raise t.fail(missing, "is missing", "rds_on_tj_c and rds_on_factor as two lists of the same length")
    if tj is not None:
        if tempco is not None:
            raise t.fail("rds_on_tempco_per_k", "given together with the rds_on_tj_c table", "one of the two")
        if len(tj) != len(factor) or len(tj) < 2:
            raise t.fail("rds_on_factor", f"has {len(factor)} values for {len(tj)} temperatures",
                         "two or more values, one per rds_on_tj_c entry")
        if any(b <= a for a, b in zip(tj, tj[1:])):
            raise t.fail("rds_on_tj_c", "is not strictly rising", "temperatures in rising order")
    vgs_th = t.number("vgs_th_v", None, positive=True, max=20.0, unit="V")
    vgs_th_max = t.number("vgs_th_max_v", None, positive=True, max=20.0, unit="V")
    _at_least(t, "vgs_th_max_v", vgs_th_max, vgs_th, "vgs_th_v")
    for key, level in (("rds_on_vgs_v", vgs), ("rds_on_2_vgs_v", vgs2)):
        if level is not None and vgs_th is not None and level <= vgs_th:
            raise t.fail(key, f"is {level:g} V, not above vgs_th_v = {vgs_th:g} V", "a gate voltage above threshold")
    vgs_max = t.number("vgs_max_v", None, positive=True, max=100.0, unit="V")
    if vgs_max is not None and vgs > vgs_max:
        raise t.fail("rds_on_vgs_v", f"is {vgs:g} V, above vgs_max_v = {vgs_max:g} V", "a gate voltage within the rating")
    _pair(t, "body_vf_v", "body_vf_at_a")
    _pair(t, "idss_a", "idss_at_v")
    return MosfetSpec(
        rds_on_ohm=r, rds_on_vgs_v=vgs,
        rds_on_at_c=t.number("rds_on_at_c", 25.0, min=-55.0, max=200.0, unit="°C"),
        rds_on_max_ohm=r_max, rds_on_min_ohm=r_min, rds_on_2_ohm=r2, rds_on_2_vgs_v=vgs2,
        rds_on_tempco_per_k=tempco, rds_on_tj_c=tj, rds_on_factor=factor,
        vgs_th_v=vgs_th, vgs_th_max_v=vgs_th_max, vgs_max_v=vgs_max,
        vds_max_v=t.number("vds_max_v", None, positive=True, unit="V"),
        id_max_a=t.number("id_max_a", None, positive=True, unit="A"),
        body_vf_v=t.number("body_vf_v", None, positive=True, max=5.0, unit="V"),
        body_vf_at_a=t.number("body_vf_at_a", None, positive=True, unit="A"),
        body_ideality=t.number("body_ideality", None, min=0.5, max=5.0),
        idss_a=t.number("idss_a", None, positive=True, max=10.0, unit="A"),
        idss_at_v=t.number("idss_at_v", None, positive=True, unit="V"),
    )


def _resistor(t: Table) -> ResistorSpec:
    r = t.number("resistance_ohm", positive=True, unit="Ω")
    r_max = t.number("resistance_max_ohm", None, positive=True, unit="Ω")
    r_min = t.number("resistance_min_ohm", None, positive=True, unit="Ω")
    _at_least(t, "resistance_max_ohm", r_max, r, "resistance_ohm")
    if r_min is not None and r_min > r:
        raise t.fail("resistance_min_ohm", f"is {r_min:g}, above resistance_ohm = {r:g}", "at most resistance_ohm")
    return ResistorSpec(
        resistance_ohm=r,
        resistance_at_c=t.number("resistance_at_c", 25.0, min=-55.0, max=200.0, unit="°C"),
        resistance_max_ohm=r_max,
        resistance_min_ohm=r_min,
        resistance_tempco_per_k=t.number("resistance_tempco_per_k", 0.0, min=-0.1, max=0.2, unit="1/K"),
    )

