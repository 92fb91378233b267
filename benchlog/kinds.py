"""The element registry: the one place that knows the kinds of protection element, and costs nothing to import.

Every layer asks here instead of testing kind names: the plan reader (which
keys a kind takes), feasibility (the voltages a kind needs before current
flows or its channel opens), the simulator (which physics family), the fits
(which law breaks a tie), the part specs (which datasheet keys), prediction,
verdicts, lots, the design review and the UI (what to call it). Adding a kind
means one entry here plus its physics, its spec data and its demo files.

Facts of the trade used below (common practice, values from memory):
- a silicon junction carries no measurable current below about 0.5 V, a
  Schottky barrier below about 0.15 V; a channel or a resistor conducts from 0 V;
- a gate tied to the supply (P-channel: gate to the return; N-channel in the
  return: gate to the input) is enhanced by the input voltage less the drop,
  and logic-level parts are specified at |Vgs| = 4.5 V;
- a reversed supply leaves such a gate off, so the channel and its body diode
  block; a resistor conducts either way.
"""

from __future__ import annotations

from dataclasses import dataclass

#: Datasheet keys every part spec may carry, whatever its kind.
SPEC_COMMON_KEYS = ("name", "kind", "note", "rth_ja_k_per_w", "tj_max_c", "zth_t_s", "zth_k_per_w", "zth_u_pct",
                    "rth_jc_k_per_w")

#: Datasheet keys by spec family (each ends in its SI unit; see analysis/spec.py for their meaning).
SPEC_FAMILY_KEYS: dict[str, tuple[str, ...]] = {
    "diode": (
        "vf_v", "vf_at_a", "vf_at_c", "vf_max_v", "vf_min_v", "ideality", "rs_ohm",
        "vf_tempco_v_per_k", "vr_max_v", "ir_max_a", "ir_at_v", "ir_at_c", "ir_doubling_k", "if_max_a",
    ),
    "mosfet": (
        "rds_on_ohm", "rds_on_vgs_v", "rds_on_at_c", "rds_on_max_ohm", "rds_on_min_ohm",
        "rds_on_2_ohm", "rds_on_2_vgs_v", "rds_on_tempco_per_k", "rds_on_tj_c", "rds_on_factor",
        "vgs_th_v", "vgs_th_max_v", "vgs_max_v", "vds_max_v", "id_max_a",
        "body_vf_v", "body_vf_at_a", "body_ideality", "idss_a", "idss_at_v",
    ),
    "resistor": (
        "resistance_ohm", "resistance_at_c", "resistance_max_ohm", "resistance_min_ohm", "resistance_tempco_per_k",
    ),
}

#: Least voltage at which a silicon junction (also a MOSFET's body diode) carries a measurable current.
SILICON_MIN_FORWARD_V = 0.5

#: |Vgs| a gate tied to the supply needs to enhance the channel well (logic-level parts are rated here).
MIN_ENHANCE_V = 4.5


