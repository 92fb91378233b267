"""Reading part specs and design files: TOML checked by tomlcheck, built into the typed values analysis takes.

This sits above `analysis/` (which does no file I/O): the CLI, the UI and the
report load specs and designs here and hand the typed `PartSpec` / `Design`
on. Every fault is a `BadInput` naming the file, the key, what was wrong and
what was expected. The keys each kind takes come from the element registry
(benchlog.kinds); their meaning is listed in `benchlog.analysis.spec`.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from benchlog.analysis.spec import DiodeSpec, MosfetSpec, PartSpec, ResistorSpec, Thermal
from benchlog.kinds import ELEMENT_KINDS, kind as element_kind
from benchlog.tomlcheck import Table, load_toml

if TYPE_CHECKING:  # the design review is imported by the functions that read a design, not by `check`
    from benchlog.analysis.design import Candidate, ClampDesign, Design, DesignReview, Margins


# --------------------------------------------------------------------------- part specs
def load_spec(path: str | Path) -> PartSpec:
    """Read and validate one part spec; every fault is a `BadInput` naming the file and the key."""
    return spec_from_table(load_toml(path), str(path))


def spec_from_table(t: Table, path: str = "") -> PartSpec:
    """Build a part spec from a parsed TOML table: the kind picks the keys and the part's reader."""
    kind = t.string("kind", choices=ELEMENT_KINDS)
    family = element_kind(kind).family
    t.only(element_kind(kind).spec_keys)
    name = t.string("name")
    if not name.strip():
        raise t.fail("name", "is empty", "the part's name")
    zth_t = t.numbers("zth_t_s", None, positive=True, max=1e5, unit="s")
    zth = t.numbers("zth_k_per_w", None, positive=True, max=1e4, unit="K/W")
    if (zth_t is None) != (zth is None):
        missing = "zth_k_per_w" if zth is None else "zth_t_s"
        raise t.fail(missing, "is missing", "zth_t_s and zth_k_per_w as two lists of the same length")
    if zth_t is not None:
        if len(zth_t) != len(zth) or len(zth_t) < 2:
            raise t.fail("zth_k_per_w", f"has {len(zth)} values for {len(zth_t)} pulse lengths",
                         "two or more values, one per zth_t_s entry")
        if any(b <= a for a, b in zip(zth_t, zth_t[1:])):
            raise t.fail("zth_t_s", "is not strictly rising", "pulse lengths in rising order")
        if any(b < a for a, b in zip(zth, zth[1:])):
            raise t.fail("zth_k_per_w", "falls with a longer pulse", "a thermal impedance that rises with time")
    zth_u = t.number("zth_u_pct", None, min=0.0, max=100.0, unit="%")
    if zth_u is not None and zth is None:
        raise t.fail("zth_u_pct", "is given without a Zth curve", "zth_t_s and zth_k_per_w beside it")
    rth_jc = t.number("rth_jc_k_per_w", None, positive=True, unit="K/W")
    rth_ja = t.number("rth_ja_k_per_w", None, positive=True, unit="K/W")
    if rth_jc is not None and rth_ja is not None and rth_jc >= rth_ja:
        raise t.fail("rth_jc_k_per_w", f"is {rth_jc:g} K/W, not below rth_ja_k_per_w {rth_ja:g} K/W",
                     "junction to case less than junction to ambient (the case lies between)")
    thermal = Thermal(
        rth_ja_k_per_w=rth_ja,
        tj_max_c=t.number("tj_max_c", None, min=-55.0, max=400.0, unit="°C"),
        zth_t_s=None if zth_t is None else tuple(zth_t),
        zth_k_per_w=None if zth is None else tuple(zth),
        zth_u_pct=zth_u,
        rth_jc_k_per_w=rth_jc,
    )
    part = _PART_READERS[family](t)
    return PartSpec(name=name, kind=kind, thermal=thermal, part=part, note=t.string("note", ""), path=path)


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



#: The reader of each registry family's part.
_PART_READERS = {"diode": _diode, "mosfet": _mosfet, "resistor": _resistor}


