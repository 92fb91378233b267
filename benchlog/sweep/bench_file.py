"""The bench file: which VISA resource plays which role with which profile, and how the element is wired.

    [supply] / [load] / [meter] / [current_meter]
        resource = "TCPIP0::10.0.0.5::5025::SOCKET"   # a VISA resource string
        profile  = "generic-supply"                   # a name from instrument_profiles/ or a path
        backend  = "@py"                              # optional pyvisa backend
    [wiring]
        force        = "supply" | "load"   # who sets the current: the supply in CC (element across
                                           # the supply), or an electronic load in CC with the supply
                                           # in CV at input_v (element between them)
        current_from = "supply" | "load" | "meter" | "shunt"
        shunt_ohm    = 0.01                # with current_from = "shunt": read by [current_meter] in DCV
        shunt_tolerance_pct    = 0.1       # with a shunt: its tolerance (±%) and temperature coefficient,
        shunt_tempco_ppm_per_k = 50        #   both entered in the uncertainty budget of the current
        input_v      = 12.0                # with force = "load": the supply's CV setting
    [mains]
        line_frequency_hz = 50             # sets the meter's NPLC time and its line-noise rejection
    [sensor]                               # optional: a temperature probe on the element
        resource    = "TCPIP0::10.0.0.7::5025::SOCKET"
        profile     = "generic-dmm"        # a meter profile with measure_temperature
        attached_to = "case" | "tab"       # where the probe sits on the element
        transducer  = "thermocouple" | "rtd" | "thermistor"
        accuracy_c  = 1.0                  # optional: ± limit of the probe and meter together, °C
    [archive]
        url = "postgresql://bench@lab-db/benchlog"   # optional: publish each finished run to this archive
                                           # (or "sqlite:///FILE"); never a password: libpq reads it from
                                           # PGPASSWORD or ~/.pgpass. Not copied into the run file.

A profile path is taken relative to the bench file. Wiring that names a role
the file does not define is refused here, before anything is opened.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from benchlog.badinput import BadInput
from benchlog.tomlcheck import Table, load_toml, parse_toml

ROLE_NAMES = ("supply", "load", "meter", "current_meter")
SENSOR_ROLE = "sensor"
SENSOR_PLACES = ("case", "tab")
TRANSDUCERS = ("thermocouple", "rtd", "thermistor")
FORCE_CHOICES = ("supply", "load")
CURRENT_FROM_CHOICES = ("supply", "load", "meter", "shunt")


@dataclass(frozen=True)
class RoleSpec:
    """One instrument on the bench."""

    role: str
    resource: str
    profile: str  # a profile name, or a path (absolute after loading)
    backend: str = "@py"
    asset: str | None = None  # the lab's asset number, for the report's lab record
    calibration_due: str | None = None  # ISO date; the report warns when a run was made after it


@dataclass(frozen=True)
class SensorSpec:
    """Where the temperature probe sits on the element and how good it is (the role itself is in `roles`)."""

    attached_to: str  # "case" | "tab"
    transducer: str  # "thermocouple" | "rtd" | "thermistor"
    accuracy_c: float | None = None  # ± limit of probe and meter together, when the lab knows it

    def to_dict(self) -> dict[str, Any]:
        return {"attached_to": self.attached_to, "transducer": self.transducer, "accuracy_c": self.accuracy_c}


@dataclass(frozen=True)
class Wiring:
    force: str
    current_from: str
    shunt_ohm: float | None = None
    input_v: float | None = None
    shunt_tolerance_pct: float | None = None  # the shunt's resistance tolerance, ± %: a gain error of the current
    shunt_tempco_ppm_per_k: float | None = None  # its temperature coefficient: another gain error


@dataclass(frozen=True)
class BenchSetup:
    """A bench as the file describes it; `open_rig` turns it into connected roles."""

    roles: dict[str, RoleSpec]
    wiring: Wiring
    line_frequency_hz: float = 50.0
    source: str = "bench"
    simulated: bool = False
    sensor: SensorSpec | None = None  # with a [sensor] role: where its probe sits
    #: the simulated bench's settings that change what is measured (thermal_time_scale), for the header
    sim_settings: dict[str, Any] | None = None
    archive_url: str | None = None  # where finished runs are published; kept out of `to_dict` (the run header)

    def role(self, name: str) -> RoleSpec | None:
        return self.roles.get(name)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready description for the run header (a shunt's tolerance and tempco only when given)."""
        shunt = {key: getattr(self.wiring, key) for key in ("shunt_tolerance_pct", "shunt_tempco_ppm_per_k")
                 if getattr(self.wiring, key) is not None}
        return {
            "roles": {
                name: {"resource": r.resource, "profile": r.profile, "backend": r.backend,
                       # recorded only when stated, so earlier headers stay as they were
                       **({"asset": r.asset} if r.asset else {}),
                       **({"calibration_due": r.calibration_due} if r.calibration_due else {})}
                for name, r in self.roles.items()
            },
            "wiring": {
                "force": self.wiring.force,
                "current_from": self.wiring.current_from,
                "shunt_ohm": self.wiring.shunt_ohm,
                "input_v": self.wiring.input_v,
                **shunt,
            },
            "line_frequency_hz": self.line_frequency_hz,
            "simulated": self.simulated,
            **({"sensor": self.sensor.to_dict()} if self.sensor is not None else {}),
        } | ({"sim": dict(self.sim_settings)} if self.sim_settings else {})


