"""Bench files: roles, profiles, wiring; wiring that names a missing role is refused before anything opens."""

import re

import pytest

from benchlog.badinput import BadInput
from benchlog.sweep.bench_file import load_bench

GOOD = """
[supply]
resource = "TCPIP0::127.0.0.1::5025::SOCKET"
profile = "sim-supply"

[load]
resource = "TCPIP0::127.0.0.1::5026::SOCKET"
profile = "sim-load"
backend = "@py"

[meter]
resource = "TCPIP0::127.0.0.1::5027::SOCKET"
profile = "profiles/my-meter.toml"

[current_meter]
resource = "TCPIP0::127.0.0.1::5028::SOCKET"
profile = "sim-meter"

[wiring]
force = "load"
current_from = "shunt"
shunt_ohm = 0.01
input_v = 12.0

[mains]
line_frequency_hz = 60
"""


def test_good_bench(tmp_path):
    path = tmp_path / "bench.toml"
    path.write_text(GOOD)
    bench = load_bench(path)
    assert set(bench.roles) == {"supply", "load", "meter", "current_meter"}
    assert bench.wiring.force == "load" and bench.wiring.shunt_ohm == 0.01 and bench.wiring.input_v == 12.0
    assert bench.line_frequency_hz == 60.0
    # a profile given as a path is taken relative to the bench file
    assert bench.roles["meter"].profile == str((tmp_path / "profiles/my-meter.toml").resolve())
    assert bench.roles["supply"].profile == "sim-supply"
    assert bench.to_dict()["wiring"]["current_from"] == "shunt"


def _replace(old, new):
    assert old in GOOD, old
    return GOOD.replace(old, new)


BROKEN = [
    (_replace('force = "load"', 'force = "battery"'), "[wiring].force", "one of"),
    (_replace('current_from = "shunt"', 'current_from = "guess"'), "[wiring].current_from", "one of"),
    (_replace("shunt_ohm = 0.01\n", ""), "[wiring].shunt_ohm", "resistance"),
    (_replace("shunt_ohm = 0.01", "shunt_ohm = 0"), "[wiring].shunt_ohm", "above 0"),
    (_replace("input_v = 12.0\n", ""), "[wiring].input_v", "CV voltage"),
    (_replace('resource = "TCPIP0::127.0.0.1::5025::SOCKET"', 'resource = "x;*RST"'), "[supply].resource", "VISA resource"),
    (_replace('profile = "sim-supply"', 'profile = 3'), "[supply].profile", "string"),
    (_replace('profile = "sim-supply"', 'profle = "sim-supply"'), "[supply].profle", "did you mean 'profile'"),
    (_replace("[mains]\nline_frequency_hz = 60", "[mains]\nline_frequency_hz = 5"), "[mains].line_frequency_hz", "at least"),
    (_replace("[wiring]", "[wirring]"), "wirring", "did you mean 'wiring'"),
    (GOOD.split("[meter]")[0] + GOOD.split("[current_meter]")[1].split("\n", 3)[3], "[meter]", "reads the element drop"),
    (re.sub(r"\[current_meter\][^\[]*", "", GOOD), "[wiring].current_from", "[current_meter]"),
]


@pytest.mark.parametrize("text, where, expected", BROKEN, ids=[b[1] for b in BROKEN])
def test_broken_bench_names_the_key(tmp_path, text, where, expected):
    path = tmp_path / "bench.toml"
    path.write_text(text)
    with pytest.raises(BadInput) as err:
        load_bench(path)
    line = err.value.line()
    assert str(path) in line and where in line and expected in line, line


def test_load_wiring_without_a_load_is_refused(tmp_path):
    path = tmp_path / "bench.toml"
    text = GOOD.split("[load]")[0] + "[meter]" + GOOD.split("[meter]")[1]
    path.write_text(text)
    with pytest.raises(BadInput, match=r"\[wiring\].force.*needs a \[load\] table"):
        load_bench(path)


def test_asset_and_calibration_due_are_optional_and_recorded_when_stated(tmp_path):
    path = tmp_path / "bench.toml"
    path.write_text(GOOD.replace('profile = "sim-supply"\n', 'profile = "sim-supply"\nasset = "LAB-0042"\n'
                                 "calibration_due = 2026-06-30\n", 1)
                    .replace('backend = "@py"\n', 'backend = "@py"\ncalibration_due = "2027-01-15"\n', 1))
    bench = load_bench(path)
    roles = bench.to_dict()["roles"]
    assert roles["supply"]["asset"] == "LAB-0042" and roles["supply"]["calibration_due"] == "2026-06-30"
    assert roles["load"]["calibration_due"] == "2027-01-15" and "asset" not in roles["load"]
    assert "calibration_due" not in roles["meter"]  # not stated: the header stays as before


def test_a_calibration_date_that_is_not_a_date_is_one_line(tmp_path):
    path = tmp_path / "bench.toml"
    path.write_text(GOOD.replace('profile = "sim-supply"\n', 'profile = "sim-supply"\ncalibration_due = "June"\n', 1))
    with pytest.raises(BadInput) as err:
        load_bench(path)
    assert "calibration_due" in err.value.line() and "2026-06-30" in err.value.line()
