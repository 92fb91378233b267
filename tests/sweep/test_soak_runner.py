"""The heat-soak phase of the runner: fixed-rate readings, the step-instant notes, limits, cancel and the safe state.

Pure logic with an injected clock and fake roles (dependency injection); the soak on the
simulated bench over real pyvisa-py is in tests/analysis/test_thermal_response.py.
"""

import threading

import pytest

from benchlog.badinput import BadInput
from benchlog.runs.events import COOL_STARTED, SOAK_STARTED, Note, Point
from benchlog.sweep.plan import parse_plan
from benchlog.sweep.runner import SweepRunner

from .fakes import Element, FakeClock, ListWriter, fake_rig

BASE = """
[element]
id = "R1"
kind = "resistor"
[steps]
mode = "list"
currents_a = [0.2, 0.5]
[settle]
dwell_s = 0.01
tolerance_v = 0.0001
consecutive = 2
timeout_s = 1.0
[limits]
max_current_a = 1.0
compliance_v = 2.0
"""
SOAK = """
[soak]
current_a = 0.8
rest_s = 3.0
duration_s = 2.0
interval_s = 0.25
cool_s = 1.0
sense_a = 0.1
"""


def run(text, clock, rig, **kw):
    writer = ListWriter()
    runner = SweepRunner(parse_plan(text, "plan.toml"), rig, clock=clock, sleep=clock.sleep, writer=writer, **kw)
    seen = []
    outcome = runner.run(seen.append)
    return runner, outcome, seen


def test_soak_reads_at_a_fixed_rate_and_marks_its_points():
    clock = FakeClock()
    rig, bench = fake_rig(clock)
    runner, outcome, events = run(BASE + SOAK, clock, rig)
    assert outcome == "complete"
    soak = [p for p in runner.points if "soak" in p.flags]
    cool = [p for p in runner.points if "cool" in p.flags]
    assert len(soak) == 8 and len(cool) == 4 and len(runner.points) == 14
    assert runner.planned == 2 + 12
    starts = {n.message.split(":")[0]: n.t_s for n in events if isinstance(n, Note) and n.kind == "info"}
    assert set(starts) == {SOAK_STARTED, COOL_STARTED}
    # each reading at k·interval after its step instant; the drop is read before the slower read-backs
    t = [p.t_s - starts[SOAK_STARTED] for p in soak]
    assert t[0] >= 0.25 and all(b - a == pytest.approx(0.25, abs=0.06) for a, b in zip(t, t[1:]))
    assert all(p.setpoint_a == 0.8 for p in soak) and all(p.setpoint_a == 0.1 for p in cool)
    assert starts[SOAK_STARTED] - runner.points[1].t_s >= 3.0  # the rest, with the element off
    indices = [p.index for p in runner.points]
    assert indices == sorted(set(indices))  # strictly increasing, as the run file demands
    assert not bench.supply.output_on  # off at the end


def test_soak_is_limited_like_any_point():
    clock = FakeClock()
    rig, bench = fake_rig(clock, element=Element(r_ohm=0.5))
    text = BASE.replace("compliance_v = 2.0", "compliance_v = 2.0\nmax_power_w = 0.3") + SOAK
    runner, outcome, events = run(text, clock, rig)
    # 0.8 A through 0.5 Ω is 0.32 W: the first soak reading stops the run, outputs off
    assert outcome == "limit" and "max_power_w" in [e for e in events if isinstance(e, Note) and e.kind == "limit"][0].message
    assert "soak" in runner.points[-1].flags
    assert not bench.supply.output_on


def test_cancel_during_the_soak_reaches_the_safe_state():
    clock = FakeClock()
    rig, bench = fake_rig(clock)
    writer = ListWriter()
    runner = SweepRunner(parse_plan(BASE + SOAK, "plan.toml"), rig, clock=clock, sleep=clock.sleep, writer=writer)

    def on_event(event):
        if isinstance(event, Point) and "soak" in event.flags and event.index == 4:
            t = threading.Thread(target=runner.cancel)
            t.start()
            t.join()

    assert runner.run(on_event) == "cancelled"
    assert not bench.supply.output_on and bench.supply.safe_calls == 1
    assert writer.events[-1].outcome == "cancelled"


@pytest.mark.parametrize("table, words", [
    ("current_a = 2.0\nduration_s = 10\ninterval_s = 1", ["[soak].current_a", "max_current_a"]),
    ("current_a = 0.5\nduration_s = 1\ninterval_s = 2", ["[soak].interval_s", "longer than duration_s"]),
    ("current_a = 0.5\nduration_s = 10\ninterval_s = 1\nsense_a = 0.6", ["[soak].sense_a", "not below"]),
    ("current_a = 0.5\nduration_s = 10\ninterval_s = 1\nsense_a = 0.05\ncalibration_c = [25, 85]\n"
     "calibration_v = [0.01]", ["[soak].calibration_v", "one drop per"]),
    ("current_a = 0.5\nduration_s = 10\ninterval_s = 1\ncalibration_c = [25, 85]\ncalibration_v = [0.01, 0.02]",
     ["[soak].sense_a", "missing"]),
    ("current_a = 0.5\nduration_s = 1000\ninterval_s = 1", ["[soak].duration_s", "max_time_s"]),
    ("current_a = 0.5\nduration_s = 10\ninterval_s = 1\ninterval = 2", ["[soak]", "interval"]),
])
def test_a_bad_soak_table_is_one_line_naming_the_key(table, words):
    text = BASE.replace("compliance_v = 2.0", "compliance_v = 2.0\nmax_time_s = 100") + "[soak]\n" + table + "\n"
    with pytest.raises(BadInput) as info:
        parse_plan(text, "plan.toml")
    line = str(info.value)
    assert "\n" not in line and all(w in line for w in words), line


def test_a_plan_without_soak_keeps_its_header():
    assert "soak" not in parse_plan(BASE, "plan.toml").to_dict()
    assert parse_plan(BASE + SOAK, "plan.toml").to_dict()["soak"]["sense_a"] == 0.1


@pytest.mark.parametrize("args, words", [
    (["--sim-thermal-scale", "0"], ["--sim-thermal-scale", "0.001..1000"]),
    (["--sim-thermal-scale", "0.1", "--bench", "bench.toml"], ["--sim-thermal-scale", "built-in"]),
])
def test_sim_thermal_scale_refused_in_one_line(tmp_path, args, words):
    import subprocess
    import sys

    plan = tmp_path / "plan.toml"
    plan.write_text(BASE + SOAK)
    out = subprocess.run([sys.executable, "-m", "benchlog", "sweep", str(plan), "--out", str(tmp_path), *args],
                         capture_output=True, text=True, cwd=tmp_path)
    assert out.returncode == 2
    lines = out.stderr.strip().splitlines()
    assert len(lines) == 1 and all(w in lines[0] for w in words), out.stderr