def load_bench(path: str | Path) -> BenchSetup:
    """Read and check a bench file."""
    path = Path(path)
    return bench_from_table(load_toml(path), base_dir=path.parent)


def parse_bench(text: str, source: str = "bench", base_dir: Path | None = None) -> BenchSetup:
    return bench_from_table(parse_toml(text, source), base_dir=base_dir)


def _looks_like_path(profile: str) -> bool:
    return profile.endswith(".toml") or "/" in profile or "\\" in profile


def _role(t: Table, name: str, base_dir: Path | None) -> RoleSpec:
    t.only(("resource", "profile", "backend", "asset", "calibration_due")
           + (("attached_to", "transducer", "accuracy_c") if name == SENSOR_ROLE else ()))
    resource = t.string("resource")
    if not resource.strip() or any(c in resource for c in "\n\r;"):
        raise t.fail("resource", f"is {resource!r}", "a VISA resource string such as 'TCPIP0::10.0.0.5::5025::SOCKET'")
    profile = t.string("profile")
    if not profile.strip():
        raise t.fail("profile", "is empty", "a profile name from instrument_profiles/ or a path to one")
    if _looks_like_path(profile) and base_dir is not None and not Path(profile).is_absolute():
        profile = str((base_dir / profile).resolve())
    return RoleSpec(role=name, resource=resource, profile=profile, backend=t.string("backend", "@py"),
                    asset=t.string("asset", None), calibration_due=_due_date(t))


def _due_date(t: Table) -> str | None:
    """`calibration_due` as an ISO date: a TOML date (2026-06-30) or the same as a string."""
    import datetime

    if not t.has("calibration_due"):
        return None
    value = t.data["calibration_due"]
    if isinstance(value, datetime.date):
        return value.isoformat()[:10]
    text = t.string("calibration_due")
    try:
        return datetime.date.fromisoformat(text).isoformat()
    except ValueError:
        raise t.fail("calibration_due", f"is {text!r}", "a date such as 2026-06-30") from None


def bench_from_table(root: Table, base_dir: Path | None = None) -> BenchSetup:
    root.only(ROLE_NAMES + (SENSOR_ROLE, "wiring", "mains", "archive"))
    roles: dict[str, RoleSpec] = {}
    for name in ROLE_NAMES:
        t = root.table(name, required=False)
        if t is not None:
            roles[name] = _role(t, name, base_dir)
    sensor = None
    t = root.table(SENSOR_ROLE, required=False)
    if t is not None:
        roles[SENSOR_ROLE] = _role(t, SENSOR_ROLE, base_dir)
        sensor = SensorSpec(attached_to=t.string("attached_to", choices=SENSOR_PLACES),
                            transducer=t.string("transducer", choices=TRANSDUCERS),
                            accuracy_c=t.number("accuracy_c", None, positive=True, max=100.0, unit="°C"))
    wiring_table = root.table("wiring")
    wiring = _wiring(wiring_table)
    mains = root.table("mains", required=False)
    line_hz = 50.0
    if mains is not None:
        mains.only(("line_frequency_hz",))
        line_hz = mains.number("line_frequency_hz", 50.0, min=16.0, max=400.0, unit="Hz")
    setup = BenchSetup(roles=roles, wiring=wiring, line_frequency_hz=line_hz, source=root.source, sensor=sensor,
                       archive_url=_archive_url(root.table("archive", required=False)))
    _check_roles(setup, wiring_table)
    return setup