@dataclass(frozen=True)
class ElementKind:
    """What the whole program needs to know about one kind of protection element."""

    name: str  # the word in plan, spec and sim files
    title: str  # how the UI and reports name it (with `described` adding the gate wiring)
    family: str  # "diode" | "mosfet" | "resistor": the physics, the spec part and the prediction model
    conduction: str  # "junction" | "channel" | "resistive": what carries the forward current
    blocks_reverse: bool  # a reversed supply meets a blocking element
    min_forward_v: float  # feasibility: below this no forward current flows (module docstring)
    channel: str = ""  # "p" or "n" for MOSFETs: the sign of the Vgs that enhances
    position: str = "supply line"  # "supply line" or "return": where the element sits on the board
    passive_gate: str = ""  # the plan's [element].gate value for the protection wiring ("return" | "input")
    gate_to: str = ""  # where that gate is tied, in words
    switches_ground: bool = False  # the board's ground is the supply return plus the element's drop
    # Junction kinds: what a prediction assumes when the datasheet is silent, with the reason it states.
    default_ideality: tuple[float, str] | None = None
    default_vf_tempco_v_per_k: tuple[float, str] | None = None

    @property
    def described(self) -> str:
        """The title with the gate wiring, e.g. 'N-MOSFET in the return, gate to the input'."""
        return f"{self.title}, gate to {self.gate_to}" if self.has_gate else self.title

    @property
    def has_gate(self) -> bool:
        return bool(self.channel)

    @property
    def gate_choices(self) -> tuple[str, ...]:
        """Values of the plan's [element].gate: the protection wiring or a driven gate."""
        return (self.passive_gate, "driven") if self.has_gate else ()

    @property
    def spec_keys(self) -> tuple[str, ...]:
        return SPEC_COMMON_KEYS + SPEC_FAMILY_KEYS[self.family]

    def drop_is_junction(self, measure: str = "channel") -> bool:
        """A diode law describes the drop: a junction, or a MOSFET's body diode measured on purpose."""
        return self.conduction == "junction" or (self.has_gate and measure == "body_diode")

    def min_forward_v_for(self, measure: str = "channel") -> float:
        """Feasibility floor of the drop: a body diode measured on purpose needs a silicon junction's."""
        return SILICON_MIN_FORWARD_V if (self.has_gate and measure == "body_diode") else self.min_forward_v

    def fit_model(self, measure: str = "channel") -> str:
        """The fit a verdict uses: a straight line for a channel or resistor, else AICc between the laws."""
        return "auto" if self.drop_is_junction(measure) else "resistive"

    def tie_break(self) -> str:
        """The law that wins an AICc tie when the run names this kind."""
        return "diode" if self.conduction == "junction" else "resistive"

    def lot_quantity(self, measure: str = "channel") -> str:
        """What a lot judges: Vf at the operating current for a junction, else the resistance."""
        return "drop_v" if self.drop_is_junction(measure) else "r_on_ohm"


REGISTRY: dict[str, ElementKind] = {
    k.name: k
    for k in (
        ElementKind(
            "rectifier", "silicon rectifier", "diode", "junction", True, SILICON_MIN_FORWARD_V,
            default_ideality=(2.0, "silicon PN rectifiers at rated current run in high-level injection, "
                                   "n ≈ 2 (common practice)"),
            default_vf_tempco_v_per_k=(-2.0e-3, "silicon junction Vf falls about 2 mV/K (common practice)"),
        ),
        ElementKind(
            "schottky", "Schottky diode", "diode", "junction", True, 0.15,
            default_ideality=(1.2, "metal-semiconductor barriers are near-ideal, n ≈ 1.0–1.3 (common practice)"),
            default_vf_tempco_v_per_k=(-1.5e-3, "Schottky Vf falls about 1–2 mV/K (common practice)"),
        ),
        ElementKind("pmos", "P-MOSFET in the supply line", "mosfet", "channel", True, 0.0,
                    channel="p", passive_gate="return", gate_to="the return"),
        ElementKind("nmos", "N-MOSFET in the return", "mosfet", "channel", True, 0.0,
                    channel="n", position="return", passive_gate="input", gate_to="the input",
                    switches_ground=True),
        ElementKind("resistor", "series resistor", "resistor", "resistive", False, 0.0),
    )
}

#: Every kind's name, in the order the CLI and the UI list them.
ELEMENT_KINDS: tuple[str, ...] = tuple(REGISTRY)


def kind(name: str) -> ElementKind:
    """The registry entry of `name`; KeyError names the known kinds."""
    try:
        return REGISTRY[name]
    except KeyError:
        raise KeyError(f"element kind {name!r} is not one of {', '.join(ELEMENT_KINDS)}") from None


def kinds_where(**wanted) -> tuple[str, ...]:
    """The names of the kinds whose attributes equal `wanted` (e.g. family="mosfet")."""
    return tuple(k.name for k in REGISTRY.values() if all(getattr(k, a) == v for a, v in wanted.items()))


def gated_kinds() -> tuple[str, ...]:
    return tuple(k.name for k in REGISTRY.values() if k.has_gate)
