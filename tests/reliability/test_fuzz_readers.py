"""Hypothesis fuzzing of what tests/scpi and tests/runs do not fuzz yet: our TOML readers on mutated files.

Each reader (plan, bench, profile, part spec, design, sim config) gets a valid
file with random mutations (a value swapped for a hostile one, a key renamed,
a line dropped, doubled or cut, a stray table, random characters); it must give
its value or `BadInput` naming the file, as one line, and nothing else may
escape. A value that is accepted must be usable: a plan that loads carries only
finite numbers. The reply parsers (`parse_number`, `parse_idn`,
`parse_error_entry`, ...) on arbitrary text are fuzzed in
tests/scpi/test_replies.py, the run-file reader in tests/runs/test_fuzz.py;
here the error-queue and `*IDN?` parsers also get round trips of well-formed
replies built from arbitrary fields.
"""

from __future__ import annotations

import math
import tempfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from benchlog.badinput import BadInput
from benchlog.scpi.errors import ScpiReplyError
from benchlog.scpi.replies import ErrorEntry, Idn, parse_error_entry, parse_idn

#: many generated inputs: a stress check (`-m "not slow"` skips it)
pytestmark = pytest.mark.slow

ROOT = Path(__file__).resolve().parents[2]
PLAN_TEXT = (Path(__file__).parent / "plans" / "pmos-40.toml").read_text(encoding="utf-8")
PROFILE_TEXT = (ROOT / "instrument_profiles" / "sim-meter.toml").read_text(encoding="utf-8")
SPEC_TEXT = (ROOT / "benchlog" / "demo" / "specs" / "demo-pfet-10m.toml").read_text(encoding="utf-8")
DESIGN_TEXT = (ROOT / "benchlog" / "demo" / "design.toml").read_text(encoding="utf-8")
BENCH_TEXT = """[supply]
resource = "TCPIP0::127.0.0.1::5025::SOCKET"
profile = "sim-supply"

[load]
resource = "TCPIP0::127.0.0.1::5026::SOCKET"
profile = "sim-load"

[meter]
resource = "TCPIP0::127.0.0.1::5027::SOCKET"
profile = "sim-meter"

[current_meter]
resource = "TCPIP0::127.0.0.1::5028::SOCKET"
profile = "sim-meter"

[wiring]
force = "load"
current_from = "meter"
input_v = 12.0

[mains]
line_frequency_hz = 60
"""
SIM_TEXT = """element = "rectifier"
seed = 3
ambient_c = 25.0
latency_s = 0.001
current_meter = true
shunt_ohm = 0.01

[element_params]

[faults]
hang_after = 40
extra_latency_s = 0.0
role = "meter"
"""

HOSTILE_VALUES = [
    "nan", "+inf", "-inf", "1e400", "-1e400", "1e300", "-1", "0", "-0.0", "2.5", "1_000_000_000_000_000_000_000",
    "true", "false", '"text"', '""', '"1;*RST"', '"1\\nOUTP ON"', '"\\u0000"', "[]", "[1, \"a\"]", "[nan]", "{}",
    "{ a = 1 }", "1979-05-27T07:32:00Z", "07:32:00", "0x10", '"__import__(\'os\')"', "'''multi\nline'''",
]
JUNK = st.text(alphabet=st.characters(codec="utf-8", exclude_categories=("Cs",)), max_size=12)


@st.composite
def mutated(draw, text: str) -> str:
    lines = text.split("\n")
    for _ in range(draw(st.integers(1, 4))):
        if not lines:
            break
        i = draw(st.integers(0, len(lines) - 1))
        line = lines[i]
        kind = draw(st.sampled_from(["value", "value", "value", "rename", "drop", "double", "cut", "table", "junk"]))
        if kind == "value" and "=" in line:
            key = line.split("=", 1)[0]
            lines[i] = f"{key}= {draw(st.sampled_from(HOSTILE_VALUES))}"
        elif kind == "rename" and "=" in line:
            key, value = line.split("=", 1)
            lines[i] = f"{key.strip()}{draw(st.sampled_from(['x', '_v', '2', '.sub']))} ={value}"
        elif kind == "drop":
            del lines[i]
        elif kind == "double":
            lines.insert(i, line)
        elif kind == "cut":
            lines[i] = line[: draw(st.integers(0, len(line)))]
        elif kind == "table":
            lines.insert(i, draw(st.sampled_from(["[extra]", "[[element]]", "[limits.deep]", "[", "[wiring]"])))
        else:
            lines[i] = line + draw(JUNK)
    return "\n".join(lines)


FUZZ = settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def _only_bad_input(read, text: str, source: str):
    """Run `read(text)`; return its value, or None after checking the BadInput it raised."""
    try:
        return read(text)
    except BadInput as exc:
        line = exc.line()
        assert "\n" not in line and "\r" not in line
        assert exc.source.endswith(source) or source in exc.source or exc.source == "argument", line
        return None


def _in_file(name: str, text: str, read):
    """For readers that take a path: write the text into a fresh folder and read it there."""
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / name
        path.write_text(text, encoding="utf-8")
        return read(path)


