"""The run header as typed, frozen records: what every layer above `runs/` reads instead of a header dict.

The reader builds a `RunHeader` once from the header line (`RunHeader.from_table`);
the writer writes one back with `to_table` (the only place that spells the
header's keys, in the order the file keeps them). The bench and plan files'
content is kept as read-only tables (`Table`) beside the typed fields drawn
from it, so a header rewritten from its record gives the same JSON.

`run_id` is a UUID4 written at the start of a schema 2 run; a schema 1 file has
none, so its id is derived from a hash of its header line (a version 5 UUID,
RFC 4122 4.3): the same file always gets the same id, and `run_id_derived` says so.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from functools import cached_property
from types import MappingProxyType
from typing import Any

from benchlog.accuracy import MeasurementAccuracy

from .format import FORMAT_NAME, POINT_COLUMNS, SCHEMA_VERSION

Table = Mapping[str, Any]

#: Namespace of the ids derived for files written before run ids (schema 1); fixed for all time.
_DERIVED_ID_NAMESPACE_TEXT = "6f1c2d4e-58a3-4b7e-9f20-3c1d8e5a7b94"


def __getattr__(name: str):
    """`DERIVED_ID_NAMESPACE` (a uuid.UUID) made when asked: reading runs does not import uuid (~3 ms)."""
    if name == "DERIVED_ID_NAMESPACE":
        import uuid

        return uuid.UUID(_DERIVED_ID_NAMESPACE_TEXT)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")

#: The keys `to_table` writes from typed fields; any other key of a read header is kept in `extra`.
TYPED_KEYS = ("record", "format", "schema", "point_columns", "tool_version", "started_utc", "run_id",
              "host", "instruments", "bench", "plan", "element", "accuracy", "meter", "line_frequency_hz",
              "temperature")

_EMPTY: Table = MappingProxyType({})


_SCALARS = (str, int, float, bool, type(None))


def freeze(value: Any) -> Any:
    """A JSON value made read-only: objects become mapping proxies, lists tuples.

    Exact type tests first: a lot reads thousands of headers, and an ABC check per
    scalar cost more than the rest of a small file's parse.
    """
    kind = type(value)
    if kind in _SCALARS or kind is MappingProxyType:
        return value
    if kind is dict or isinstance(value, Mapping):
        return MappingProxyType({str(k): v if type(v) in _SCALARS else freeze(v) for k, v in value.items()})
    if kind is list or kind is tuple:
        return tuple(v if type(v) in _SCALARS else freeze(v) for v in value)
    return value


def thaw(value: Any) -> Any:
    """The JSON-ready copy of a frozen value."""
    if isinstance(value, Mapping):
        return {k: thaw(v) for k, v in value.items()}
    if isinstance(value, tuple):
        return [thaw(v) for v in value]
    return value


def _number(value: Any) -> float | None:
    """A finite JSON number as float, else None (a field the run did not record usably)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return None
    return float(value) if math.isfinite(value) else None


def _text(value: Any) -> str | None:
    return value if isinstance(value, str) else None


def _table(value: Any) -> Table:
    kind = type(value)
    if kind is MappingProxyType:
        return value
    return freeze(value) if kind is dict or isinstance(value, Mapping) else _EMPTY


def derived_run_id(header_line: str) -> str:
    """The id of a run file that has none: the name-based UUID (version 5, a SHA-1 hash) of its header line."""
    import uuid  # here, not at the top: a command that only reads runs does not pay for the module (~3 ms)

    return str(uuid.uuid5(uuid.UUID(_DERIVED_ID_NAMESPACE_TEXT), header_line))


def new_run_id() -> str:
    """A fresh random run id (UUID4), written in the header when a run starts."""
    import uuid

    return str(uuid.uuid4())


@dataclass(frozen=True)
class InstrumentRecord:
    """One role of the bench as it answered at the start: resource, `*IDN?`, profile and its SHA-256."""

    role: str
    resource: str = ""
    idn: str = ""
    profile: str = ""
    profile_sha256: str = ""

    def to_table(self) -> dict[str, Any]:
        return {"resource": self.resource, "idn": self.idn, "profile": self.profile,
                "profile_sha256": self.profile_sha256}

    @classmethod
    def from_table(cls, role: str, table: Any) -> InstrumentRecord:
        table = table if isinstance(table, Mapping) else {}
        return cls(role, *(str(table.get(k) or "") for k in ("resource", "idn", "profile", "profile_sha256")))


