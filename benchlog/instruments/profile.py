"""Instrument profiles: TOML data that says how to recognise, drive and trust one instrument role.

A profile is read with `tomllib` and validated here; nothing in it is ever executed.
Command templates are SCPI text with named placeholders (`VOLT {voltage_v}`) that
are filled only by `benchlog.scpi.fill_template`, so a value can never add SCPI text.
Every fault is a `ProfileError` naming file, key, problem and what was expected.
The format is described key by key in `docs/adding-a-profile.md`.
"""

from __future__ import annotations

import hashlib
import math
import os
import re
import string
from dataclasses import dataclass
from pathlib import Path
from types import MappingProxyType
from typing import Mapping

from benchlog.accuracy import Accuracy
from benchlog.badinput import BadInput
from benchlog.scpi.errors import ScpiError
from benchlog.scpi.numbers import fill_template
from benchlog.tomlcheck import Table, parse_toml, read_utf8

from .errors import ProfileError

SCHEMA = 1
ROLES = ("supply", "load", "meter")
PROFILE_PATH_ENV = "BENCHLOG_PROFILE_PATH"

# What may appear in a template: printable ASCII only, so no newline, no control
# character and no terminator can be written into a profile's command text.
_PRINTABLE = re.compile(r"^[\x20-\x7e]+$")
_NAME = re.compile(r"^[a-z0-9][a-z0-9-]{0,63}$")
_MAX_TEMPLATE = 200


@dataclass(frozen=True)
class Operation:
    """One operation a role can ask of its instrument and the placeholders its template may use."""

    query: bool
    required: frozenset[str] = frozenset()
    optional: frozenset[str] = frozenset()


def _op(query: bool, required: tuple[str, ...] = (), optional: tuple[str, ...] = ()) -> Operation:
    return Operation(query, frozenset(required), frozenset(optional))


# role -> operation name -> (Operation, required?)
OPERATIONS: Mapping[str, Mapping[str, tuple[Operation, bool]]] = MappingProxyType(
    {
        "supply": MappingProxyType(
            {
                "set_voltage": (_op(False, ("voltage_v",)), True),
                "set_current_limit": (_op(False, ("current_a",)), True),
                "output_on": (_op(False), True),
                "output_off": (_op(False), True),
                "measure_voltage": (_op(True), True),
                "measure_current": (_op(True), True),
                "output_state": (_op(True), False),
                "over_voltage_protection": (_op(False, ("voltage_v",)), False),
                "over_current_protection": (_op(False, ("current_a",)), False),
                "output_timer": (_op(False, ("duration_s",)), False),
                "protection_tripped": (_op(True), False),
                "protection_clear": (_op(False), False),
                "polarity_normal": (_op(False), False),
                "polarity_reversed": (_op(False), False),
                "error_query": (_op(True), False),
                "sync": (_op(True), False),
            }
        ),
        "load": MappingProxyType(
            {
                "set_mode_cc": (_op(False), False),
                "set_current": (_op(False, ("current_a",)), True),
                "input_on": (_op(False), True),
                "input_off": (_op(False), True),
                "input_state": (_op(True), False),
                # the load's own protection on its input, a second line of defence (programmed from the plan)
                "over_current_protection": (_op(False, ("current_a",)), False),
                "over_power_protection": (_op(False, ("power_w",)), False),
                "over_voltage_protection": (_op(False, ("voltage_v",)), False),
                "protection_tripped": (_op(True), False),
                "protection_clear": (_op(False), False),
                "measure_voltage": (_op(True), True),
                "measure_current": (_op(True), True),
                "error_query": (_op(True), False),
                "sync": (_op(True), False),
            }
        ),
        "meter": MappingProxyType(
            {
                # {nplc} is optional: a meter without an integration-time command can be described
                "configure_voltage": (_op(False, ("range_v",), ("nplc",)), True),
                "configure_current": (_op(False, ("range_a",), ("nplc",)), False),
                "set_samples": (_op(False, ("count",)), False),
                "trigger": (_op(False), False),
                "read": (_op(True), True),
                "measure_voltage": (_op(True, (), ("range_v",)), False),
                "measure_current": (_op(True, (), ("range_a",)), False),
                # the temperature function (thermocouple, RTD or thermistor input), for a meter
                # whose probe sits on the element: SCPI-99 CONFigure:TEMPerature / MEASure:TEMPerature?
                "configure_temperature": (_op(False), False),
                "measure_temperature": (_op(True), False),
                "error_query": (_op(True), False),
                "sync": (_op(True), False),
            }
        ),
    }
)

