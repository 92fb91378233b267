"""A probe on the element: bench files name it, the runner fills temperature_c, the header says which probe."""

from __future__ import annotations

import json

import numpy as np
import pytest

from benchlog.analysis.case_temperature import junction_from_case_c, measured_case_temperature
from benchlog.badinput import BadInput
from benchlog.runs import load
from benchlog.sim import specs
from benchlog.sweep.bench_file import BenchSetup, RoleSpec, SensorSpec, load_bench
from benchlog.sweep.rig import open_rig
from benchlog.cli.simbench import SIM_PROFILES, sim_wiring

from .simrig import parse, plan_text, record

BENCH = """
[supply]
resource = "TCPIP0::127.0.0.1::5025::SOCKET"
profile = "sim-supply"

[meter]
resource = "TCPIP0::127.0.0.1::5027::SOCKET"
profile = "sim-meter"

[sensor]
resource = "TCPIP0::127.0.0.1::5029::SOCKET"
profile = "sim-case-meter"
attached_to = "tab"
transducer = "rtd"
accuracy_c = 0.3

[wiring]
force = "supply"
current_from = "supply"
"""


def test_bench_file_names_the_probe_and_where_it_sits(tmp_path):
    path = tmp_path / "bench.toml"
    path.write_text(BENCH)
    bench = load_bench(path)
    assert bench.roles["sensor"].profile == "sim-case-meter"
    assert bench.sensor == SensorSpec("tab", "rtd", 0.3)
    assert bench.to_dict()["sensor"] == {"attached_to": "tab", "transducer": "rtd", "accuracy_c": 0.3}
    assert "sensor" not in load_bench(_write(tmp_path, BENCH.split("[sensor]")[0] + BENCH.split("accuracy_c = 0.3")[1])).to_dict()


def _write(tmp_path, text):
    path = tmp_path / "b.toml"
    path.write_text(text)
    return path


@pytest.mark.parametrize("old, new, where, expected", [
    ('attached_to = "tab"', 'attached_to = "lid"', "[sensor].attached_to", "one of"),
    ('transducer = "rtd"', 'transducer = "pyrometer"', "[sensor].transducer", "one of"),
    ("accuracy_c = 0.3", "accuracy_c = -1", "[sensor].accuracy_c", "above 0"),
    ('attached_to = "tab"\n', "", "[sensor].attached_to", "missing"),
])
def test_broken_sensor_table_is_one_line_naming_the_key(tmp_path, old, new, where, expected):
    path = _write(tmp_path, BENCH.replace(old, new))
    with pytest.raises(BadInput) as err:
        load_bench(path)
    line = err.value.line()
    assert where in line and expected in line.lower() and "\n" not in line, line


def test_a_sensor_profile_without_a_temperature_function_is_refused_before_connecting(tmp_path):
    bench = load_bench(_write(tmp_path, BENCH.replace('profile = "sim-case-meter"', 'profile = "sim-meter"')))
    with pytest.raises(BadInput) as err:
        open_rig(bench)  # nothing listens on these ports: the profile check comes first
    assert "[sensor].profile" in err.value.line() and "measure_temperature" in err.value.line()


def _setup(running, element):
    roles = {name: RoleSpec(name, res, SIM_PROFILES[name]) for name, res in running.resources.items()}
    return BenchSetup(roles=roles, wiring=sim_wiring(element), line_frequency_hz=running.config.line_frequency_hz,
                      source="test bench", simulated=True,
                      sensor=SensorSpec("case", "thermocouple", 0.6) if "sensor" in roles else None)


PLAN = plan_text("rectifier", steps="mode = \"linear\"\nstart_a = 0.2\nstop_a = 1.0\ncount = 5",
                 limits="max_current_a = 1.2\ncompliance_v = 5.0\nmax_power_w = 2.0")


def test_runner_fills_temperature_c_from_the_probe_and_records_it(sim_bench, tmp_path):
    running = sim_bench("rectifier", seed=5, ambient_c=35.0, case_sensor=True)
    rec = record(parse(PLAN), _setup(running, "rectifier"), tmp_path)
    assert rec.outcome == "complete"
    temps = np.array([p.temperature_c for p in rec.points], dtype=float)
    assert np.isfinite(temps).all() and len(temps) == 5
    # the probe reads near the ambient of a short sweep, within its fixed error and a few kelvin of heating
    assert (temps > 35.0 - specs.CASE_SENSOR_OFFSET_MAX_C - 0.2).all() and (temps < 35.0 + 10.0).all()
    frame, meta = load(rec.path)
    assert np.array_equal(frame["temperature_c"].to_numpy(dtype=float), temps)  # written and read back
    probe = meta.header.temperature
    assert probe.attached_to == "case" and probe.transducer == "thermocouple" and probe.accuracy_c == 0.6
    assert probe.profile == "sim-case-meter" and probe.resource == running.resources["sensor"]
    assert probe.idn.startswith("BENCHLOG,SIM-CASE-METER,")
    assert meta.header.instrument("sensor") is not None
    header_line = rec.path.read_text(encoding="utf-8").split("\n", 1)[0]
    assert json.loads(header_line)["temperature"]["attached_to"] == "case"  # the file's own key
    case = measured_case_temperature(frame, meta)
    assert case.read == 5 and case.attached_to == "case"
    assert case.u_c == pytest.approx(0.6 / np.sqrt(3))  # rectangular a/√3, GUM 4.3.7
    assert np.array_equal(case.values_c, temps)


def test_without_a_probe_nothing_changes(sim_bench, tmp_path):
    running = sim_bench("rectifier", seed=5)
    rec = record(parse(PLAN), _setup(running, "rectifier"), tmp_path)
    assert all(p.temperature_c is None for p in rec.points)
    frame, meta = load(rec.path)
    assert meta.header.temperature is None and measured_case_temperature(frame, meta) is None
    header_line = rec.path.read_text(encoding="utf-8").split("\n", 1)[0]
    assert "sensor" not in json.loads(header_line)["instruments"]
    assert "temperature" not in json.loads(header_line)


def test_junction_from_case():
    # Tj = Tc + P·RθJC (JESD51 definition, common practice): 50 °C case, 2 W, 5 K/W -> 60 °C.
    assert junction_from_case_c(50.0, 2.0, 5.0) == pytest.approx(60.0)
    assert np.allclose(junction_from_case_c([50.0, 40.0], [2.0, 0.0], 5.0), [60.0, 40.0])
