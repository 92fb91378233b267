"""Part specs: what a datasheet promises for one protection element, as typed values.

A spec is one kind-independent head (name, kind, thermal data) and one part of
its kind's family (`DiodeSpec`, `MosfetSpec`, `ResistorSpec`); the registry
(benchlog.kinds) says which family a kind has and which keys its file takes.
The files are read by `benchlog.specfiles`, above this layer: analysis does no
file I/O. Voltages and currents of a P-channel part are written as magnitudes
(|Vgs|, |Vds|), because that is how a datasheet's tables are read in practice.

Keys by family (`@` reads 'at'; required: name, kind, and vf_v @ vf_at_a,
rds_on_ohm @ rds_on_vgs_v or resistance_ohm by family):
  all        name, kind, note, rth_ja_k_per_w, tj_max_c,
             zth_t_s + zth_k_per_w (the transient thermal impedance curve, junction to ambient:
             pulse lengths in s and Zth in K/W, two lists of one length, both rising)
  diode      vf_v @ vf_at_a [vf_at_c], vf_max_v, vf_min_v, ideality, rs_ohm,
             vf_tempco_v_per_k, vr_max_v, ir_max_a @ ir_at_v [ir_at_c],
             ir_doubling_k, if_max_a
  mosfet     rds_on_ohm @ rds_on_vgs_v [rds_on_at_c], rds_on_max_ohm, rds_on_min_ohm,
             rds_on_2_ohm @ rds_on_2_vgs_v (a second datasheet point: Vgs dependence),
             rds_on_tempco_per_k | rds_on_tj_c + rds_on_factor (normalised curve),
             vgs_th_v, vgs_th_max_v, vgs_max_v, vds_max_v, id_max_a,
             body_vf_v @ body_vf_at_a, body_ideality, idss_a @ idss_at_v
  resistor   resistance_ohm [resistance_at_c], resistance_max_ohm, resistance_min_ohm,
             resistance_tempco_per_k
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from benchlog.kinds import ElementKind, kind as element_kind

# Defaults used when a datasheet is silent; each prediction that uses one says so. A junction kind's
# ideality and Vf tempco defaults are the registry's (ElementKind.default_ideality, ...).
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
    zth_t_s: tuple[float, ...] | None = None  # transient thermal impedance curve: pulse lengths...
    zth_k_per_w: tuple[float, ...] | None = None  # ...and Zth(t) junction to ambient
    zth_u_pct: float | None = None  # relative standard uncertainty of that curve for this part (None: the default)
    rth_jc_k_per_w: float | None = None  # junction to case: how far a measured case temperature sits below Tj


@dataclass(frozen=True)
class DiodeSpec:
    """The datasheet values of a rectifier or Schottky diode."""

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

    family = "diode"

    @property
    def has_max(self) -> bool:
        return self.vf_max_v is not None

    def min_as_max(self) -> "DiodeSpec | None":
        """The part with its minimum in the place of the maximum (a lower limit by `predict`), or None."""
        return None if self.vf_min_v is None else replace(self, vf_max_v=self.vf_min_v)

    @property
    def blocking(self) -> tuple[float | None, str, str]:
        """(reverse voltage rating, its symbol, its key)."""
        return self.vr_max_v, "VR", "vr_max_v"

    @property
    def current_rating(self) -> tuple[float | None, str, str]:
        """(forward current rating, the check's name, its symbol)."""
        return self.if_max_a, "forward current rating", "IF"

    @property
    def leakage(self) -> tuple[float | None, float | None, float, float | None]:
        """(leakage, at reverse voltage, at temperature, doubling interval or None)."""
        return self.ir_max_a, self.ir_at_v, self.ir_at_c, self.ir_doubling_k


@dataclass(frozen=True)
class MosfetSpec:
    """The datasheet values of a P- or N-channel MOSFET (magnitudes for a P-channel part)."""

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

    family = "mosfet"

    @property
    def has_max(self) -> bool:
        return self.rds_on_max_ohm is not None

    def min_as_max(self) -> "MosfetSpec | None":
        if self.rds_on_min_ohm is None:
            return None
        return replace(self, rds_on_max_ohm=self.rds_on_min_ohm, vgs_th_max_v=None)

    @property
    def blocking(self) -> tuple[float | None, str, str]:
        return self.vds_max_v, "Vds", "vds_max_v"

    @property
    def current_rating(self) -> tuple[float | None, str, str]:
        return self.id_max_a, "drain current rating", "ID"

    @property
    def leakage(self) -> tuple[float | None, float | None, float, float | None]:
        return self.idss_a, self.idss_at_v, 25.0, None


@dataclass(frozen=True)
class ResistorSpec:
    """The datasheet values of a series resistor."""

    resistance_ohm: float
    resistance_at_c: float = 25.0
    resistance_max_ohm: float | None = None
    resistance_min_ohm: float | None = None
    resistance_tempco_per_k: float = 0.0

    family = "resistor"

    @property
    def has_max(self) -> bool:
        return self.resistance_max_ohm is not None

    def min_as_max(self) -> "ResistorSpec | None":
        return None if self.resistance_min_ohm is None else replace(self, resistance_max_ohm=self.resistance_min_ohm)

    @property
    def blocking(self) -> tuple[float | None, str, str]:
        return None, "", ""  # a resistor does not block

    @property
    def current_rating(self) -> tuple[float | None, str, str]:
        return None, "", ""

    @property
    def leakage(self) -> tuple[float | None, float | None, float, float | None]:
        return None, None, 25.0, None


#: The part type of each registry family.
PART_TYPES: dict[str, type] = {t.family: t for t in (DiodeSpec, MosfetSpec, ResistorSpec)}

Part = DiodeSpec | MosfetSpec | ResistorSpec


@dataclass(frozen=True)
class PartSpec:
    """One part's datasheet values: a common head and the part of its kind's family."""

    name: str
    kind: str
    thermal: Thermal
    part: Part
    note: str = ""
    path: str = ""

    def __post_init__(self) -> None:
        family = element_kind(self.kind).family
        if getattr(self.part, "family", None) != family:
            raise TypeError(f"a {self.kind} spec needs a {PART_TYPES[family].__name__}, got {type(self.part).__name__}")

    @property
    def element(self) -> ElementKind:
        """The registry entry of this part's kind."""
        return element_kind(self.kind)

    @property
    def has_max(self) -> bool:
        """Whether the datasheet gives a maximum for the conduction parameter (Vf, R_DS(on), R)."""
        return self.part.has_max

    def min_as_max(self) -> "PartSpec | None":
        """The spec with its minimum in the place of the maximum, or None when it gives no minimum."""
        low = self.part.min_as_max()
        return None if low is None else replace(self, part=low)
