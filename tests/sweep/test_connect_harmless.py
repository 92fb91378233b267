"""Connecting is harmless: connect commands cannot switch power on, every output is switched off and read
back right after connecting, and every way out after connecting goes through the guard.

Against the simulated bench over real pyvisa-py; the sim's in-process state is the witness.
"""

from __future__ import annotations

import pytest

from benchlog.badinput import BadInput
from benchlog.cli import main
from benchlog.instruments.errors import ConnectionLost, ProfileError
from benchlog.instruments.profile import load_profile, parse_profile
from benchlog.sweep.bench_file import load_bench
from benchlog.sweep.plan import parse_plan
from benchlog.sweep.session import run_sweep

PLAN = """
[element]
id = "Q9"
kind = "pmos"
serial = "HARMLESS-1"
[steps]
mode = "linear"
start_a = 0.1
stop_a = 0.8
count = 4
[settle]
dwell_s = 0.0
tolerance_v = 0.001
[limits]
max_current_a = {max_a}
compliance_v = 14.0
"""

SUPPLY = load_profile("sim-supply").path.read_text()


def _supply_with(connect: str) -> str:
    return SUPPLY.replace('connect_commands = ["*CLS", "OUTPut:POLarity NORMal"]', f"connect_commands = {connect}")


@pytest.mark.parametrize("connect, problem", [
    ('["*CLS", "OUTPut:STATe ON", "SOURce:VOLTage 25"]', "switches an output or input on"),
    ('["outp 1"]', "switches an output or input on"),
    ('["INPut:STATe ON"]', "switches an output or input on"),
    ('["*RST;:SOUR:VOLT:LEV:IMM 25"]', "programs a setpoint"),  # compound, long forms, leading ':'
    ('["curr 3"]', "programs a setpoint"),
    ('["APPL 12,1"]', "programs a setpoint"),
])
def test_connect_commands_that_switch_on_or_program_a_setpoint_are_refused(connect, problem):
    # Header forms per SCPI-99 vol. 1 ch. 6 (short/long forms, optional nodes): common practice.
    with pytest.raises(ProfileError) as info:
        parse_profile(_supply_with(connect), "bad.toml")
    assert info.value.where.startswith("[link].connect_commands[") and problem in info.value.problem


@pytest.mark.parametrize("connect", ['["*CLS", "OUTP OFF"]', '["OUTPut:STATe 0"]', '["VOLT:PROT 20"]',
                                     '["*CLS", "OUTPut:POLarity NORMal"]', '["SYST:ERR?"]'])
def test_harmless_connect_commands_are_accepted(connect):
    assert parse_profile(_supply_with(connect), "ok.toml").connect_commands


