"""The plan file: what element is measured, how the current is stepped, and the limits that stop a sweep.

A plan is data only (TOML read by `benchlog.tomlcheck`, never executed). Every
table and key is checked here; a wrong value raises `BadInput` naming the file,
`[table].key` and what would have been accepted. Unknown keys are refused with
the nearest valid name, because a typo in a limit must not silently disable it.

    [element]   id, kind, label, serial, lot, ambient_c, ambient_u_c (its standard uncertainty, K),
                note, operating_a,
                gate (the kind's protection wiring — pmos "return", nmos "input" — or "driven"; MOSFETs),
                gate_v (|Vgs| of a driven gate),
                zener_v, measure ("channel" | "body_diode", MOSFETs); kinds: benchlog.kinds
    [steps]     mode (linear | log | list | updown | adaptive), start_a, stop_a, count,
                currents_a (list), spacing (updown: linear | log), target_rel_u (adaptive)
    [settle]    dwell_s, tolerance_v, consecutive, timeout_s, max_reads
    [meter]     nplc, range_v, samples
    [record]    supply_v (read the supply voltage at each point)
    [limits]    max_current_a, compliance_v, max_drop_v, max_power_w, max_time_s
    [cooldown]  off_s
    [offset]    enabled (zero-current reading of the drop before power is applied)
    [reverse]   voltage_v | voltages_v (list) | start_v, stop_v, count; duration_s, max_current_a
                (several voltages: a leakage sweep, one reading per voltage, highest last)
    [soak]      current_a, duration_s, interval_s, cool_s, sense_a, rest_s,
                calibration_c + calibration_v (the drop at sense_a at known temperatures)
    [input]     voltages_v (list): a current sweep at each input voltage (load wiring only),
                one series per input in the same run (`benchlog.runs.series`)
    [inspection] stop_when_decided, max_drop_v (acceptance limit of the drop at operating_a),
                first_look (points before the first look): stop a part once its verdict is decided
                (benchlog.sweep.sequential)
    spec        (top level, optional) the part spec this plan is judged against, a path relative to the
                plan file's folder: plan and spec travel together
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from benchlog.ambient import DEFAULT_AMBIENT_C
from benchlog.kinds import ELEMENT_KINDS, kind as element_kind
from benchlog.tomlcheck import Table, load_toml, parse_toml

STEP_MODES = ("linear", "log", "list", "updown", "adaptive")

_TABLES = ("element", "steps", "settle", "meter", "record", "limits", "cooldown", "offset", "reverse", "soak",
           "input", "inspection", "lab")
#: A heat-soak records at most this many points per phase (heating, cooling).
SOAK_MAX_POINTS = 100_000
#: At most this many input voltages or reverse voltages in one plan (each is a full step).
MAX_SERIES = 100


@dataclass(frozen=True)
class Element:
    """The part under test, as the operator identifies it."""

    id: str
    kind: str
    label: str = ""
    serial: str = ""
    lot: str = ""
    ambient_c: float = DEFAULT_AMBIENT_C
    note: str = ""
    operating_a: float | None = None  # the current the verdict is given at
    gate: str = "return"  # MOSFETs: the protection wiring (the kind's passive_gate) or "driven"
    zener_v: float | None = None  # MOSFETs: gate clamp zener voltage, if fitted
    measure: str = "channel"  # MOSFETs: "body_diode" measures the body diode on purpose
    gate_v: float | None = None  # MOSFETs with a driven gate: the |Vgs| the gate is driven at
    ambient_u_c: float | None = None  # standard uncertainty of ambient_c (None: the analysis's stated default)

    @property
    def behaves_as_diode(self) -> bool:
        """A diode law describes the drop (a junction, or a MOSFET's body diode measured on purpose)."""
        return element_kind(self.kind).drop_is_junction(self.measure)

    @property
    def gate_on_supply(self) -> bool:
        """The gate is wired for protection (tied to the supply, enhanced by the input), not driven."""
        k = element_kind(self.kind)
        return k.has_gate and self.gate == k.passive_gate


@dataclass(frozen=True)
class Steps:
    mode: str
    start_a: float | None = None
    stop_a: float | None = None
    count: int | None = None
    currents_a: tuple[float, ...] = ()
    spacing: str = "linear"
    target_rel_u: float | None = None


@dataclass(frozen=True)
class Settle:
    """Read until `consecutive` readings agree within `tolerance_v`, or flag the point after `timeout_s`."""

    dwell_s: float = 0.05
    tolerance_v: float = 1e-4
    consecutive: int = 2
    timeout_s: float = 2.0
    max_reads: int = 200  # a bound that holds even if the clock stands still


@dataclass(frozen=True)
class MeterSettings:
    nplc: float = 1.0
    range_v: float | None = None  # None: the smallest range of the meter's profile that holds max_drop_v
    samples: int = 1


@dataclass(frozen=True)
class Record:
    supply_v: bool = True


@dataclass(frozen=True)
class Limits:
    max_current_a: float
    compliance_v: float | None = None
    max_drop_v: float | None = None
    max_power_w: float | None = None
    max_time_s: float | None = None


@dataclass(frozen=True)
class Cooldown:
    off_s: float = 0.0


@dataclass(frozen=True)
class OffsetReading:
    enabled: bool = True


@dataclass(frozen=True)
class Inspection:
    """Stop measuring a part once its guard-banded verdict at operating_a is decided."""

    max_drop_v: float
    first_look: int = 3
    stop_when_decided: bool = True


@dataclass(frozen=True)
class Reverse:
    """The reverse step: `voltage_v` is the highest reverse voltage; `voltages_v` every one, in the order applied."""

    voltage_v: float
    duration_s: float
    max_current_a: float
    voltages_v: tuple[float, ...] = ()

    @property
    def steps_v(self) -> tuple[float, ...]:
        return self.voltages_v or (self.voltage_v,)


@dataclass(frozen=True)
class InputSweep:
    """The input voltages of an input-voltage sweep, in the order the series are run."""

    voltages_v: tuple[float, ...]


@dataclass(frozen=True)
class Soak:
    """Heat-soak: hold `current_a` for `duration_s`, read the drop every `interval_s`; then follow
    the cooling for `cool_s` at the small `sense_a`. `rest_s` with the element off comes first, so
    the junction starts from the ambient. The calibration, if entered, is the drop at `sense_a` at
    two or more known temperatures (the element's temperature coefficient)."""

    current_a: float
    duration_s: float
    interval_s: float
    cool_s: float = 0.0
    sense_a: float | None = None  # None: a tenth of current_a
    rest_s: float = 0.0
    calibration_c: tuple[float, ...] = ()
    calibration_v: tuple[float, ...] = ()

    @property
    def sense_current_a(self) -> float:
        return self.sense_a if self.sense_a is not None else self.current_a / 10.0

    @property
    def total_s(self) -> float:
        return self.rest_s + self.duration_s + self.cool_s


@dataclass(frozen=True)
class Lab:
    """Who measured which board revision, and the ambient read on the bench: for the report's lab record."""

    operator: str | None = None
    board_revision: str | None = None
    ambient_measured_c: float | None = None


@dataclass(frozen=True)
class Plan:
    element: Element
    steps: Steps
    settle: Settle
    meter: MeterSettings
    record: Record
    limits: Limits
    cooldown: Cooldown
    offset: OffsetReading
    reverse: Reverse | None
    source: str = "plan"
    soak: Soak | None = None
    input: InputSweep | None = None
    inspection: Inspection | None = None
    lab: Lab | None = None  # optional [lab] table
    spec: str = ""  # the part spec as written in the plan (relative to the plan file, so a run header stays
    # the same on every machine); "" when none is named

    def to_dict(self) -> dict[str, Any]:
        """The complete plan with every default filled in: what the run header records."""
        data = dataclasses.asdict(self)
        data.pop("source")
        if data.get("lab") is None:  # recorded only when stated, so earlier headers stay as they were
            data.pop("lab", None)
        for key in OPTIONAL_ELEMENT_KEYS:  # recorded only when stated, so earlier headers stay as they were
            if data["element"].get(key) is None:
                data["element"].pop(key, None)
        if data["soak"] is None:
            data.pop("soak")  # plans without a soak keep the header they always had
        # A plan without the input or leakage sweep records exactly what it did before they existed.
        if data["input"] is None:
            data.pop("input")
        if data["reverse"] is not None and not data["reverse"]["voltages_v"]:
            data["reverse"].pop("voltages_v")
        if data.get("inspection") is None:
            data.pop("inspection", None)  # a plan without the table records exactly what it did before
        return _jsonable(data)


#: Element keys a plan states only when it needs them (a driven gate's drive, the ambient's uncertainty).
OPTIONAL_ELEMENT_KEYS = ("gate_v", "ambient_u_c")


def _jsonable(value: Any) -> Any:
    if isinstance(value, dict):
        return {k: _jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_jsonable(v) for v in value]
    return value


def load_plan(path: str | Path) -> Plan:
    """Read and check a plan file (its `spec` stays as written: `plan_spec_path` resolves it)."""
    return plan_from_table(load_toml(path))


def parse_plan(text: str, source: str = "plan") -> Plan:
    """Read a plan from TOML text (tests, the UI's editor)."""
    return plan_from_table(parse_toml(text, source))


def plan_from_table(root: Table) -> Plan:
    root.only(_TABLES + ("spec",))
    spec = root.string("spec", "")
    if "spec" in root.data and not str(spec).strip():
        raise root.fail("spec", "is empty", "the path of a part spec file, relative to the plan")
    limits = _limits(root.table("limits"))
    element = _element(root.table("element"), limits)
    steps = _steps(root.table("steps"), limits)
    plan = Plan(
        element=element,
        steps=steps,
        settle=_settle(root.table("settle", required=False)),
        meter=_meter(root.table("meter", required=False)),
        record=_record(root.table("record", required=False)),
        limits=limits,
        cooldown=_cooldown(root.table("cooldown", required=False)),
        offset=_offset(root.table("offset", required=False)),
        reverse=_reverse(root.table("reverse", required=False), limits),
        source=root.source,
        soak=_soak(root.table("soak", required=False), limits),
        input=_input(root.table("input", required=False)),
        inspection=_inspection(root.table("inspection", required=False), element, steps),
        lab=_lab(root.table("lab", required=False)),
        spec=str(spec or ""),
    )
    if plan.input is not None:
        for other in ("soak", "inspection"):
            if getattr(plan, other) is not None:
                # a heat-soak or a stop-when-decided inspection holds one input voltage; a series per input
                # would leave it unclear which one it was run at
                raise root.fail("input", f"is given together with [{other}]",
                                f"[input] or [{other}] in one plan (make a plan for each)")
    return plan


def _lab(t: Table | None) -> Lab | None:
    """The optional [lab] table: operator, board revision, measured ambient (for the report, not the sweep)."""
    if t is None:
        return None
    t.only(("operator", "board_revision", "ambient_measured_c"))
    return Lab(operator=t.string("operator", None), board_revision=t.string("board_revision", None),
               ambient_measured_c=t.number("ambient_measured_c", None, min=-60.0, max=150.0, unit="°C"))


def _text(t: Table, key: str, default: str = "") -> str:
    return t.string(key, default)


def _element(t: Table, limits: Limits) -> Element:
    t.only(("id", "kind", "label", "serial", "lot", "ambient_c", "ambient_u_c", "note", "operating_a", "gate",
            "gate_v", "zener_v", "measure"))
    element_id = t.string("id")
    if not element_id.strip():
        raise t.fail("id", "is empty", "a name for the element, such as 'D1'")
    kind = t.string("kind", choices=ELEMENT_KINDS)
    k = element_kind(kind)
    operating_a = t.number("operating_a", None, positive=True, unit="A")
    if operating_a is not None and operating_a > limits.max_current_a:
        raise t.fail("operating_a", f"is {operating_a:g} A, above [limits].max_current_a {limits.max_current_a:g} A",
                     "an operating current the sweep may reach")
    if not k.has_gate:
        for key in ("gate", "gate_v", "measure", "zener_v"):
            if t.has(key):
                raise t.fail(key, f"only applies to a MOSFET, but kind is {kind!r}", "no such key for this kind")
    gate = t.string("gate", k.passive_gate or "return", choices=k.gate_choices or None)
    measure = t.string("measure", "channel", choices=("channel", "body_diode"))
    zener_v = t.number("zener_v", None, positive=True, unit="V")
    gate_v = t.number("gate_v", None, positive=True, max=100.0, unit="V")
    if gate_v is not None and gate != "driven":
        raise t.fail("gate_v", f"is given but gate is {gate!r}",
                     "gate_v only with gate = 'driven' (with a passive gate |Vgs| follows the input)")
    if gate_v is not None and zener_v is not None and gate_v > zener_v:
        raise t.fail("gate_v", f"is {gate_v:g} V, above zener_v {zener_v:g} V", "a gate drive the clamp lets through")
    return Element(
        id=element_id,
        kind=kind,
        label=_text(t, "label"),
        serial=_text(t, "serial"),
        lot=_text(t, "lot"),
        ambient_c=t.number("ambient_c", DEFAULT_AMBIENT_C, min=-60.0, max=200.0, unit="°C"),
        ambient_u_c=t.number("ambient_u_c", None, min=0.0, max=50.0, unit="K"),
        note=_text(t, "note"),
        operating_a=operating_a,
        gate=gate,
        zener_v=zener_v,
        measure=measure,
        gate_v=gate_v,
    )


def _steps(t: Table, limits: Limits) -> Steps:
    t.only(("mode", "start_a", "stop_a", "count", "currents_a", "spacing", "target_rel_u"))
    mode = t.string("mode", choices=STEP_MODES)
    cap = limits.max_current_a

    def current(key: str, *, positive: bool) -> float:
        value = t.number(key, positive=positive, min=None if positive else 0.0, unit="A")
        if value > cap:
            raise t.fail(key, f"is {value:g} A, above [limits].max_current_a {cap:g} A",
                         "a current within the plan's limit")
        return value

    if mode == "list":
        for key in ("start_a", "stop_a", "count", "spacing", "target_rel_u"):
            if t.has(key):
                raise t.fail(key, "is not used with mode 'list'", "only currents_a")
        currents = t.numbers("currents_a", min=0.0, unit="A")
        for i, value in enumerate(currents):
            if value > cap:
                raise t.fail(f"currents_a[{i}]", f"is {value:g} A, above [limits].max_current_a {cap:g} A",
                             "a current within the plan's limit")
        return Steps(mode=mode, currents_a=currents)
    if t.has("currents_a"):
        raise t.fail("currents_a", f"is only used with mode 'list', not {mode!r}", "start_a, stop_a and count")
    spacing = t.string("spacing", "linear", choices=("linear", "log"))
    if t.has("spacing") and mode != "updown":
        raise t.fail("spacing", f"is only used with mode 'updown', not {mode!r}", "mode 'linear' or 'log' instead")
    positive = mode in ("log", "adaptive") or spacing == "log"
    start = current("start_a", positive=positive)
    stop = current("stop_a", positive=True)
    if stop <= start:
        raise t.fail("stop_a", f"is {stop:g} A, not above start_a {start:g} A", "stop_a > start_a")
    if mode == "adaptive":
        count = t.integer("count", 50, min=4, max=100_000)
        target = t.number("target_rel_u", positive=True, max=0.5)
        return Steps(mode=mode, start_a=start, stop_a=stop, count=count, target_rel_u=target)
    if t.has("target_rel_u"):
        raise t.fail("target_rel_u", f"is only used with mode 'adaptive', not {mode!r}", "mode = 'adaptive'")
    count = t.integer("count", min=2, max=10_000_000)
    return Steps(mode=mode, start_a=start, stop_a=stop, count=count, spacing=spacing)


def _settle(t: Table | None) -> Settle:
    if t is None:
        return Settle()
    t.only(("dwell_s", "tolerance_v", "consecutive", "timeout_s", "max_reads"))
    d = Settle()
    consecutive = t.integer("consecutive", d.consecutive, min=1, max=1000)
    max_reads = t.integer("max_reads", max(d.max_reads, consecutive), min=1, max=1_000_000)
    if max_reads < consecutive:
        raise t.fail("max_reads", f"is {max_reads}, below consecutive {consecutive}", "max_reads >= consecutive")
    return Settle(
        dwell_s=t.number("dwell_s", d.dwell_s, min=0.0, max=3600.0, unit="s"),
        tolerance_v=t.number("tolerance_v", d.tolerance_v, positive=True, unit="V"),
        consecutive=consecutive,
        timeout_s=t.number("timeout_s", d.timeout_s, min=0.0, max=3600.0, unit="s"),
        max_reads=max_reads,
    )


def _meter(t: Table | None) -> MeterSettings:
    if t is None:
        return MeterSettings()
    t.only(("nplc", "range_v", "samples"))
    d = MeterSettings()
    return MeterSettings(
        nplc=t.number("nplc", d.nplc, positive=True, max=1000.0),
        range_v=t.number("range_v", None, positive=True, unit="V"),
        samples=t.integer("samples", d.samples, min=1, max=10_000),
    )


def _record(t: Table | None) -> Record:
    if t is None:
        return Record()
    t.only(("supply_v",))
    return Record(supply_v=t.boolean("supply_v", True))


def _limits(t: Table) -> Limits:
    t.only(("max_current_a", "compliance_v", "max_drop_v", "max_power_w", "max_time_s"))
    return Limits(
        max_current_a=t.number("max_current_a", positive=True, unit="A"),
        compliance_v=t.number("compliance_v", None, positive=True, unit="V"),
        max_drop_v=t.number("max_drop_v", None, positive=True, unit="V"),
        max_power_w=t.number("max_power_w", None, positive=True, unit="W"),
        max_time_s=t.number("max_time_s", None, positive=True, unit="s"),
    )


def _cooldown(t: Table | None) -> Cooldown:
    if t is None:
        return Cooldown()
    t.only(("off_s",))
    return Cooldown(off_s=t.number("off_s", 0.0, min=0.0, max=3600.0, unit="s"))


def _inspection(t: Table | None, element: Element, steps: Steps) -> Inspection | None:
    if t is None:
        return None
    t.only(("stop_when_decided", "max_drop_v", "first_look"))
    if not t.boolean("stop_when_decided", False):
        return None
    if steps.mode == "adaptive":
        raise t.fail("stop_when_decided", "is true with [steps].mode = 'adaptive'",
                     "a fixed schedule (linear, log, list or updown) to cut short")
    if element.operating_a is None:
        raise t.fail("stop_when_decided", "is true but [element].operating_a is not set",
                     "the operating current the verdict is judged at")
    first_look = t.integer("first_look", 3, min=2, max=1000)
    return Inspection(max_drop_v=t.number("max_drop_v", positive=True, unit="V"), first_look=first_look)


def _offset(t: Table | None) -> OffsetReading:
    if t is None:
        return OffsetReading()
    t.only(("enabled",))
    return OffsetReading(enabled=t.boolean("enabled", True))


def _reverse(t: Table | None, limits: Limits) -> Reverse | None:
    if t is None:
        return None
    t.only(("voltage_v", "voltages_v", "start_v", "stop_v", "count", "duration_s", "max_current_a"))
    given = [k for k in ("voltage_v", "voltages_v", "start_v") if t.has(k)]
    if len(given) != 1:
        raise t.fail(None if not given else given[-1],
                     "needs exactly one of voltage_v, voltages_v or start_v/stop_v/count" if given else
                     "gives no reverse voltage", "voltage_v = 12.0, or voltages_v = [...], or start_v, stop_v, count")
    for key in ("stop_v", "count"):
        if t.has(key) and not t.has("start_v"):
            raise t.fail(key, "is only used with start_v", "start_v, stop_v and count together")
    voltages: tuple[float, ...] = ()
    if t.has("voltages_v"):
        voltages = _voltages(t, fewest=1, what="reverse voltage")
    elif t.has("start_v"):
        start = t.number("start_v", positive=True, unit="V")
        stop = t.number("stop_v", positive=True, unit="V")
        if stop <= start:
            raise t.fail("stop_v", f"is {stop:g} V, not above start_v {start:g} V", "stop_v > start_v")
        count = t.integer("count", min=2, max=MAX_SERIES)
        voltages = tuple(start + (stop - start) * i / (count - 1) for i in range(count))
    highest = max(voltages) if voltages else t.number("voltage_v", positive=True, unit="V")
    reverse = Reverse(
        voltage_v=highest,
        duration_s=t.number("duration_s", positive=True, max=3600.0, unit="s"),
        max_current_a=t.number("max_current_a", positive=True, unit="A"),
        voltages_v=voltages,
    )
    if reverse.max_current_a > limits.max_current_a:
        raise t.fail("max_current_a", f"is {reverse.max_current_a:g} A, above [limits].max_current_a "
                     f"{limits.max_current_a:g} A", "a reverse-current limit within the plan's limit")
    return reverse


def _soak(t: Table | None, limits: Limits) -> Soak | None:
    if t is None:
        return None
    t.only(("current_a", "duration_s", "interval_s", "cool_s", "sense_a", "rest_s", "calibration_c",
            "calibration_v"))
    cap = limits.max_current_a
    current = t.number("current_a", positive=True, unit="A")
    if current > cap:
        raise t.fail("current_a", f"is {current:g} A, above [limits].max_current_a {cap:g} A",
                     "a soak current within the plan's limit")
    duration = t.number("duration_s", positive=True, max=86_400.0, unit="s")
    interval = t.number("interval_s", positive=True, max=3600.0, unit="s")
    if interval > duration:
        raise t.fail("interval_s", f"is {interval:g} s, longer than duration_s {duration:g} s",
                     "at least one reading within the soak")
    cool = t.number("cool_s", 0.0, min=0.0, max=86_400.0, unit="s")
    for key, length in (("duration_s", duration), ("cool_s", cool)):
        if length / interval > SOAK_MAX_POINTS:
            raise t.fail(key, f"is {length:g} s at interval_s {interval:g} s: {length / interval:.0f} readings",
                         f"at most {SOAK_MAX_POINTS} readings per phase")
    sense = t.number("sense_a", None, positive=True, unit="A")
    if sense is not None and sense >= current:
        raise t.fail("sense_a", f"is {sense:g} A, not below current_a {current:g} A",
                     "a small sense current that barely heats the element")
    temps = t.numbers("calibration_c", (), min=-60.0, max=250.0, unit="°C")
    drops = t.numbers("calibration_v", (), unit="V")
    if len(temps) != len(drops):
        raise t.fail("calibration_v", f"has {len(drops)} value(s) for {len(temps)} calibration_c",
                     "one drop per calibration temperature")
    if temps and len(set(temps)) < 2:
        raise t.fail("calibration_c", "has fewer than two distinct temperatures",
                     "the drop at sense_a at two or more known temperatures")
    if temps and sense is None:
        raise t.fail("sense_a", "is missing, but a calibration is entered",
                     "the sense current the calibration drops were measured at")
    soak = Soak(current_a=current, duration_s=duration, interval_s=interval, cool_s=cool, sense_a=sense,
                rest_s=t.number("rest_s", 0.0, min=0.0, max=86_400.0, unit="s"),
                calibration_c=tuple(temps), calibration_v=tuple(drops))
    if limits.max_time_s is not None and soak.total_s > limits.max_time_s:
        raise t.fail("duration_s", f"rest_s + duration_s + cool_s is {soak.total_s:g} s, above "
                     f"[limits].max_time_s {limits.max_time_s:g} s", "a soak the time limit allows")
    return soak


def _voltages(t: Table, *, fewest: int, what: str) -> tuple[float, ...]:
    """`voltages_v`: between `fewest` and MAX_SERIES voltages, each above 0 V."""
    voltages = t.numbers("voltages_v", unit="V")
    if not fewest <= len(voltages) <= MAX_SERIES:
        raise t.fail("voltages_v", f"has {len(voltages)} voltage(s)", f"{fewest} to {MAX_SERIES} {what}s")
    for i, v in enumerate(voltages):
        if not v > 0:
            raise t.fail(f"voltages_v[{i}]", f"is {v:g} V", f"a {what} > 0 V")
    return voltages


def _input(t: Table | None) -> InputSweep | None:
    if t is None:
        return None
    t.only(("voltages_v",))
    voltages = _voltages(t, fewest=2, what="input voltage")
    if len(set(voltages)) != len(voltages):
        raise t.fail("voltages_v", "repeats a voltage", "each input voltage once")
    return InputSweep(voltages_v=voltages)


def plan_spec_path(plan: Plan, plan_file: str | Path | None) -> Path | None:
    """The part spec a plan names, resolved against the plan file's folder (None: the plan names none)."""
    if not plan.spec:
        return None
    named = Path(plan.spec)
    if named.is_absolute() or plan_file is None:
        return named
    return Path(plan_file).parent / named