# --------------------------------------------------------------------------- design files
def load_design(path: str | Path) -> Design:
    """Read and validate a design file and every candidate's spec (errors name the file and key)."""
    from benchlog.analysis.design import APPLICATIONS, Design

    path = Path(path)
    t = load_toml(path)
    t.only(("name", "application", "note", "input", "load", "ambient", "clamp", "margins", "candidate"))
    inp = t.table("input")
    inp.only(("nominal_v", "min_v", "max_v", "reverse_v"))
    nominal = inp.number("nominal_v", positive=True, max=1000.0, unit="V")
    vmin = inp.number("min_v", positive=True, unit="V")
    vmax = inp.number("max_v", positive=True, unit="V")
    if not vmin <= nominal <= vmax:
        raise inp.fail("nominal_v", f"is {nominal:g} V, outside min_v {vmin:g} V .. max_v {vmax:g} V",
                       "min_v <= nominal_v <= max_v")
    load = t.table("load")
    load.only(("nominal_a", "max_a"))
    i_nom = load.number("nominal_a", positive=True, unit="A")
    i_max = load.number("max_a", i_nom, positive=True, unit="A")
    if i_max < i_nom:
        raise load.fail("max_a", f"is {i_max:g} A, below nominal_a {i_nom:g} A", "max_a >= nominal_a")
    amb = t.table("ambient")
    amb.only(("max_c",))
    candidates = tuple(_candidate(c, path) for c in t.tables("candidate"))
    if not candidates:
        raise t.fail("candidate", "no [[candidate]] given", "one or more [[candidate]] tables with a spec path")
    return Design(
        name=t.string("name"), application=t.string("application", "other", choices=APPLICATIONS),
        note=t.string("note", ""), vin_nominal_v=nominal, vin_min_v=vmin, vin_max_v=vmax,
        reverse_v=inp.number("reverse_v", None, positive=True, unit="V"),
        load_nominal_a=i_nom, load_max_a=i_max, ambient_max_c=amb.number("max_c", min=-60.0, max=200.0, unit="°C"),
        clamp=_clamp(t.table("clamp", required=False)), margins=_margins(t.table("margins", required=False)),
        candidates=candidates, path=str(path),
    )


def _candidate(c: Table, design_path: Path) -> Candidate:
    from benchlog.analysis.design import Candidate

    c.only(("spec", "label"))
    rel = c.string("spec")
    spec_path = Path(rel) if Path(rel).is_absolute() else design_path.parent / rel
    if not spec_path.is_file():
        raise c.fail("spec", f"names {rel!r}, which is not a file (looked at {spec_path})",
                     "a part spec path relative to the design file")
    spec = load_spec(spec_path)
    return Candidate(c.string("label", spec.name), spec)


def _clamp(c: Table | None) -> ClampDesign | None:
    from benchlog.analysis import eseries
    from benchlog.analysis.design import ClampDesign

    if c is None:
        return None
    c.only(("zener_v", "zener_power_w", "resistor_ohm", "series", "target_current_a"))
    return ClampDesign(
        zener_v=c.number("zener_v", positive=True, max=100.0, unit="V"),
        zener_power_w=c.number("zener_power_w", None, positive=True, unit="W"),
        resistor_ohm=c.number("resistor_ohm", None, positive=True, unit="Ω"),
        series=c.string("series", "E24", choices=tuple(eseries.SERIES)),
        target_current_a=c.number("target_current_a", 5e-3, positive=True, max=1.0, unit="A"),
    )


def _margins(m: Table | None) -> Margins:
    from benchlog.analysis.design import Margins

    if m is None:
        return Margins()
    m.only(("voltage_derating", "tj_margin_k", "power_derating", "leakage_max_a", "threshold_margin_v"))
    d = Margins()
    return Margins(
        voltage_derating=m.number("voltage_derating", d.voltage_derating, positive=True, max=1.0),
        tj_margin_k=m.number("tj_margin_k", d.tj_margin_k, min=0.0, unit="K"),
        power_derating=m.number("power_derating", d.power_derating, positive=True, max=1.0),
        leakage_max_a=m.number("leakage_max_a", d.leakage_max_a, positive=True, unit="A"),
        threshold_margin_v=m.number("threshold_margin_v", d.threshold_margin_v, min=0.0, unit="V"),
    )


def review_file(path: str | Path) -> DesignReview:
    """Read a design file and review it."""
    from benchlog.analysis.design import review

    return review(load_design(path))


__all__ = ["load_spec", "spec_from_table", "load_design", "review_file"]
