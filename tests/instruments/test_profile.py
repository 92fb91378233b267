"""Profile validation: shipped profiles load, and each broken profile names the exact key at fault."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from benchlog.badinput import BadInput
from benchlog.instruments.profile import (
    OPERATIONS,
    ProfileError,
    list_profiles,
    load_profile,
    match_idn,
    parse_profile,
    profile_dirs,
    read_profile,
)

REPO = Path(__file__).resolve().parents[2]
SHIPPED = REPO / "instrument_profiles"

SUPPLY = """\
schema = 1
name = "test-supply"
role = "supply"
idn_pattern = '^TEST,PSU,'

[link]
timeout_s = 1.5
connect_commands = ["*CLS"]

[commands]
set_voltage = "VOLT {voltage_v}"
set_current_limit = "CURR {current_a}"
output_on = "OUTP ON"
output_off = "OUTP OFF"
measure_voltage = "MEAS:VOLT?"
measure_current = "MEAS:CURR?"

[mode]
query = "STAT:OPER:COND?"
cv_bit = 8
cc_bit = 10

[limits]
max_voltage_v = 20.0
max_current_a = 2.0
"""

METER = """\
schema = 1
name = "test-meter"
role = "meter"
idn_pattern = '^TEST,DMM,'

[link]
timeout_s = 3

[commands]
configure_voltage = "CONF:VOLT:DC {range_v};:VOLT:DC:NPLC {nplc}"
set_samples = "SAMP:COUN {count}"
read = "READ?"

[limits]
voltage_ranges_v = [0.1, 1.0]
nplc_choices = [1, 10]
max_samples = 100

[[accuracy]]
function = "dc_voltage"
range = 0.1
reading_pct = 0.01
range_pct = 0.004

[[accuracy]]
function = "dc_voltage"
range = 1.0
reading_pct = 0.01
range_pct = 0.001
"""

LOAD = """\
schema = 1
name = "test-load"
role = "load"
idn_pattern = '^TEST,LOAD,'

[link]

[commands]
set_current = "CURR {current_a}"
input_on = "INP ON"
input_off = "INP OFF"
measure_voltage = "MEAS:VOLT?"
measure_current = "MEAS:CURR?"