DEFAULT_ERROR_QUERY = "SYST:ERR?"
# IEEE 488.2 10.18: *OPC? answers 1 once every pending operation is complete, so its reply
# means the setpoints sent before it are applied (commands on separate links are not ordered).
DEFAULT_SYNC_QUERY = "*OPC?"

ACCURACY_FUNCTIONS: Mapping[str, tuple[str, ...]] = MappingProxyType(
    {
        "supply": ("readback_voltage", "readback_current"),
        "load": ("readback_voltage", "readback_current"),
        "meter": ("dc_voltage", "dc_current"),
    }
)

# Sample values used to dry-run every template through fill_template at load time.
_SAMPLE_VALUES = {"voltage_v": 1.5, "current_a": 0.25, "range_v": 10.0, "range_a": 1.0, "nplc": 1.0, "count": 4,
                  "duration_s": 60.0, "power_w": 20.0}

#: Program headers a connect command must not carry: they switch power on or program a setpoint
#: (SCPI-99 vol. 2 SOURce, OUTPut and INPut subsystems; APPLy sets voltage and current at once).
#: A connect command runs before the plan is checked and before the caution, so it must leave
#: the instrument harmless; the sweep programs every setpoint itself.
SETPOINT_HEADERS = (
    "[SOURce:]VOLTage[:LEVel][:IMMediate][:AMPLitude]",
    "[SOURce:]CURRent[:LEVel][:IMMediate][:AMPLitude]",
    "[SOURce:]POWer[:LEVel][:IMMediate][:AMPLitude]",
    "[SOURce:]RESistance[:LEVel][:IMMediate][:AMPLitude]",
    "APPLy",
)
#: Headers whose boolean parameter switches an output or input: refused unless it says OFF / 0.
SWITCH_HEADERS = ("OUTPut[:STATe]", "INPut[:STATe]")


@dataclass(frozen=True)
class AccuracySpec:
    """One `[[accuracy]]` entry: the datasheet's accuracy of one function on one range."""

    function: str
    accuracy: Accuracy

    @property
    def range(self) -> float:
        return self.accuracy.range


@dataclass(frozen=True)
class ModeDecoding:
    """How to tell CV from CC: bits of an integer status register, or fixed reply texts."""

    query: str
    cv_bit: int | None = None
    cc_bit: int | None = None
    cv_text: str | None = None
    cc_text: str | None = None
    off_text: str | None = None

    @property
    def uses_register(self) -> bool:
        return self.cv_bit is not None


@dataclass(frozen=True)
class Limits:
    """What the bench may ask of this instrument; setpoints outside are refused before sending."""

    max_voltage_v: float | None = None
    max_current_a: float | None = None
    voltage_ranges_v: tuple[float, ...] = ()
    current_ranges_a: tuple[float, ...] = ()
    nplc_choices: tuple[float, ...] = ()
    nplc_min: float | None = None
    nplc_max: float | None = None
    max_samples: int = 1


@dataclass(frozen=True)
class Profile:
    """One validated instrument profile."""

    name: str
    role: str
    description: str
    idn_pattern: str
    generic: bool
    read_termination: str
    write_termination: str
    timeout_s: float
    connect_commands: tuple[str, ...]
    commands: Mapping[str, str]
    mode: ModeDecoding | None
    limits: Limits
    accuracy: tuple[AccuracySpec, ...]
    path: Path | None
    sha256: str
    #: [link].compound_queries: the instrument takes several `;`-joined program units in one
    #: message and answers its queries in one `;`-separated response (IEEE 488.2 7.3 and 8.4.1,
    #: SCPI-99 vol. 1 6.2.4), so a setpoint and its sync, or several read-backs, cost one round trip.
    compound_queries: bool = False

    def has(self, operation: str) -> bool:
        return operation in self.commands

    @property
    def sets_nplc(self) -> bool:
        """True when the meter's configure templates set the integration time ({nplc})."""
        return "{nplc}" in self.commands.get("configure_voltage", "")

    def matches_idn(self, idn_text: str) -> bool:
        """`idn_pattern` is searched (Python `re.search`) in the *IDN? reply with outer whitespace removed."""
        return re.search(self.idn_pattern, idn_text.strip()) is not None

    @property
    def error_query(self) -> str:
        return self.commands.get("error_query", DEFAULT_ERROR_QUERY)

    @property
    def sync_query(self) -> str:
        """The query whose reply means every command sent before it has been applied."""
        return self.commands.get("sync", DEFAULT_SYNC_QUERY)

    @property
    def source(self) -> str:
        return str(self.path) if self.path else self.name

    def accuracy_for(self, function: str, range_: float) -> Accuracy:
        """The accuracy of `function` on `range_` (ranges compared to 1 part in 10^9)."""
        for spec in self.accuracy:
            if spec.function == function and math.isclose(spec.range, range_, rel_tol=1e-9):
                return spec.accuracy
        listed = ", ".join(f"{s.range:g}" for s in self.accuracy if s.function == function) or "none"
        raise ProfileError(
            self.source, "[[accuracy]]", f"no {function} spec for range {range_:g}", f"one of: {listed}"
        )