@dataclass(frozen=True)
class Wiring:
    """How the element was wired (the bench file's [wiring]): who forces the current, who reads it."""

    force: str | None = None
    current_from: str | None = None
    shunt_ohm: float | None = None
    input_v: float | None = None
    shunt_tolerance_pct: float | None = None
    shunt_tempco_ppm_per_k: float | None = None

    @classmethod
    def from_table(cls, table: Any) -> Wiring:
        table = table if isinstance(table, Mapping) else {}
        return cls(_text(table.get("force")), _text(table.get("current_from")),
                   _number(table.get("shunt_ohm")), _number(table.get("input_v")),
                   _number(table.get("shunt_tolerance_pct")), _number(table.get("shunt_tempco_ppm_per_k")))


@dataclass(frozen=True, eq=False)
class BenchRecord:
    """The bench file's content (`table`, as written) and its wiring, typed."""

    source: Mapping[str, Any] = field(repr=False)  # the JSON object as read; `table` is its read-only view
    wiring: Wiring = Wiring()

    @classmethod
    def from_table(cls, table: Any) -> BenchRecord:
        table = table if isinstance(table, Mapping) else {}
        return cls(table, Wiring.from_table(table.get("wiring")))

    @cached_property
    def table(self) -> Table:
        # Made read-only when first asked for: a lot reads thousands of headers and never looks.
        return _table(self.source)

    def __eq__(self, other: object) -> bool:
        # Compared as JSON content (a list read back equals the tuple it was written from).
        return isinstance(other, BenchRecord) and self.table == other.table and self.wiring == other.wiring

    __hash__ = object.__hash__

    @property
    def simulated(self) -> bool:
        return self.source.get("simulated") is True


@dataclass(frozen=True, eq=False)
class PlanRecord:
    """The plan file's content (`table`, as written), with the parts the program reads named."""

    source: Mapping[str, Any] = field(repr=False)  # the JSON object as read; `table` is its read-only view

    @cached_property
    def table(self) -> Table:
        return _table(self.source)

    def __eq__(self, other: object) -> bool:
        # Compared as JSON content (a list read back equals the tuple it was written from).
        return isinstance(other, PlanRecord) and self.table == other.table

    __hash__ = object.__hash__

    @property
    def element(self) -> Table:
        return _table(self.source.get("element"))

    @property
    def steps(self) -> Table:
        return _table(self.source.get("steps"))

    @property
    def limits(self) -> Table:
        return _table(self.source.get("limits"))

    @property
    def soak(self) -> Table:
        """The heat-soak table (empty for a plan without one)."""
        return _table(self.source.get("soak"))

    def soak_readings(self) -> int:
        """The heat-soak's readings the plan asks for (heating and cooling); 0 without a soak."""
        soak = self.soak
        try:
            length = float(soak["duration_s"]) + float(soak.get("cool_s") or 0.0)
            return int(length / float(soak["interval_s"]) + 1e-9)
        except (KeyError, TypeError, ValueError, ZeroDivisionError):
            return 0

    @property
    def input_voltages_v(self) -> tuple[float, ...]:
        """The input voltages of an input-voltage sweep, series by series (`series`); empty for any other plan."""
        from .series import series_inputs_v

        return series_inputs_v(self.source)

    def planned_points(self) -> int | None:
        """How many points the steps (once per input voltage) and a heat-soak ask for; None for adaptive steps (they stop on a target)."""
        steps = self.steps
        mode = steps.get("mode")
        if mode == "list":
            sweep = len(steps.get("currents_a") or ()) or None
        else:
            count = steps.get("count")
            if isinstance(count, bool) or not isinstance(count, int) or count <= 0:
                return None
            sweep = {"linear": count, "log": count, "updown": 2 * count - 1}.get(mode)
        if sweep is None:
            return None
        series = len(self.input_voltages_v) or 1  # an input sweep runs the steps once per input voltage
        return sweep * series + self.soak_readings()