[limits]
max_current_a = 5
"""


def test_minimal_profiles_are_valid():
    supply = parse_profile(SUPPLY, "supply.toml")
    assert (supply.role, supply.timeout_s, supply.connect_commands) == ("supply", 1.5, ("*CLS",))
    assert supply.mode is not None and (supply.mode.cv_bit, supply.mode.cc_bit) == (8, 10)
    assert supply.error_query == "SYST:ERR?"  # default when the profile names none
    meter = parse_profile(METER, "meter.toml")
    assert meter.limits.voltage_ranges_v == (0.1, 1.0)
    assert meter.accuracy_for("dc_voltage", 1.0).range_pct == 0.001
    load = parse_profile(LOAD, "load.toml")
    assert load.read_termination == "\n" and load.limits.max_voltage_v is None


def _edit(base: str, old: str, new: str) -> str:
    assert old in base, f"test table out of date: {old!r} not in base profile"
    return base.replace(old, new, 1)


# (base, old text, new text, expected `where` in the error, a word expected in the problem)
BROKEN = [
    (SUPPLY, "schema = 1", "schema = 2", "schema", "2"),
    (SUPPLY, "schema = 1\n", "", "schema", "missing"),
    (SUPPLY, 'name = "test-supply"', 'name = "Test Supply!"', "name", "Test Supply"),
    (SUPPLY, 'role = "supply"', 'role = "oven"', "role", "oven"),
    (SUPPLY, "idn_pattern = '^TEST,PSU,'", "idn_pattern = '^TEST,(PSU'", "idn_pattern", "regular expression"),
    (SUPPLY, "[link]\n", "colour = 'red'\n[link]\n", "colour", "unknown"),
    (SUPPLY, "timeout_s = 1.5", "timeout_s = 0", "[link].timeout_s", "0"),
    (SUPPLY, "timeout_s = 1.5", "timeout_s = nan", "[link].timeout_s", "nan"),
    (SUPPLY, "timeout_s = 1.5", "timeout_s = 1e400", "[link].timeout_s", "inf"),
    (SUPPLY, "timeout_s = 1.5", 'timeout_s = "fast"', "[link].timeout_s", "fast"),
    (SUPPLY, "timeout_s = 1.5", 'read_termination = "\\t"', "[link].read_termination", "\\t"),
    (SUPPLY, 'connect_commands = ["*CLS"]', 'connect_commands = ["*CLS\\n*RST"]', "[link].connect_commands[0]", "newline"),
    (SUPPLY, 'connect_commands = ["*CLS"]', 'connect_commands = ["VOLT {voltage_v}"]', "[link].connect_commands[0]", "placeholder"),
    (SUPPLY, 'set_voltage = "VOLT {voltage_v}"\n', "", "[commands].set_voltage", "missing"),
    (SUPPLY, 'set_voltage = "VOLT {voltage_v}"', 'set_voltage = "VOLT {volts}"', "[commands].set_voltage", "{volts}"),
    (SUPPLY, 'set_voltage = "VOLT {voltage_v}"', 'set_voltage = "VOLT 5"', "[commands].set_voltage", "lacks"),
    (SUPPLY, 'set_voltage = "VOLT {voltage_v}"', 'set_voltage = "VOLT {voltage_v:.3f}"', "[commands].set_voltage", ".3f"),
    (SUPPLY, 'set_voltage = "VOLT {voltage_v}"', 'set_voltage = "VOLT {voltage_v"', "[commands].set_voltage", "braces"),
    (SUPPLY, 'set_voltage = "VOLT {voltage_v}"', 'set_voltage = "VOLT {voltage_v}\\n*RST"', "[commands].set_voltage", "newline"),
    (SUPPLY, 'set_voltage = "VOLT {voltage_v}"', 'set_voltage = "VOLT {voltage_v}?"', "[commands].set_voltage", "query"),
    (SUPPLY, 'set_voltage = "VOLT {voltage_v}"', "set_voltage = 5", "[commands].set_voltage", "5"),
    (SUPPLY, 'set_voltage = "VOLT {voltage_v}"', 'set_voltage = "   "', "[commands].set_voltage", "empty"),
    (SUPPLY, 'measure_voltage = "MEAS:VOLT?"', 'measure_voltage = "MEAS:VOLT"', "[commands].measure_voltage", "asks nothing"),
    (SUPPLY, 'output_on = "OUTP ON"', 'output_on = "OUTP ON"\nset_current = "CURR {current_a}"', "[commands].set_current", "unknown"),
    (SUPPLY, 'output_on = "OUTP ON"', 'output_on = "OUTP ON"\npolarity_reversed = "OUTP:POL INV"', "[commands].polarity_normal", "missing"),
    (SUPPLY, "cc_bit = 10", "cc_bit = 8", "[mode].cc_bit", "same"),
    (SUPPLY, "cc_bit = 10", "cc_bit = 16", "[mode].cc_bit", "16"),
    (SUPPLY, "cc_bit = 10", 'cc_bit = 10\ncv_text = "CV"', "[mode].cv_text", "mixes"),
    (SUPPLY, 'query = "STAT:OPER:COND?"', 'query = "STAT:OPER:COND"', "[mode].query", "STAT:OPER:COND"),
    (SUPPLY, "max_voltage_v = 20.0", "max_voltage_v = -1", "[limits].max_voltage_v", "-1"),
    (SUPPLY, "max_voltage_v = 20.0\n", "", "[limits].max_voltage_v", "missing"),
    (SUPPLY, "max_current_a = 2.0", "max_current_a = inf", "[limits].max_current_a", "inf"),
    (SUPPLY, "max_current_a = 2.0", "max_current_a = 1e300", "[limits].max_current_a", "1e+300"),
    (SUPPLY, "[limits]", "[limits]\nvoltage_ranges_v = [1.0]", "[limits].voltage_ranges_v", "unknown"),
    (LOAD, "[link]\n", "", "[link]", "missing"),
    (SUPPLY, "max_current_a = 2.0\n", "max_current_a = 2.0\n[[accuracy]]\nfunction = \"dc_voltage\"\nrange = 1\nreading_pct = 1\nrange_pct = 1\n",
     "[accuracy[0]].function", "dc_voltage"),
    (LOAD, "[link]", "[link]\n[mode]\nquery = \"X?\"\ncv_bit = 1\ncc_bit = 2", "mode", "load"),
    (LOAD, 'set_current = "CURR {current_a}"', 'set_current = "CURR {current_a};*RST {voltage_v}"', "[commands].set_current", "{voltage_v}"),
    (METER, 'read = "READ?"\n', "", "[commands].read", "missing"),
    (LOAD, 'input_on = "INP ON"', 'input_on = "INP ON"\nsync = "*OPC"', "[commands].sync", "asks nothing"),
    (SUPPLY, 'output_on = "OUTP ON"', 'output_on = "OUTP ON"\nsync = "*OPC? {current_a}"', "[commands].sync",
     "{current_a}"),
    (METER, 'read = "READ?"', 'read = "READ?"\nsync = "*OPC?\\n*RST"', "[commands].sync", "newline"),
    # a template without {nplc} describes a meter that cannot set NPLC: then the NPLC limits make no sense
    (METER, 'configure_voltage = "CONF:VOLT:DC {range_v};:VOLT:DC:NPLC {nplc}"', 'configure_voltage = "CONF:VOLT:DC {range_v}"',
     "[limits].nplc_choices", "{nplc}"),
    (METER, "voltage_ranges_v = [0.1, 1.0]", "voltage_ranges_v = [1.0, 0.1]", "[limits].voltage_ranges_v", "rising"),
    (METER, "voltage_ranges_v = [0.1, 1.0]", "voltage_ranges_v = []", "[limits].voltage_ranges_v", "empty"),
    (METER, "voltage_ranges_v = [0.1, 1.0]", 'voltage_ranges_v = [0.1, "1"]', "[limits].voltage_ranges_v[1]", "'1'"),
    (METER, "voltage_ranges_v = [0.1, 1.0]", "voltage_ranges_v = [0.1, 1.0, 10.0]", "accuracy", "10"),
    (METER, "nplc_choices = [1, 10]", "nplc_min = 1", "[limits].nplc_max", "missing"),
    (METER, "nplc_choices = [1, 10]", "", "[limits].nplc_choices", "missing"),
    (METER, "max_samples = 100", "max_samples = 0", "[limits].max_samples", "0"),
    (METER, 'set_samples = "SAMP:COUN {count}"\n', "", "[limits].max_samples", "set_samples"),
    (METER, "range = 1.0\n", "range = 3.0\n", "[accuracy[1]].range", "3"),
    (METER, "range_pct = 0.001", "range_pct = -0.001", "[accuracy[1]].range_pct", "-0.001"),
    (METER, "range_pct = 0.001", "range_pct = 0.001\nrange_ppm = 3", "[accuracy[1]].range_ppm", "unknown"),
    (METER, "range = 1.0\n", "range = 0.1\n", "[accuracy[1]].range", "repeats"),
    (METER, 'function = "dc_voltage"\nrange = 1.0', 'function = "ac_voltage"\nrange = 1.0', "[accuracy[1]].function", "ac_voltage"),
]


@pytest.mark.parametrize("base, old, new, where, word", BROKEN, ids=[f"{b[4]}-{b[3]}" for b in BROKEN])
def test_broken_profile_names_the_key(base, old, new, where, word):
    with pytest.raises(ProfileError) as info:
        parse_profile(_edit(base, old, new), "broken.toml")
    error = info.value
    assert isinstance(error, BadInput)
    assert error.source == "broken.toml"
    assert error.where == where, error.line()
    assert word in error.line(), error.line()
    assert "\n" not in error.line()


def test_sync_query_defaults_to_opc_and_can_be_set():
    # IEEE 488.2 10.18: *OPC? answers 1 when all pending operations are complete.
    for base in (SUPPLY, LOAD, METER):
        assert parse_profile(base, "p.toml").sync_query == "*OPC?"
    own = parse_profile(_edit(LOAD, 'input_on = "INP ON"', 'input_on = "INP ON"\nsync = "*WAI;*OPC?"'), "p.toml")
    assert own.sync_query == "*WAI;*OPC?"


def test_malformed_toml_is_a_profile_error_with_the_line():
    with pytest.raises(ProfileError) as info:
        parse_profile('schema = 1\nname = "x\n', "bad.toml")
    assert "line 2" in info.value.line()


def test_every_operation_has_an_example_or_needs_no_value():
    # A template that needs a value must say which one in its error message (the example text).
    from benchlog.instruments.profile import _example

    for ops in OPERATIONS.values():
        for name, (op, _) in ops.items():
            if op.required:
                assert all("{" + r + "}" in _example(name) for r in op.required), name


def test_shipped_profiles_all_valid_and_listed():
    files = sorted(SHIPPED.glob("*.toml"))
    names = {read_profile(f).name for f in files}
    assert {"generic-dc-supply", "generic-electronic-load", "generic-dmm",
            "sim-supply", "sim-load", "sim-meter", "sim-meter-no-measure"} <= names
    for f in files:
        assert read_profile(f).name == f.stem  # the file is named after the profile
    assert names <= {p.name for p in list_profiles()}
    assert SHIPPED.resolve() in [d.resolve() for d in profile_dirs()]


def test_shipped_profiles_use_no_brand_words():
    # Profiles are generic SCPI; the only manufacturer named is our own simulator.
    for f in SHIPPED.glob("*.toml"):
        profile = read_profile(f)
        assert profile.generic or profile.idn_pattern.startswith("^BENCHLOG,"), f


def test_load_by_name_and_unknown_name():
    assert load_profile("generic-dmm").role == "meter"
    with pytest.raises(ProfileError) as info:
        load_profile("no-such-profile")
    assert "generic-dmm" in info.value.line()


def test_user_profile_dir_from_environment(tmp_path, monkeypatch):
    (tmp_path / "test-supply.toml").write_text(SUPPLY)
    monkeypatch.setenv("BENCHLOG_PROFILE_PATH", str(tmp_path))
    assert load_profile("test-supply").path == tmp_path / "test-supply.toml"
    assert [p.name for p in match_idn("TEST,PSU,7,1.0")][0] == "test-supply"


def test_match_idn_prefers_specific_profiles():
    hits = match_idn("BENCHLOG,SIM-SUPPLY,0042,1.0")
    assert hits[0].name == "sim-supply"
    assert all(h.generic for h in hits[1:])
    assert "sim-meter" not in [h.name for h in hits]


def test_sha256_is_of_the_file_bytes(tmp_path):
    import hashlib

    f = tmp_path / "p.toml"
    f.write_text(SUPPLY)
    assert read_profile(f).sha256 == hashlib.sha256(f.read_bytes()).hexdigest()


# -- the command line ---------------------------------------------------------------


def _cli(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "benchlog", *args], capture_output=True, text=True, cwd=REPO, timeout=60)


def test_cli_check_ok_and_broken(tmp_path):
    good = tmp_path / "good.toml"
    good.write_text(SUPPLY)
    bad = tmp_path / "bad.toml"
    bad.write_text(_edit(SUPPLY, "max_current_a = 2.0", "max_current_a = nan"))
    ok = _cli("profiles", "check", str(good))
    assert (ok.returncode, ok.stdout.strip()) == (0, "ok: test-supply (supply)")
    broken = _cli("profiles", "check", str(bad))
    assert broken.returncode == 2
    lines = broken.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in broken.stderr
    assert str(bad) in lines[0] and "[limits].max_current_a" in lines[0]
    missing = _cli("profiles", "check", str(tmp_path / "absent.toml"))
    assert missing.returncode == 2 and "file not found" in missing.stderr


def test_cli_list_names_shipped_profiles():
    out = _cli("profiles", "list")
    assert out.returncode == 0
    rows = {line.split()[0]: line.split()[1] for line in out.stdout.splitlines()}
    assert rows["generic-dmm"] == "meter" and rows["sim-supply"] == "supply"


def test_cli_probe_bad_resource_and_unreachable():
    bad = _cli("profiles", "probe", "not-a-resource")
    assert bad.returncode == 2 and len(bad.stderr.strip().splitlines()) == 1
    import socket

    with socket.socket() as s:  # a port that was free a moment ago: nothing listens there
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    gone = _cli("profiles", "probe", f"TCPIP0::127.0.0.1::{port}::SOCKET", "--timeout", "0.5")
    assert gone.returncode == 1, gone.stderr
    assert len(gone.stderr.strip().splitlines()) == 1 and "Traceback" not in gone.stderr


def test_sim_profiles_copy_the_simulator_specs():
    # The sim draws its gain/offset errors within benchlog/sim/specs.py; the profiles must state the same
    # accuracy, or a GUM type-B budget computed from the profile would not be honest against the sim.
    from benchlog.sim import specs

    def pairs(items):
        return sorted((s.function, s.range, s.reading_pct, s.range_pct) for s in items)

    def profile_pairs(entries):  # a profile entry names the function and holds one Accuracy
        return sorted((e.function, e.range, e.accuracy.reading_pct, e.accuracy.range_pct) for e in entries)

    for name in ("sim-meter", "sim-meter-no-measure"):
        meter = load_profile(name)
        assert profile_pairs(meter.accuracy) == pairs(specs.METER_DCV + specs.METER_DCI)
        assert meter.limits.voltage_ranges_v == tuple(s.range for s in specs.METER_DCV)
        assert meter.limits.current_ranges_a == tuple(s.range for s in specs.METER_DCI)
        assert (meter.limits.nplc_min, meter.limits.nplc_max) == (specs.METER_NPLC_MIN, specs.METER_NPLC_MAX)
        assert meter.limits.max_samples == specs.METER_SAMPLE_COUNT_MAX
    supply = load_profile("sim-supply")
    assert profile_pairs(supply.accuracy) == pairs(specs.SUPPLY_READBACK)
    assert (supply.limits.max_voltage_v, supply.limits.max_current_a) == (
        specs.SUPPLY_MAX_VOLTAGE_V, specs.SUPPLY_MAX_CURRENT_A)
    load = load_profile("sim-load")
    assert profile_pairs(load.accuracy) == pairs(specs.LOAD_READBACK)
    assert (load.limits.max_voltage_v, load.limits.max_current_a) == (specs.LOAD_MAX_VOLTAGE_V, specs.LOAD_MAX_CURRENT_A)


def test_cli_list_reports_broken_files_in_profile_folders(tmp_path):
    (tmp_path / "test-supply.toml").write_text(SUPPLY)
    (tmp_path / "broken.toml").write_text(_edit(SUPPLY, 'role = "supply"', 'role = "kettle"'))
    env_run = subprocess.run(
        [sys.executable, "-m", "benchlog", "profiles", "list"], capture_output=True, text=True, cwd=REPO, timeout=60,
        env={**__import__("os").environ, "BENCHLOG_PROFILE_PATH": str(tmp_path)},
    )
    assert env_run.returncode == 0
    assert "test-supply" in env_run.stdout and "broken.toml" in env_run.stderr and "kettle" in env_run.stderr


def test_a_meter_without_an_nplc_command_can_be_described():
    text = _edit(_edit(METER, 'configure_voltage = "CONF:VOLT:DC {range_v};:VOLT:DC:NPLC {nplc}"',
                       'configure_voltage = "CONF:VOLT:DC {range_v}"'), "nplc_choices = [1, 10]", "")
    meter = parse_profile(text, "no-nplc.toml")
    assert not meter.sets_nplc and meter.limits.nplc_choices == () and meter.limits.nplc_min is None
    assert parse_profile(METER, "p.toml").sets_nplc


def test_both_configure_templates_set_nplc_or_neither():
    text = _edit(METER, 'configure_voltage = "CONF:VOLT:DC {range_v};:VOLT:DC:NPLC {nplc}"',
                 'configure_voltage = "CONF:VOLT:DC {range_v};:VOLT:DC:NPLC {nplc}"\n'
                 'configure_current = "CONF:CURR:DC {range_a}"')
    text = _edit(text, "voltage_ranges_v", "current_ranges_a = [1.0]\nvoltage_ranges_v")
    text += '\n[[accuracy]]\nfunction = "dc_current"\nrange = 1.0\nreading_pct = 0.1\nrange_pct = 0.01\n'
    with pytest.raises(ProfileError) as info:
        parse_profile(text, "p.toml")
    assert info.value.where == "[commands].configure_current" and "lacks {nplc}" in info.value.line()


@pytest.mark.parametrize("command, accepted", [
    ("*CLS", True), ("*RST", True), ("*ESE 60", True), ("STATus:PRESet", True), ("stat:pres", True),
    ("TRIG:SOUR IMM", False), ("SYST:REM", False), ("*CLS;TRIG:SOUR IMM", False),
])
def test_generic_profiles_send_only_what_every_scpi_99_instrument_accepts(command, accepted):
    # IEEE 488.2-1992 section 10 (mandatory common commands) and SCPI-99 vol. 1 4.2.3 (STATus:PRESet) - from memory
    text = _edit(METER, 'name = ', 'generic = true\nname = ')
    text = _edit(text, "[link]", f'[link]\nconnect_commands = ["*CLS", "{command}"]')
    if accepted:
        assert parse_profile(text, "g.toml").connect_commands[1] == command
        return
    with pytest.raises(ProfileError) as info:
        parse_profile(text, "g.toml")
    assert info.value.where == "[link].connect_commands[1]" and "SCPI-99" in info.value.line()
    # the same command is allowed in a profile written for one instrument
    assert parse_profile(_edit(text, "generic = true", "generic = false"), "own.toml").connect_commands[1] == command