# -- reading ---------------------------------------------------------------


def load_profile(name_or_path: str | Path) -> Profile:
    """A profile by file path, or by name from `profile_dirs()`."""
    text = str(name_or_path)
    path = Path(text)
    if text.endswith(".toml") or os.sep in text or "/" in text or path.is_file():
        return read_profile(path)
    for directory in profile_dirs():
        candidate = directory / f"{text}.toml"
        if candidate.is_file():
            return read_profile(candidate)
    for profile in list_profiles():
        if profile.name == text:
            return profile
    known = ", ".join(sorted({p.name for p in list_profiles()})) or "none found"
    raise ProfileError("profile", text, "no profile of this name", f"a profile file or one of: {known}")


def read_profile(path: str | Path) -> Profile:
    """Read and validate one profile file."""
    path = Path(path)
    try:
        text, raw = read_utf8(path)
    except BadInput as exc:
        raise ProfileError(exc.source, exc.where, exc.problem, exc.expected) from None
    return parse_profile(text, str(path), path=path, sha256=hashlib.sha256(raw).hexdigest())


def parse_profile(text: str, source: str = "<profile>", *, path: Path | None = None, sha256: str = "") -> Profile:
    """Validate profile TOML text; `source` names it in errors."""
    try:
        root = parse_toml(text, source)
        return _build(root, path, sha256 or hashlib.sha256(text.encode("utf-8")).hexdigest())
    except ProfileError:
        raise
    except BadInput as exc:  # tomlcheck's errors, re-typed so callers can catch profile faults alone
        raise ProfileError(exc.source, exc.where, exc.problem, exc.expected) from None


def profile_dirs() -> list[Path]:
    """Where profiles are looked for: $BENCHLOG_PROFILE_PATH entries, then the shipped folder."""
    dirs: list[Path] = []
    for entry in os.environ.get(PROFILE_PATH_ENV, "").split(os.pathsep):
        if entry:
            dirs.append(Path(entry))
    package = Path(__file__).resolve().parent.parent  # benchlog/
    dirs.append(package / "instrument_profiles")  # installed wheel
    dirs.append(package.parent / "instrument_profiles")  # source checkout
    seen: list[Path] = []
    for d in dirs:
        if d.is_dir() and d.resolve() not in [s.resolve() for s in seen]:
            seen.append(d)
    return seen


def scan_profiles() -> tuple[list[Profile], list[ProfileError]]:
    """Every profile found (first directory wins on a name clash) and the errors of the broken files."""
    found: dict[str, Profile] = {}
    broken: list[ProfileError] = []
    for directory in profile_dirs():
        for file in sorted(directory.glob("*.toml")):
            try:
                profile = read_profile(file)
            except ProfileError as exc:
                broken.append(exc)
                continue
            found.setdefault(profile.name, profile)
    return list(found.values()), broken


def list_profiles() -> list[Profile]:
    """Every valid profile found; broken files are left out (`scan_profiles` reports them)."""
    return scan_profiles()[0]


def match_idn(idn_text: str, role: str | None = None) -> list[Profile]:
    """Profiles whose `idn_pattern` matches this *IDN? reply; specific ones before generic ones."""
    hits = [p for p in list_profiles() if p.matches_idn(idn_text) and (role is None or p.role == role)]
    return sorted(hits, key=lambda p: p.generic)


# -- validation ------------------------------------------------------------