def test_profiles_check_refuses_a_switching_connect_command_in_one_line(tmp_path, capsys):
    bad = tmp_path / "bad-supply.toml"
    bad.write_text(_supply_with('["*CLS", "OUTPut:STATe ON", "SOURce:VOLTage 25"]'))
    assert main(["profiles", "check", str(bad)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "connect_commands[1]" in err[0] and "switches an output or input on" in err[0]


def _bench(tmp_path, resources, *, load_resource=None):
    lines = []
    for role in ("supply", "load", "meter"):
        resource = load_resource if role == "load" and load_resource else resources[role]
        lines.append(f'[{role}]\nresource = "{resource}"\nprofile = "sim-{role}"\n')
    path = tmp_path / "bench.toml"
    path.write_text("\n".join(lines) + '[wiring]\nforce = "load"\ncurrent_from = "load"\ninput_v = 12.0\n')
    return load_bench(path)


def _left_on(running):
    with running.bench.lock:
        running.bench.supply.voltage_set_v = 5.0
        running.bench.supply.current_set_a = 1.0
        running.bench.supply.output_on = True
        running.bench.load.input_on = True


def test_a_plan_refused_after_connect_leaves_the_outputs_off(sim_bench, tmp_path):
    running = sim_bench()
    _left_on(running)
    plan = parse_plan(PLAN.format(max_a=25.0), "plan.toml")  # above sim-supply's 10 A: refused after connect
    reports = []
    with pytest.raises(BadInput) as info:
        run_sweep(plan, _bench(tmp_path, running.resources), tmp_path / "runs", on_safe_state=reports.append)
    assert "max_current_a" in info.value.line()
    assert not running.bench.supply.output_on and not running.bench.load.input_on
    assert reports and reports[-1].state == "verified"
    assert not (tmp_path / "runs").exists() or not list((tmp_path / "runs").glob("*.run"))


def test_an_unreachable_second_instrument_still_leaves_the_first_off(sim_bench, tmp_path):
    running = sim_bench()
    other = sim_bench()
    dead = other.resources["load"]
    other.stop()  # nothing listens there any more
    _left_on(running)
    plan = parse_plan(PLAN.format(max_a=1.0), "plan.toml")
    reports = []
    with pytest.raises(ConnectionLost):
        run_sweep(plan, _bench(tmp_path, running.resources, load_resource=dead), tmp_path / "runs",
                  on_safe_state=reports.append)
    assert not running.bench.supply.output_on  # switched off right after it connected, before the load failed
    assert [r.state for r in reports[-1].roles] == ["verified"]


def test_an_output_found_on_at_connect_is_reported_in_the_run(sim_bench, tmp_path):
    running = sim_bench()
    _left_on(running)
    plan = parse_plan(PLAN.format(max_a=1.0), "plan.toml")
    notes = []
    result = run_sweep(plan, _bench(tmp_path, running.resources), tmp_path / "runs",
                       on_event=lambda e: notes.append(e), on_safe_state=lambda report: None)
    warnings = [e.message for e in notes if getattr(e, "kind", "") == "warning"]
    assert any(w.startswith("supply ") and "output was ON when benchlog connected; switched off (read back)" in w
               for w in warnings), warnings
    assert any(w.startswith("load ") and "was ON when benchlog connected" in w for w in warnings), warnings
    assert result.outcome == "complete", result.message
    assert result.safe_state == "verified"


def test_an_output_found_on_is_told_at_connect_before_it_is_switched_off(sim_bench, tmp_path):
    # The one line comes as the instrument connects, before the off command: the sim's own
    # state at the moment of the call is the witness. The run file records the read-back.
    running = sim_bench()
    _left_on(running)
    plan = parse_plan(PLAN.format(max_a=1.0), "plan.toml")
    told = []
    events = []

    def notice(text):
        told.append((text, running.bench.supply.output_on, running.bench.load.input_on, len(events)))

    result = run_sweep(plan, _bench(tmp_path, running.resources), tmp_path / "runs", on_event=events.append,
                       on_safe_state=lambda report: None, on_notice=notice)
    supply, load = running.resources["supply"], running.resources["load"]
    assert [t[0] for t in told] == [
        f"supply {supply}: output found ON at connect; switching it off and reading it back",
        f"load {load}: input found ON at connect; switching it off and reading it back"]
    assert told[0][1:] == (True, True, 0)  # supply still on, and no run event yet: said at connect
    assert told[1][1:] == (False, True, 0)  # the supply was off by then, the load not yet
    text = result.run_file.read_text()
    assert f"supply {supply}: output was ON when benchlog connected; switched off (read back)" in text
    assert f"load {load}: input was ON when benchlog connected; switched off (read back)" in text


def test_without_a_listener_the_connect_notice_goes_to_stderr_in_one_line(sim_bench, tmp_path, capsys):
    running = sim_bench()
    with running.bench.lock:
        running.bench.supply.output_on = True
    plan = parse_plan(PLAN.format(max_a=1.0), "plan.toml")
    run_sweep(plan, _bench(tmp_path, running.resources), tmp_path / "runs", on_safe_state=lambda report: None)
    lines = [x for x in capsys.readouterr().err.splitlines() if "found ON" in x]
    assert lines == [f"benchlog: supply {running.resources['supply']}: output found ON at connect; "
                     "switching it off and reading it back"]
