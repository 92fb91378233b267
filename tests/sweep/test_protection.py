"""The instrument's own protection, programmed from the plan before the first output-on.

Levels sit 10 % above the highest setting the sweep programs (common practice: a
protection level a margin above the working level, so regulation and read-back
error never trip it). The sim implements over-voltage, over-current and an output
timer; a trip switches the output off and reads back.
"""

from __future__ import annotations

import math
from types import SimpleNamespace

import pytest

from benchlog.cli.simbench import builtin_bench, sweep_on_builtin_bench
from benchlog.instruments import open_role
from benchlog.instruments.profile import load_profile
from benchlog.instruments.roles import Supply
from benchlog.runs.events import Note, Point
from benchlog.sweep.bench_file import Wiring, load_bench
from benchlog.sweep.plan import parse_plan
from benchlog.sweep.protection import load_protection_levels, protection_levels, protection_warning
from benchlog.sweep.session import run_sweep

from ..instruments.scripted import ScriptedTransport

PLAN = """
[element]
id = "D1"
kind = "rectifier"
serial = "PROT-1"
[steps]
mode = "linear"
start_a = 0.1
stop_a = 1.0
count = 4
[settle]
dwell_s = 0.0
tolerance_v = 0.001
[limits]
max_current_a = 2.0
compliance_v = 5.0
max_time_s = 100.0
{extra}
"""


def _rig(force, input_v=None, profile="sim-supply"):
    supply = SimpleNamespace(profile=load_profile(profile))
    return SimpleNamespace(wiring=Wiring(force=force, current_from="supply", input_v=input_v), supply=supply)


def test_levels_sit_ten_percent_above_what_the_sweep_programs():
    plan = parse_plan(PLAN.format(extra=""), "plan.toml")
    levels = protection_levels(plan, _rig("supply"))
    assert math.isclose(levels.over_voltage_v, 5.0 * 1.1)  # compliance 5 V + 10 %
    assert math.isclose(levels.over_current_a, 2.0 * 1.1)  # max_current_a 2 A + 10 %
    assert math.isclose(levels.timer_s, 100.0 * 1.5 + 60.0)


def test_levels_follow_the_load_wiring_and_the_reverse_step_and_stop_at_the_profile():
    plan = parse_plan(PLAN.format(extra="[reverse]\nvoltage_v = 8.0\nduration_s = 1.0\nmax_current_a = 0.001"),
                      "plan.toml")
    levels = protection_levels(plan, _rig("load", input_v=12.0))
    assert math.isclose(levels.over_voltage_v, 12.0 * 1.1)  # the input voltage is the highest setting
    assert math.isclose(levels.over_current_a, 2.0 * 1.05 * 1.1)  # the supply's limit in the load wiring
    capped = protection_levels(parse_plan(PLAN.replace("compliance_v = 5.0", "compliance_v = 29.0").format(extra=""),
                                          "plan.toml"), _rig("supply"))
    assert capped.over_voltage_v == 30.0  # 31.9 V wanted, the sim-supply profile's maximum is 30 V


def _supply_into_element(bench, **protection):
    """The supply on, forcing 2 A through the element (it sits in CC at about 0.85 V at its terminals)."""
    supply = open_role("supply", bench.resources["supply"], "sim-supply")
    supply.set_voltage(10.0)
    supply.set_current_limit(2.0)
    done = supply.program_protection(**{"over_voltage_v": None, "over_current_a": None, "timer_s": None,
                                        **protection})
    supply.set_output(True)
    return supply, done


@pytest.mark.parametrize("level_v, trips", [(0.5, True), (5.0, False)])
def test_over_voltage_protection_trips_the_sim_supply_off(sim_bench, level_v, trips):
    bench = sim_bench("pmos")
    supply, done = _supply_into_element(bench, over_voltage_v=level_v)
    try:
        assert done == [f"over-voltage {level_v:g} V"]
        assert bench.bench.supply.ovp_v == level_v  # what the instrument was told, read on its side
        assert supply.power_is_on() is (not trips) and supply.tripped() is trips
    finally:
        supply.set_output(False)
        supply.close()


