"""The simulated bench's settings, from code or from a `--config` TOML file (data only, never executed)."""

from __future__ import annotations

import math
from dataclasses import dataclass, field, fields, replace
from pathlib import Path
from types import MappingProxyType
from typing import Mapping

from benchlog.ambient import DEFAULT_AMBIENT_C
from benchlog.badinput import BadInput
from benchlog.tomlcheck import load_toml

from .elements import KINDS, element_param_names
from .faults import ROLES, FaultPlan
from .specs import LEAD_RESISTANCE_OHM
from .timing import TIMINGS

LOOPBACK_HOSTS = ("127.0.0.1", "localhost", "::1")


@dataclass(frozen=True)
class SimConfig:
    element: str = "pmos"  # a kind of the element registry (benchlog.kinds)
    seed: int = 1
    ambient_c: float = DEFAULT_AMBIENT_C
    line_frequency_hz: float = 50.0
    latency_s: float = 0.0  # every reply waits this long (a slow instrument or network)
    host: str = "127.0.0.1"  # loopback unless another host is asked for explicitly
    port: int = 0  # 0: an ephemeral port per instrument; P: P, P+1, P+2 [, P+3] [, next: the case sensor]
    faults: FaultPlan = field(default_factory=FaultPlan)
    element_params: Mapping[str, float | None] = field(default_factory=dict)
    meter_has_measure: bool = True  # False: the meter needs CONFigure + READ?
    current_meter: bool = False  # a 4th socket: a meter in series (DCI) or across a shunt (DCV)
    shunt_ohm: float = 0.01
    lead_resistance_ohm: float = LEAD_RESISTANCE_OHM
    # "real": readings take NPLC/f per sample and setpoints settle (first order); "instant": neither,
    # for tests that do not test timing (see sim/timing.py)
    timing: str = "real"
    case_sensor: bool = False  # one more socket: a meter whose temperature probe sits on the element's case
    # every thermal time constant times this (1: the element's own; 0.05: twenty times faster, so a
    # heat-soak test takes seconds); resistances and steady temperatures do not change
    thermal_time_scale: float = 1.0

    def __post_init__(self) -> None:
        if self.element not in KINDS:
            raise ValueError(f"element must be one of {', '.join(KINDS)}, got {self.element!r}")
        if self.timing not in TIMINGS:
            raise ValueError(f"timing must be one of {', '.join(TIMINGS)}, got {self.timing!r}")
        if isinstance(self.seed, bool) or not isinstance(self.seed, int):
            raise ValueError(f"seed must be a whole number, got {self.seed!r}")
        for name, lo, hi in (("ambient_c", -55.0, 150.0), ("line_frequency_hz", 40.0, 70.0),
                             ("latency_s", 0.0, 60.0), ("shunt_ohm", 1e-6, 1e3),
                             ("lead_resistance_ohm", 1e-6, 10.0), ("thermal_time_scale", 1e-3, 1e3)):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) \
                    or not lo <= value <= hi:
                raise ValueError(f"{name} must be a number in {lo:g}..{hi:g}, got {value!r}")
        if isinstance(self.port, bool) or not isinstance(self.port, int) or not 0 <= self.port <= 65532:
            raise ValueError(f"port must be 0..65532, got {self.port!r}")
        if not isinstance(self.faults, FaultPlan):
            raise ValueError("faults must be a FaultPlan")
        unknown = set(self.element_params) - set(element_param_names(self.element))
        if unknown:
            raise ValueError(f"unknown element parameter(s) for {self.element}: {', '.join(sorted(unknown))}; "
                             f"known: {', '.join(element_param_names(self.element))}")
        object.__setattr__(self, "element_params", MappingProxyType(dict(self.element_params)))

    @property
    def roles(self) -> tuple[str, ...]:
        return (("supply", "load", "meter") + (("current_meter",) if self.current_meter else ())
                + (("sensor",) if self.case_sensor else ()))

    @property
    def is_loopback(self) -> bool:
        return self.host in LOOPBACK_HOSTS


_TOP_KEYS = ("element", "seed", "ambient_c", "line_frequency_hz", "latency_s", "host", "port",
             "meter_has_measure", "current_meter", "shunt_ohm", "lead_resistance_ohm",
             "timing", "case_sensor", "thermal_time_scale", "element_params", "faults")
_FAULT_COUNTS = ("drop_after_commands", "garbage_after", "hang_after", "queue_error_after", "supply_trip_after",
                 "trickle_after", "stuck_on_after")


def load_sim_config(path: str | Path) -> SimConfig:
    """Read a sim config file; anything wrong raises BadInput naming the key."""
    root = load_toml(path)
    root.only(_TOP_KEYS)
    values: dict = {}
    if root.has("element"):
        values["element"] = root.string("element", choices=KINDS)
    if root.has("seed"):
        values["seed"] = root.integer("seed")
    for key, lo, hi, unit in (("ambient_c", -55, 150, "°C"), ("line_frequency_hz", 40, 70, "Hz"),
                              ("latency_s", 0, 60, "s"), ("shunt_ohm", 1e-6, 1e3, "ohm"),
                              ("lead_resistance_ohm", 1e-6, 10, "ohm"), ("thermal_time_scale", 1e-3, 1e3, "")):
        if root.has(key):
            values[key] = root.number(key, min=lo, max=hi, unit=unit)
    if root.has("host"):
        values["host"] = root.string("host")
    if root.has("port"):
        values["port"] = root.integer("port", min=0, max=65532)
    if root.has("timing"):
        values["timing"] = root.string("timing", choices=TIMINGS)
    for key in ("meter_has_measure", "current_meter", "case_sensor"):
        if root.has(key):
            values[key] = root.boolean(key)
    kind = values.get("element", SimConfig.element)
    params = root.table("element_params", required=False)
    if params is not None:
        names = element_param_names(kind)
        params.only(names)
        values["element_params"] = {k: params.number(k) for k in params.keys()}
    faults = root.table("faults", required=False)
    if faults is not None:
        faults.only(_FAULT_COUNTS + ("extra_latency_s", "trickle_byte_s", "role"))
        plan: dict = {k: faults.integer(k, min=0) for k in _FAULT_COUNTS if faults.has(k)}
        if faults.has("extra_latency_s"):
            plan["extra_latency_s"] = faults.number("extra_latency_s", min=0, max=3600, unit="s")
        if faults.has("trickle_byte_s"):
            plan["trickle_byte_s"] = faults.number("trickle_byte_s", positive=True, max=60, unit="s")
        if faults.has("role"):
            plan["role"] = faults.string("role", choices=ROLES)
        values["faults"] = FaultPlan(**plan)
    try:
        return SimConfig(**values)
    except ValueError as exc:
        raise BadInput(path, "", str(exc), "settings the simulated bench accepts") from None


def with_overrides(config: SimConfig, **changes) -> SimConfig:
    """A copy with the given fields changed (None values are left as they are)."""
    known = {f.name for f in fields(SimConfig)}
    return replace(config, **{k: v for k, v in changes.items() if v is not None and k in known})