def _archive_url(t: Table | None) -> str | None:
    """The archive a bench publishes to: a database URL without a password (the file is shared and recorded)."""
    if t is None:
        return None
    from urllib.parse import urlsplit

    t.only(("url",))
    url = t.string("url")
    expected = "'sqlite:///FILE' or 'postgresql://USER@HOST[:PORT]/DB' (password from PGPASSWORD or ~/.pgpass)"
    if not url.startswith(("sqlite:///", "postgresql://", "postgresql+psycopg://")):
        raise t.fail("url", f"is {url.split('@')[-1]!r}", expected)
    try:
        has_password = urlsplit(url).password is not None
    except ValueError:
        raise t.fail("url", "is not a URL", expected) from None
    if has_password:
        raise t.fail("url", "holds a password", expected)
    return url


def _wiring(t: Table) -> Wiring:
    t.only(("force", "current_from", "shunt_ohm", "input_v", "shunt_tolerance_pct", "shunt_tempco_ppm_per_k"))
    force = t.string("force", choices=FORCE_CHOICES)
    current_from = t.string("current_from", choices=CURRENT_FROM_CHOICES)
    shunt_ohm = t.number("shunt_ohm", None, positive=True, unit="Ω")
    input_v = t.number("input_v", None, positive=True, unit="V")
    if current_from == "shunt" and shunt_ohm is None:
        raise t.fail("shunt_ohm", "is missing", "the shunt's resistance in ohms when current_from = 'shunt'")
    if current_from != "shunt" and shunt_ohm is not None:
        raise t.fail("shunt_ohm", f"is only used with current_from = 'shunt', not {current_from!r}",
                     "no shunt_ohm, or current_from = 'shunt'")
    if force == "load" and input_v is None:
        raise t.fail("input_v", "is missing", "the supply's CV voltage when force = 'load'")
    if force == "supply" and input_v is not None:
        raise t.fail("input_v", "is only used with force = 'load' (the supply sets compliance_v from the plan)",
                     "no input_v, or force = 'load'")
    tolerance = t.number("shunt_tolerance_pct", None, min=0.0, max=20.0, unit="%")
    tempco = t.number("shunt_tempco_ppm_per_k", None, min=0.0, max=5000.0, unit="ppm/K")
    for key in ("shunt_tolerance_pct", "shunt_tempco_ppm_per_k"):
        if t.has(key) and current_from != "shunt":
            raise t.fail(key, f"is only used with current_from = 'shunt', not {current_from!r}",
                         f"no {key}, or current_from = 'shunt'")
    return Wiring(force=force, current_from=current_from, shunt_ohm=shunt_ohm, input_v=input_v,
                  shunt_tolerance_pct=tolerance, shunt_tempco_ppm_per_k=tempco)


def _check_roles(setup: BenchSetup, wiring_table: Table) -> None:
    """Every role the wiring relies on must be on the bench."""
    need: list[tuple[str, str, str]] = [("meter", "", "the meter that reads the element drop")]
    w = setup.wiring
    need.append(("supply", "force", "the supply that powers the element"))
    if w.force == "load":
        need.append(("load", "force", "an electronic load when force = 'load'"))
    if w.current_from == "load":
        need.append(("load", "current_from", "an electronic load to read the current back from"))
    if w.current_from in ("meter", "shunt"):
        need.append(("current_meter", "current_from", f"a [current_meter] when current_from = {w.current_from!r}"))
    for role, key, why in need:
        if role not in setup.roles:
            where = wiring_table.where(key) if key else f"[{role}]"
            raise BadInput(setup.source, where, f"needs a [{role}] table, which the bench file lacks", why)