def _build(root: Table, path: Path | None, sha256: str) -> Profile:
    root.only(("schema", "name", "role", "description", "idn_pattern", "generic",
               "link", "commands", "mode", "limits", "accuracy"))  # fmt: skip
    schema = root.integer("schema")
    if schema != SCHEMA:
        raise root.fail("schema", f"is {schema}", f"{SCHEMA} (the profile format this benchlog reads)")
    name = root.string("name")
    if not _NAME.match(name):
        raise root.fail("name", f"is {name!r}", "lower-case letters, digits and '-', such as 'generic-dmm'")
    role = root.string("role", choices=ROLES)
    description = root.string("description", "")
    idn_pattern = _idn_pattern(root)
    generic = root.boolean("generic", False)

    link = root.table("link")
    link.only(("read_termination", "write_termination", "timeout_s", "connect_commands", "compound_queries"))
    terminations = ("\n", "\r\n", "\r")
    read_term = link.string("read_termination", "\n")
    write_term = link.string("write_termination", "\n")
    for key, value in (("read_termination", read_term), ("write_termination", write_term)):
        if value not in terminations:
            raise link.fail(key, f"is {value!r}", 'one of "\\n", "\\r\\n", "\\r"')
    timeout_s = link.number("timeout_s", 2.0, min=0.05, max=600.0, unit="s")
    compound = link.boolean("compound_queries", False)
    connect = link.strings("connect_commands", ())
    for i, command in enumerate(connect):
        _check_text(link, f"connect_commands[{i}]", command)
        if "{" in command or "}" in command:
            raise link.fail(f"connect_commands[{i}]", f"has a placeholder in {command!r}", "fixed command text")

    if generic:
        _generic_connect(link, connect)
    commands = _commands(root.table("commands"), role)
    for i, command in enumerate(connect):
        _check_harmless(link, f"connect_commands[{i}]", command, commands)
    mode = _mode(root, role)
    limits = _limits(root.table("limits"), role, commands)
    accuracy = _accuracy(root, role, limits, commands)

    return Profile(
        name=name,
        role=role,
        description=description,
        idn_pattern=idn_pattern,
        generic=generic,
        read_termination=read_term,
        write_termination=write_term,
        timeout_s=timeout_s,
        connect_commands=tuple(connect),
        commands=MappingProxyType(commands),
        mode=mode,
        limits=limits,
        accuracy=accuracy,
        path=path,
        sha256=sha256,
        compound_queries=compound,
    )


def _check_harmless(table: Table, key: str, command: str, commands: Mapping[str, str]) -> None:
    """Refuse a connect command that switches power on or programs a setpoint.

    Headers are compared with the SCPI short/long-form matcher (`VOLT`, `SOUR:VOLTAGE`
    and `:source:volt:lev` are all the same header), unit by unit after `;`; the
    profile's own power templates (output_on, set_voltage, ...) are refused in any form.
    """
    from benchlog.scpi.errors import ScpiError as _ScpiError
    from benchlog.scpi.headers import matches
    from benchlog.scpi.messages import split_message

    try:
        units = split_message(command)
    except _ScpiError as exc:
        raise table.fail(key, f"is not a SCPI program message ({exc})", "SCPI command text") from None
    expected = "connect commands that leave every output off and program no setpoint (the sweep sets them)"
    own = {}
    for op in ("output_on", "input_on", "set_voltage", "set_current_limit", "set_current"):
        template = commands.get(op)
        if template is None:
            continue
        try:
            for unit in split_message(fill_template(template, **{n: _SAMPLE_VALUES[n] for n in _SAMPLE_VALUES})):
                own.setdefault(unit.header.upper(), (op, unit.params))
        except _ScpiError:
            continue
    for unit in units:
        if unit.is_query or unit.header.startswith("*"):
            continue
        if any(matches(pattern, unit.header) for pattern in SETPOINT_HEADERS):
            raise table.fail(key, f"programs a setpoint ({command!r})", expected)
        if any(matches(pattern, unit.header) for pattern in SWITCH_HEADERS):
            value = unit.params[0].strip().upper() if unit.params else ""
            if value not in ("OFF", "0"):
                raise table.fail(key, f"switches an output or input on ({command!r})", expected)
        hit = own.get(unit.header.upper())
        if hit is not None:
            op, params = hit
            if op in ("output_on", "input_on") and tuple(p.upper() for p in unit.params) != tuple(
                    p.upper() for p in params):
                continue  # the same header with another argument (OFF) is the off command
            raise table.fail(key, f"is this profile's {op} command ({command!r})", expected)