@dataclass(frozen=True)
class ElementRecord:
    """The element under test. `table` is the header's element as written; the fields also take
    what only the plan's [element] holds (a header field wins over the plan's)."""

    id: str
    kind: str | None = None
    label: str | None = None
    lot: str | None = None
    serial: str | None = None
    ambient_c: float | None = None
    note: str | None = None
    operating_a: float | None = None
    gate: str | None = None
    zener_v: float | None = None
    measure: str | None = None
    ambient_u_c: float | None = None  # standard uncertainty of the ambient, K (None: not stated)
    gate_v: float | None = None  # |Vgs| of a driven gate, V (None: not driven, or not stated)
    #: the header's element object as read; `table` is its read-only view
    source: Mapping[str, Any] = field(default_factory=dict, compare=False, repr=False)

    @cached_property
    def table(self) -> Table:
        return _table(self.source)

    @classmethod
    def from_table(cls, table: Any, plan_element: Mapping[str, Any] | None = None) -> ElementRecord:
        own = table if isinstance(table, Mapping) else {}
        merged = {**plan_element, **own} if plan_element else own
        get = merged.get
        ambient, operating, zener = get("ambient_c"), get("operating_a"), get("zener_v")
        return cls(
            id=str(get("id") or ""),
            kind=_text(get("kind")), label=_text(get("label")), lot=_text(get("lot")),
            serial=_text(get("serial")),
            ambient_c=ambient if type(ambient) is float and math.isfinite(ambient) else _number(ambient),
            note=_text(get("note")),
            operating_a=operating if type(operating) is float and math.isfinite(operating) else _number(operating),
            gate=_text(get("gate")),
            zener_v=zener if type(zener) is float and math.isfinite(zener) else _number(zener),
            measure=_text(get("measure")),
            ambient_u_c=_number(get("ambient_u_c")), gate_v=_number(get("gate_v")), source=own,
        )


@dataclass(frozen=True)
class MeterSettings:
    """How the drop was read: integration time in power-line cycles, samples averaged, range."""

    nplc: float | None = None
    samples: int | None = None
    range_v: float | None = None

    def to_table(self) -> dict[str, Any]:
        return {"nplc": self.nplc, "samples": self.samples, "range_v": self.range_v}

    @classmethod
    def from_table(cls, table: Any) -> MeterSettings:
        table = table if isinstance(table, Mapping) else {}
        samples = table.get("samples")
        return cls(_number(table.get("nplc")),
                   samples if isinstance(samples, int) and not isinstance(samples, bool) else None,
                   _number(table.get("range_v")))


@dataclass(frozen=True)
class TemperatureRecord:
    """The probe on the element that filled the points' temperature_c: what read it, where it sat, how good it is."""

    attached_to: str = ""  # "case" | "tab" ("" when the header does not say)
    transducer: str = ""  # "thermocouple" | "rtd" | "thermistor"
    accuracy_c: float | None = None  # ± limit of probe and meter together, °C (None: not stated)
    source: str = "sensor"
    role: str = "sensor"
    resource: str = ""
    profile: str = ""
    idn: str = ""

    def to_table(self) -> dict[str, Any]:
        return {"source": self.source, "role": self.role, "resource": self.resource, "profile": self.profile,
                "idn": self.idn, "attached_to": self.attached_to, "transducer": self.transducer,
                "accuracy_c": self.accuracy_c}

    @classmethod
    def from_table(cls, table: Any) -> TemperatureRecord:
        table = table if isinstance(table, Mapping) else {}
        accuracy = _number(table.get("accuracy_c"))
        return cls(
            attached_to=_text(table.get("attached_to")) or "", transducer=_text(table.get("transducer")) or "",
            accuracy_c=accuracy if accuracy is not None and accuracy > 0 else None,
            source=_text(table.get("source")) or "sensor", role=_text(table.get("role")) or "sensor",
            resource=_text(table.get("resource")) or "", profile=_text(table.get("profile")) or "",
            idn=_text(table.get("idn")) or "")

    @property
    def sensor(self) -> str:
        """The probe's instrument in words: profile and resource."""
        return " ".join(v for v in (self.profile, self.resource) if v) or "not named in the header"