def _all_finite(value) -> bool:
    if isinstance(value, float):
        return math.isfinite(value)
    if isinstance(value, dict):
        return all(_all_finite(v) for v in value.values())
    if isinstance(value, (list, tuple)):
        return all(_all_finite(v) for v in value)
    return True


@FUZZ
@given(mutated(PLAN_TEXT))
def test_mutated_plan_loads_or_is_bad_input(text):
    from benchlog.sweep.plan import parse_plan

    plan = _only_bad_input(lambda t: parse_plan(t, "fuzz-plan.toml"), text, "fuzz-plan.toml")
    if plan is not None:
        assert _all_finite(plan.to_dict())
        limits = plan.limits
        assert limits.max_current_a > 0 and math.isfinite(limits.max_current_a)


@FUZZ
@given(mutated(BENCH_TEXT))
def test_mutated_bench_file_loads_or_is_bad_input(text):
    from benchlog.sweep.bench_file import parse_bench

    setup = _only_bad_input(lambda t: parse_bench(t, "fuzz-bench.toml"), text, "fuzz-bench.toml")
    if setup is not None:
        for role in setup.roles.values():
            assert not any(c in role.resource for c in ";\n\r")  # never an extra SCPI message in a resource
        assert math.isfinite(setup.line_frequency_hz)


@FUZZ
@given(mutated(PROFILE_TEXT))
def test_mutated_profile_loads_or_is_bad_input(text):
    from benchlog.instruments.profile import parse_profile

    profile = _only_bad_input(lambda t: parse_profile(t, "fuzz-profile.toml"), text, "fuzz-profile.toml")
    if profile is not None:
        assert math.isfinite(profile.timeout_s) and profile.timeout_s > 0
        assert all(math.isfinite(a.accuracy.reading_pct) and math.isfinite(a.accuracy.range_pct) for a in profile.accuracy)


@FUZZ
@given(mutated(SPEC_TEXT))
def test_mutated_part_spec_loads_or_is_bad_input(text):
    from benchlog.specfiles import load_spec

    _only_bad_input(lambda t: _in_file("fuzz-spec.toml", t, load_spec), text, "fuzz-spec.toml")


@FUZZ
@given(mutated(DESIGN_TEXT))
def test_mutated_design_file_loads_or_is_bad_input(text):
    from benchlog.specfiles import load_design

    def read(path: Path):
        specs = path.parent / "specs"
        specs.mkdir()
        for spec in (ROOT / "benchlog" / "demo" / "specs").glob("*.toml"):
            (specs / spec.name).write_bytes(spec.read_bytes())
        return load_design(path)

    try:
        _in_file("fuzz-design.toml", text, read)
    except BadInput as exc:  # a candidate's spec file is named instead, when it is the one at fault
        assert "\n" not in exc.line() and exc.source.endswith(".toml")


@FUZZ
@given(mutated(SIM_TEXT))
def test_mutated_sim_config_loads_or_is_bad_input(text):
    from benchlog.sim.config import load_sim_config

    config = _only_bad_input(lambda t: _in_file("fuzz-sim.toml", t, load_sim_config), text, "fuzz-sim.toml")
    if config is not None:
        assert config.is_loopback or config.host not in ("127.0.0.1", "localhost", "::1")


# -- well-formed replies round-trip through the parsers (SCPI-99 vol. 2 21.8; IEEE 488.2 *IDN?) ---------------

PRINTABLE = st.text(alphabet=st.characters(min_codepoint=0x20, max_codepoint=0x7E), max_size=40)


@given(st.integers(-32768, 32767), PRINTABLE)
def test_error_entry_round_trip(code, text):
    # IEEE 488.2 string response data: the text in double quotes, each inner quote doubled (from memory;
    # the same rule the parser's docstring states for SYSTem:ERRor? replies, SCPI-99 vol. 2 21.8)
    reply = f'{code:+d},"{text.replace(chr(34), chr(34) * 2)}"'
    assert parse_error_entry(reply) == ErrorEntry(code, text)


@given(st.integers().filter(lambda c: not -32768 <= c <= 32767), PRINTABLE)
def test_error_entry_code_outside_16_bits_is_refused(code, text):
    # SCPI-99 vol. 2 21.8.2 (as cited in benchlog/scpi/replies.py): error numbers are 16-bit signed integers
    try:
        parse_error_entry(f'{code:+d},"{text.replace(chr(34), chr(34) * 2)}"')
    except ScpiReplyError:
        return
    raise AssertionError("accepted an error code outside -32768..32767")


FIELD = st.text(alphabet=st.characters(min_codepoint=0x21, max_codepoint=0x7E).filter(lambda c: c != ","),
                min_size=1, max_size=20)


@given(FIELD, FIELD, FIELD, FIELD)
def test_idn_round_trip(manufacturer, model, serial, firmware):
    # IEEE 488.2 *IDN? (section 10.14, from memory): four comma-separated fields
    assert parse_idn(",".join((manufacturer, model, serial, firmware))) == Idn(manufacturer, model, serial, firmware)


@given(st.lists(FIELD, min_size=0, max_size=8).filter(lambda f: len(f) != 4))
def test_idn_with_another_field_count_is_refused(fields):
    try:
        parse_idn(",".join(fields))
    except ScpiReplyError:
        return
    raise AssertionError(f"accepted {len(fields)} fields")