#: What a generic profile may send at connect: IEEE 488.2 mandatory common commands (clear status, reset,
#: wait, the two enable registers) and SCPI-99's mandatory STATus:PRESet: every SCPI instrument accepts them.
_SCPI99_CONNECT = re.compile(r"^(\*CLS|\*RST|\*WAI|\*ESE \d{1,3}|\*SRE \d{1,3}|STAT(?:US)?:PRES(?:ET)?)$", re.IGNORECASE)


def _generic_connect(link: Table, connect: tuple[str, ...]) -> None:
    """A generic profile serves instruments nobody checked it on: only commands all of them accept."""
    for i, command in enumerate(connect):
        if not _SCPI99_CONNECT.match(command.strip()):
            raise link.fail(f"connect_commands[{i}]", f"is {command!r}, which not every SCPI-99 instrument accepts",
                            "in a generic profile only *CLS, *RST, *WAI, *ESE n, *SRE n or STATus:PRESet "
                            "(put other commands in a profile for your instrument, generic = false)")


def _idn_pattern(root: Table) -> str:
    pattern = root.string("idn_pattern")
    if not pattern or len(pattern) > 200:
        raise root.fail("idn_pattern", "is empty or longer than 200 characters", "a regular expression")
    try:
        re.compile(pattern)
    except re.error as exc:
        raise root.fail("idn_pattern", f"is not a valid regular expression ({exc})", "a Python regular expression") from None
    return pattern


def _check_text(table: Table, key: str, text: str) -> None:
    if not text.strip():
        raise table.fail(key, "is empty", "SCPI command text")
    if len(text) > _MAX_TEMPLATE:
        raise table.fail(key, f"is {len(text)} characters long", f"at most {_MAX_TEMPLATE}")
    if not _PRINTABLE.match(text):
        raise table.fail(key, f"contains a newline or control character in {text!r}", "printable ASCII on one line")


def _placeholders(table: Table, key: str, template: str) -> set[str]:
    names: set[str] = set()
    try:
        parts = list(string.Formatter().parse(template))
    except ValueError as exc:
        raise table.fail(key, f"has unbalanced braces ({exc})", "placeholders written as {name}") from None
    for _, field, spec, conversion in parts:
        if field is None:
            continue
        if not field.isidentifier() or spec or conversion:
            raise table.fail(key, f"has placeholder {{{field}{'!' + conversion if conversion else ''}"
                             f"{':' + spec if spec else ''}}}", "a plain {name} without format or index")
        names.add(field)
    return names


def _commands(table: Table, role: str) -> dict[str, str]:
    ops = OPERATIONS[role]
    table.only(ops)
    commands: dict[str, str] = {}
    for op_name, (op, required) in ops.items():
        if not table.has(op_name):
            if required:
                raise table.fail(op_name, "is missing", f"a command template for {op_name} (a {role} needs it)")
            continue
        template = table.string(op_name)
        _check_text(table, op_name, template)
        names = _placeholders(table, op_name, template)
        unknown = names - op.required - op.optional
        if unknown:
            allowed = ", ".join("{" + n + "}" for n in sorted(op.required | op.optional)) or "no placeholders"
            raise table.fail(op_name, "has unknown placeholder " + ", ".join("{" + n + "}" for n in sorted(unknown)),
                             f"only {allowed}")
        missing = op.required - names
        if missing:
            raise table.fail(op_name, "lacks placeholder " + ", ".join("{" + n + "}" for n in sorted(missing)),
                             f"a template such as {_example(op_name)!r}")
        if op.query and "?" not in template:
            raise table.fail(op_name, f"is {template!r}, which asks nothing", "a query (a header ending in '?')")
        if not op.query and "?" in template:
            raise table.fail(op_name, f"is {template!r}, a query", "a command that sends no reply (no '?')")
        try:
            fill_template(template, **{n: _SAMPLE_VALUES[n] for n in names})
        except ScpiError as exc:
            raise table.fail(op_name, f"cannot be filled ({exc})", "a template fill_template accepts") from None
        commands[op_name] = template
    if role == "supply" and ("polarity_normal" in commands) != ("polarity_reversed" in commands):
        absent = "polarity_reversed" if "polarity_normal" in commands else "polarity_normal"
        raise table.fail(absent, "is missing", "both polarity_normal and polarity_reversed, or neither")
    return commands