@dataclass(frozen=True)
class RunHeader:
    """Everything needed to understand and re-analyse a run later (line 1 of the run file)."""

    tool_version: str
    started_utc: str
    run_id: str
    element: ElementRecord
    schema: int = SCHEMA_VERSION
    host: str | None = None
    instruments: tuple[InstrumentRecord, ...] = ()
    bench: BenchRecord | None = None
    plan: PlanRecord | None = None
    accuracy: MeasurementAccuracy = MeasurementAccuracy()
    meter: MeterSettings | None = None
    line_frequency_hz: float | None = None
    #: The probe on the element (bench [sensor]); None: no probe, the points' temperature_c is empty.
    temperature: TemperatureRecord | None = None
    point_columns: tuple[str, ...] = POINT_COLUMNS
    #: Header keys this program does not know (a newer writer's), kept as read.
    extra: Table = field(default_factory=lambda: _EMPTY, compare=False)
    #: True when the file had no run_id and `run_id` was derived from its header line.
    run_id_derived: bool = field(default=False, compare=False)

    def __post_init__(self) -> None:
        # The budget names the current reading by what reads it and adds a shunt's tolerance and
        # tempco: both come from the bench's wiring, so the accuracy carries them from here on.
        wiring = self.bench.wiring if self.bench is not None else None
        if wiring is not None and not self.accuracy.current_from:
            object.__setattr__(self, "accuracy", replace(
                self.accuracy, current_from=wiring.current_from or "",
                shunt_tolerance_pct=wiring.shunt_tolerance_pct,
                shunt_tempco_ppm_per_k=wiring.shunt_tempco_ppm_per_k))

    # -- what readers ask for -------------------------------------------------------------
    @property
    def input_v(self) -> float | None:
        """The bench's input voltage (the supply's CV setting when the load forces the current)."""
        return self.bench.wiring.input_v if self.bench is not None else None

    @property
    def kind(self) -> str | None:
        return self.element.kind

    @property
    def serial(self) -> str | None:
        return self.element.serial

    @property
    def lot(self) -> str | None:
        return self.element.lot

    def instrument(self, role: str) -> InstrumentRecord | None:
        return next((i for i in self.instruments if i.role == role), None)

    def planned_points(self) -> int | None:
        return self.plan.planned_points() if self.plan is not None else None

    # -- the JSON line ----------------------------------------------------------------------
    def to_table(self) -> dict[str, Any]:
        """The header object as the file holds it (without "record"), keys in the file's order."""
        out: dict[str, Any] = {"format": FORMAT_NAME, "schema": self.schema,
                               "point_columns": list(self.point_columns),
                               "tool_version": self.tool_version, "started_utc": self.started_utc}
        if not self.run_id_derived:
            out["run_id"] = self.run_id
        if self.host is not None:
            out["host"] = self.host
        if self.instruments:
            out["instruments"] = {i.role: i.to_table() for i in self.instruments}
        if self.bench is not None:
            out["bench"] = thaw(self.bench.source)
        if self.plan is not None:
            out["plan"] = thaw(self.plan.source)
        out["element"] = thaw(self.element.source) if self.element.source else {"id": self.element.id}
        out["accuracy"] = self.accuracy.to_table()
        if self.meter is not None:
            out["meter"] = self.meter.to_table()
        if self.line_frequency_hz is not None:
            out["line_frequency_hz"] = self.line_frequency_hz
        if self.temperature is not None:
            out["temperature"] = self.temperature.to_table()
        for key, value in self.extra.items():
            out.setdefault(key, thaw(value))
        return out

    @classmethod
    def from_table(cls, obj: Mapping[str, Any], header_line: str = "", source: str = "run header") -> RunHeader:
        """From a header object the reader has checked (`reader.decode_header`); parsed once, here.

        `header_line` is the line's text, for the derived id of a file without `run_id`.
        """
        plan = PlanRecord(obj["plan"]) if isinstance(obj.get("plan"), Mapping) else None
        plan_element = plan.source.get("element") if plan is not None else None
        plan_element = plan_element if isinstance(plan_element, Mapping) else None
        run_id = obj.get("run_id")
        derived = not isinstance(run_id, str)
        instruments = obj.get("instruments")
        instruments = instruments if isinstance(instruments, Mapping) else {}
        return cls(
            schema=int(obj.get("schema", SCHEMA_VERSION)),
            tool_version=str(obj.get("tool_version", "")),
            started_utc=str(obj.get("started_utc", "")),
            run_id=derived_run_id(header_line) if derived else run_id,
            run_id_derived=derived,
            host=_text(obj.get("host")),
            instruments=tuple(InstrumentRecord.from_table(str(role), t) for role, t in instruments.items()),
            bench=BenchRecord.from_table(obj["bench"]) if isinstance(obj.get("bench"), Mapping) else None,
            plan=plan,
            element=ElementRecord.from_table(obj.get("element"), plan_element),
            accuracy=MeasurementAccuracy.from_table(obj.get("accuracy"), source),
            meter=MeterSettings.from_table(obj["meter"]) if isinstance(obj.get("meter"), Mapping) else None,
            line_frequency_hz=_number(obj.get("line_frequency_hz")),
            temperature=TemperatureRecord.from_table(obj["temperature"])
            if isinstance(obj.get("temperature"), Mapping) else None,
            point_columns=tuple(obj.get("point_columns") or POINT_COLUMNS),
            extra=freeze({k: v for k, v in obj.items() if k not in TYPED_KEYS}),
        )


_CANONICAL_UUID = re.compile(r"[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}")


def is_run_id(value: Any) -> bool:
    """A run_id as written: a UUID in its canonical text form (lower-case hex, 8-4-4-4-12)."""
    # the same test as str(uuid.UUID(value)) == value: every 128-bit value in this form is a UUID
    return isinstance(value, str) and _CANONICAL_UUID.fullmatch(value) is not None