@pytest.mark.parametrize("level_a, trips", [(0.5, True), (2.5, False)])
def test_over_current_protection_trips_the_sim_supply_off(sim_bench, level_a, trips):
    bench = sim_bench("pmos")
    supply, done = _supply_into_element(bench, over_current_a=level_a)
    try:
        assert done == [f"over-current {level_a:g} A"]
        assert supply.power_is_on() is (not trips) and supply.tripped() is trips
    finally:
        supply.set_output(False)
        supply.close()


def test_the_output_timer_switches_off_after_its_time(sim_bench):
    now = [1000.0]
    bench = sim_bench("rectifier", clock=lambda: now[0])
    supply = open_role("supply", bench.resources["supply"], "sim-supply")
    try:
        supply.set_voltage(2.0)
        supply.set_current_limit(0.1)
        supply.program_protection(over_voltage_v=None, over_current_a=None, timer_s=5.0)
        supply.set_output(True)
        now[0] += 4.0
        assert supply.power_is_on() is True
        now[0] += 2.0
        assert supply.power_is_on() is False and supply.tripped() is False  # timed out, not a fault trip
    finally:
        supply.close()


def test_a_sweep_programs_the_protection_before_power_on(tmp_path):
    plan = parse_plan(PLAN.format(extra=""), "plan.toml")
    events = []
    result = sweep_on_builtin_bench(plan, tmp_path, on_event=events.append, on_safe_state=lambda report: None)
    assert result.outcome == "complete" and result.safe_state == "verified"
    notes = [e.message for e in events if isinstance(e, Note) and e.kind == "info"]
    assert "supply protection set before power-on: over-voltage 5.5 V, over-current 2.2 A, output timer 210 s" \
        in notes


def test_the_plan_check_says_when_the_profile_cannot_program_protection():
    generic = Supply(ScriptedTransport("ACME,PSU,1,1"), load_profile("generic-dc-supply"))
    rig = SimpleNamespace(supply=generic)
    warning = protection_warning(rig)
    assert warning is not None and "'generic-dc-supply' has no over_voltage_protection or " \
        "over_current_protection" in warning
    sim = SimpleNamespace(supply=Supply(ScriptedTransport("BENCHLOG,SIM-SUPPLY,1,1"), load_profile("sim-supply")))
    assert protection_warning(sim) is None


# -- the electronic load's own input protection -------------------------------------------------

LOAD_PLAN = """
[element]
id = "Q1"
kind = "pmos"
serial = "LOADPROT-1"
[steps]
mode = "linear"
start_a = 0.2
stop_a = 2.0
count = 6
[settle]
dwell_s = 0.0
tolerance_v = 0.001
[limits]
max_current_a = 2.0
compliance_v = 14.0
"""


def _load_rig(input_v, load_profile_name="sim-load"):
    load = SimpleNamespace(profile=load_profile(load_profile_name))
    return SimpleNamespace(wiring=Wiring(force="load", current_from="load", input_v=input_v),
                           supply=SimpleNamespace(profile=load_profile("sim-supply")), load=load)


def test_load_levels_sit_ten_percent_above_what_the_load_can_carry_and_stop_at_its_profile():
    # common practice: a protection level a margin (about 10 %) above the working level
    plan = parse_plan(LOAD_PLAN, "plan.toml")
    levels = load_protection_levels(plan, _load_rig(12.0))
    assert math.isclose(levels.over_current_a, 2.0 * 1.1)  # max_current_a + 10 %
    assert math.isclose(levels.over_voltage_v, 12.0 * 1.1)  # the input voltage + 10 %
    assert math.isclose(levels.over_power_w, 12.0 * 2.0 * 1.1)  # P = V I, the most the sweep puts in
    capped = load_protection_levels(plan, _load_rig(58.0))
    assert capped.over_voltage_v == 60.0  # 63.8 V wanted; the sim-load profile's maximum is 60 V
    assert math.isclose(capped.over_power_w, 58.0 * 2.0 * 1.1)  # below 60 V x 30 A, not capped