def _example(op_name: str) -> str:
    return {
        "set_voltage": "VOLT {voltage_v}",
        "set_current_limit": "CURR {current_a}",
        "set_current": "CURR {current_a}",
        "configure_voltage": "CONF:VOLT:DC {range_v};:VOLT:DC:NPLC {nplc}",
        "configure_current": "CONF:CURR:DC {range_a};:CURR:DC:NPLC {nplc}",
        "set_samples": "SAMP:COUN {count}",
        "over_voltage_protection": "VOLT:PROT {voltage_v}",
        "over_current_protection": "CURR:PROT {current_a}",
        "over_power_protection": "POW:PROT {power_w}",
        "output_timer": "OUTP:PROT:TIM {duration_s}",
        "measure_temperature": "MEAS:TEMP?",
    }.get(op_name, "")


def _mode(root: Table, role: str) -> ModeDecoding | None:
    table = root.table("mode", required=False)
    if table is None:
        return None
    if role != "supply":
        raise root.fail("mode", f"is given for a {role}", "a [mode] table only in supply profiles")
    table.only(("query", "cv_bit", "cc_bit", "cv_text", "cc_text", "off_text"))
    query = table.string("query")
    _check_text(table, "query", query)
    if "?" not in query or "{" in query:
        raise table.fail("query", f"is {query!r}", "a fixed query such as 'STAT:OPER:COND?'")
    bits = [k for k in ("cv_bit", "cc_bit") if table.has(k)]
    texts = [k for k in ("cv_text", "cc_text", "off_text") if table.has(k)]
    if bits and texts:
        raise table.fail(texts[0], "mixes reply texts with register bits", "either cv_bit and cc_bit, or cv_text and cc_text")
    if bits or not texts:
        cv = table.integer("cv_bit", min=0, max=15)
        cc = table.integer("cc_bit", min=0, max=15)
        if cv == cc:
            raise table.fail("cc_bit", f"is {cc}, the same as cv_bit", "two different bit numbers (0..15)")
        return ModeDecoding(query=query, cv_bit=cv, cc_bit=cc)
    cv_text = table.string("cv_text")
    cc_text = table.string("cc_text")
    off_text = table.string("off_text", None)
    given = [t.strip().upper() for t in (cv_text, cc_text, off_text) if t is not None]
    if any(not t for t in given) or len(set(given)) != len(given):
        raise table.fail("cc_text", "reply texts are empty or not distinct", "different words such as 'CV', 'CC', 'OFF'")
    return ModeDecoding(query=query, cv_text=cv_text, cc_text=cc_text, off_text=off_text)


def _limits(table: Table, role: str, commands: dict[str, str]) -> Limits:
    if role == "supply":
        table.only(("max_voltage_v", "max_current_a"))
        return Limits(
            max_voltage_v=table.number("max_voltage_v", positive=True, max=1e4, unit="V"),
            max_current_a=table.number("max_current_a", positive=True, max=1e4, unit="A"),
        )
    if role == "load":
        table.only(("max_voltage_v", "max_current_a"))
        return Limits(
            max_voltage_v=table.number("max_voltage_v", None, positive=True, max=1e4, unit="V"),
            max_current_a=table.number("max_current_a", positive=True, max=1e4, unit="A"),
        )
    table.only(("voltage_ranges_v", "current_ranges_a", "nplc_choices", "nplc_min", "nplc_max", "max_samples"))
    voltage_ranges = _ranges(table, "voltage_ranges_v", "V", required=True)
    current_ranges = _ranges(table, "current_ranges_a", "A", required="configure_current" in commands)
    if current_ranges and "configure_current" not in commands:
        raise table.fail("current_ranges_a", "is given but [commands].configure_current is not",
                         "both, or neither")
    choices = table.numbers("nplc_choices", (), positive=True, max=1000.0)
    nplc_min = table.number("nplc_min", None, positive=True, max=1000.0)
    nplc_max = table.number("nplc_max", None, positive=True, max=1000.0)
    if choices and (nplc_min is not None or nplc_max is not None):
        raise table.fail("nplc_min", "is given together with nplc_choices", "either a list of choices or a min/max range")
    sets_nplc = _check_nplc_templates(table, commands)
    if not sets_nplc:
        for key in ("nplc_choices", "nplc_min", "nplc_max"):
            if table.has(key):
                raise table.fail(key, "is given but no configure template has {nplc}",
                                 "{nplc} in [commands].configure_voltage, or no NPLC keys for a meter without one")
    elif not choices:
        if nplc_min is None:
            raise table.fail("nplc_choices", "is missing", "nplc_choices = [...] or nplc_min and nplc_max")
        if nplc_max is None:
            raise table.fail("nplc_max", "is missing", "nplc_max together with nplc_min")
        if nplc_max < nplc_min:
            raise table.fail("nplc_max", f"is {nplc_max:g}, below nplc_min {nplc_min:g}", "nplc_max >= nplc_min")
    if "set_samples" in commands:
        max_samples = table.integer("max_samples", min=1, max=1_000_000)
    elif table.has("max_samples"):
        raise table.fail("max_samples", "is given but [commands].set_samples is not", "both, or neither")
    else:
        max_samples = 1
    return Limits(
        voltage_ranges_v=voltage_ranges,
        current_ranges_a=current_ranges,
        nplc_choices=tuple(sorted(choices)),
        nplc_min=nplc_min,
        nplc_max=nplc_max,
        max_samples=max_samples,
    )