def test_an_input_voltage_sweep_sets_the_load_levels_from_its_highest_input():
    # the load's input sees the supply's input voltage: an input sweep's highest, not the bench file's
    plan = parse_plan(LOAD_PLAN + "[input]\nvoltages_v = [12.0, 24.0, 6.0]\n", "plan.toml")
    levels = load_protection_levels(plan, _load_rig(12.0))
    assert math.isclose(levels.over_voltage_v, 24.0 * 1.1)
    assert math.isclose(levels.over_power_w, 24.0 * 2.0 * 1.1)
    assert math.isclose(protection_levels(plan, _load_rig(12.0)).over_voltage_v, 24.0 * 1.1)  # as the supply's


def _load_bench(tmp_path, running):
    text = "".join(f'[{r}]\nresource = "{running.resources[r]}"\nprofile = "sim-{r}"\n\n'
                   for r in ("supply", "load", "meter"))
    path = tmp_path / "bench.toml"
    path.write_text(text + '[wiring]\nforce = "load"\ncurrent_from = "load"\ninput_v = 12.0\n')
    return load_bench(path)


def test_a_load_wired_sweep_programs_the_load_protection_before_its_input_goes_on(sim_bench, tmp_path):
    running = sim_bench("pmos")
    plan = parse_plan(LOAD_PLAN, "plan.toml")
    seen = []

    def on_event(event):
        if isinstance(event, Point) and not seen:  # the first point: the input has just gone on
            sim = running.bench.load
            seen.append((sim.input_on, sim.ocp_a, sim.opp_w, sim.ovp_v))

    events = []
    result = run_sweep(plan, _load_bench(tmp_path, running), tmp_path / "runs",
                       on_event=lambda e: (events.append(e), on_event(e)), on_safe_state=lambda report: None)
    assert result.outcome == "complete" and result.safe_state == "verified"
    on, ocp, opp, ovp = seen[0]
    assert on and math.isclose(ocp, 2.2) and math.isclose(opp, 26.4) and math.isclose(ovp, 13.2)
    said = [i for i, e in enumerate(events) if isinstance(e, Note) and e.message.startswith("load protection")]
    first_point = next(i for i, e in enumerate(events) if isinstance(e, Point))
    assert len(said) == 1 and said[0] < first_point
    assert events[said[0]].message == ("load protection set before input-on: over-current 2.2 A, "
                                       "over-power 26.4 W, over-voltage 13.2 V")
    assert not running.bench.load.tripped  # the levels sit above everything the sweep did


def test_a_load_trip_mid_sweep_stops_it_as_a_fault_with_outputs_off(sim_bench, tmp_path):
    running = sim_bench("pmos")
    plan = parse_plan(LOAD_PLAN, "plan.toml")
    points = []

    def on_event(event):
        if isinstance(event, Point):
            points.append(event)
            if len(points) == 2:  # something in the load goes wrong: its level now sits below the current
                with running.bench.lock:
                    running.bench.load.ocp_a = 0.05

    result = run_sweep(plan, _load_bench(tmp_path, running), tmp_path / "runs", on_event=on_event,
                       on_safe_state=lambda report: None)
    assert result.outcome == "fault" and result.points == 2
    assert "load input went off during the sweep (its protection tripped)" in result.message
    assert running.bench.load.tripped and not running.bench.load.input_on
    assert not running.bench.supply.output_on and result.safe_state == "verified"


def test_the_plan_check_says_when_the_load_profile_cannot_program_protection():
    from benchlog.instruments.roles import Load

    sim_supply = Supply(ScriptedTransport("BENCHLOG,SIM-SUPPLY,1,1"), load_profile("sim-supply"))
    generic = Load(ScriptedTransport("ACME,LOAD,1,1"), load_profile("generic-electronic-load"))
    rig = SimpleNamespace(supply=sim_supply, load=generic,
                          wiring=Wiring(force="load", current_from="load", input_v=12.0))
    warning = protection_warning(rig)
    assert warning is not None and "load profile 'generic-electronic-load' has no over_current_protection, " \
        "over_power_protection or over_voltage_protection operation" in warning
    assert "supply profile" not in warning
    rig.load = Load(ScriptedTransport("BENCHLOG,SIM-LOAD,1,1"), load_profile("sim-load"))
    assert protection_warning(rig) is None
    rig.load, rig.wiring = generic, Wiring(force="supply", current_from="supply")  # the load carries nothing
    assert protection_warning(rig) is None