def _check_nplc_templates(table: Table, commands: dict[str, str]) -> bool:
    """Whether the meter sets NPLC; both configure templates must agree (one integration time per meter)."""
    in_voltage = "{nplc}" in commands.get("configure_voltage", "")
    current = commands.get("configure_current")
    if current is not None and ("{nplc}" in current) != in_voltage:
        raise BadInput(table.source, "[commands].configure_current",
                       "has {nplc} where configure_voltage has not" if not in_voltage
                       else "lacks {nplc} where configure_voltage has it",
                       "{nplc} in both configure templates, or in neither")
    return in_voltage


def _ranges(table: Table, key: str, unit: str, required: bool) -> tuple[float, ...]:
    values = table.numbers(key) if required else table.numbers(key, ())
    for i, v in enumerate(values):
        if not 0 < v <= 1e4:
            raise table.fail(f"{key}[{i}]", f"is {v:g}", f"a range above 0 and at most 10000 {unit}")
    if list(values) != sorted(set(values)):
        raise table.fail(key, "is not in rising order without repeats", f"ranges such as [0.1, 1, 10] {unit}")
    return values


def _accuracy(root: Table, role: str, limits: Limits, commands: dict[str, str]) -> tuple[AccuracySpec, ...]:
    allowed = ACCURACY_FUNCTIONS[role]
    specs: list[AccuracySpec] = []
    for entry in root.tables("accuracy"):
        entry.only(("function", "range", "reading_pct", "range_pct"))
        function = entry.string("function", choices=allowed)
        range_ = entry.number("range", positive=True, max=1e4)
        spec = AccuracySpec(function, Accuracy(
            reading_pct=entry.number("reading_pct", min=0.0, max=100.0, unit="%"),
            range_pct=entry.number("range_pct", min=0.0, max=100.0, unit="%"),
            range=range_,
        ))
        for earlier in specs:
            if earlier.function == spec.function and math.isclose(earlier.range, spec.range, rel_tol=1e-9):
                raise entry.fail("range", f"repeats {spec.function} range {spec.range:g}", "one entry per function and range")
        if role == "meter":
            listed = limits.voltage_ranges_v if spec.function == "dc_voltage" else limits.current_ranges_a
            if not any(math.isclose(spec.range, r, rel_tol=1e-9) for r in listed):
                key = "voltage_ranges_v" if spec.function == "dc_voltage" else "current_ranges_a"
                raise entry.fail("range", f"is {spec.range:g}, not a range in [limits].{key}",
                                 "one of " + (", ".join(f"{r:g}" for r in listed) or "(none listed)"))
        specs.append(spec)
    if role == "meter":
        # The uncertainty budget needs a spec for every range the sweep may use.
        for function, ranges in (("dc_voltage", limits.voltage_ranges_v), ("dc_current", limits.current_ranges_a)):
            for r in ranges:
                if not any(s.function == function and math.isclose(s.range, r, rel_tol=1e-9) for s in specs):
                    raise root.fail("accuracy", f"has no {function} entry for range {r:g}",
                                    "one [[accuracy]] entry per meter range")
    return tuple(specs)
