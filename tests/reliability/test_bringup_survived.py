"""Bringing up and guarding a bench, end to end: `benchlog` in one process against `benchlog sim` in another.

Counted in the suite's "faults survived" line:
- a probe or an exercise on an instrument a sweep holds: refused at once (one line naming the
  sweep's PID, exit 75), `scan` lists it as in use, and the sweep completes undisturbed with
  every point;
- an output found ON at connect: told at once in one line naming role and resource, switched
  off and read back, recorded in the run file, and the sweep then runs normally;
- the load's own protection trips mid-sweep: the sweep stops as a fault naming the load's
  protection (one line, exit 1), every output verified off, and the sim, asked from the test
  side, confirms the trip.
"""

from __future__ import annotations

import json
import re
import time
from pathlib import Path

import pytest

from benchlog.runs import read_events
from benchlog.runs.events import Note, Point, RunFinished

from .procs import OutputState, SimProcess, messages, output_state, run_benchlog, send, start_benchlog, \
    write_bench_file

PLANS = Path(__file__).parent / "plans"
PMOS_PLAN = PLANS / "pmos-40.toml"
LOAD_WIRING = {"force": "load", "current_from": "load", "input_v": 12.0}


def _slow_plan(tmp_path: Path) -> Path:
    """The 299-point plan with a 20 ms dwell: about 6 s of sweeping, long enough to act during it."""
    text = (PLANS / "pmos-300.toml").read_text().replace("dwell_s = 0.003", "dwell_s = 0.02")
    assert "dwell_s = 0.02" in text
    path = tmp_path / "slow.toml"
    path.write_text(text)
    return path


def _points_on_disk(folder: Path) -> int:
    files = list(folder.glob("*.run"))
    if not files:
        return 0
    return sum(1 for line in files[0].read_text().splitlines() if line.startswith("P\t"))


def _wait_for_points(first, folder: Path, count: int) -> None:
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and _points_on_disk(folder) < count:
        assert first.poll() is None, first.stderr.read()
        time.sleep(0.02)


@pytest.mark.fault_survival("a probe or exercise on an instrument a sweep holds")
def test_probe_exercise_and_scan_leave_a_running_sweep_alone(tmp_path):
    with SimProcess() as sim:
        bench = write_bench_file(tmp_path / "bench.toml", sim.resources, **LOAD_WIRING)
        first = start_benchlog("sweep", str(_slow_plan(tmp_path)), "--bench", str(bench), "--out",
                               str(tmp_path / "a"), "--json")
        try:
            _wait_for_points(first, tmp_path / "a", 3)
            supply = sim.resources["supply"]
            exercised = run_benchlog("profiles", "probe", supply, "--exercise", "--profile", "sim-supply")
            probed = run_benchlog("profiles", "probe", sim.resources["meter"])
            scanned = run_benchlog("profiles", "scan", "--json", "--resource", sim.resources["load"])
            still_running = first.poll() is None
            out, err = first.communicate(timeout=120)
        finally:
            if first.poll() is None:
                first.kill()
        state = output_state(sim.resources)
    context = f"exercise: {exercised.returncode} {exercised.stderr}\nfirst: {err}"
    assert still_running, context  # the three ran while the sweep held the bench
    for done, resource in ((exercised, supply), (probed, sim.resources["meter"])):
        told = messages(done.stderr)
        assert done.returncode == 75 and len(told) == 1, context
        assert re.match(rf"benchlog: {re.escape(resource)}: in use by PID {first.pid} on ", told[0]), told
        assert done.stdout == "", context
    entry = json.loads(scanned.stdout)["resources"][0]
    assert scanned.returncode == 0 and entry["in_use"] and entry["holder"]["pid"] == first.pid
    assert entry["problem"].startswith(f"in use by PID {first.pid} on ")
    summary = json.loads(out)
    assert first.returncode == 0 and summary["outcome"] == "complete" and summary["points"] == 299, context
    assert summary["safe_state"] == "verified"
    assert state == OutputState(supply_output_on=False, load_input_on=False)


@pytest.mark.fault_survival("an output found on at connect")
def test_an_output_left_on_is_told_at_connect_then_switched_off(tmp_path):
    with SimProcess() as sim:
        supply = sim.resources["supply"]
        send(supply, "SOURce:VOLTage 5", "OUTPut:STATe ON")  # left on by whoever used the bench before
        assert send(supply, "OUTPut:STATe?") == ["1"]
        bench = write_bench_file(tmp_path / "bench.toml", sim.resources, **LOAD_WIRING)
        done = run_benchlog("sweep", str(PMOS_PLAN), "--bench", str(bench), "--out", str(tmp_path / "runs"),
                            "--json", timeout_s=60)
        state = output_state(sim.resources)
    context = f"exit {done.returncode}\n{done.stderr}"
    told = messages(done.stderr)
    # said at connect, before the off command; then, once read back, what the instrument said
    assert told == [f"benchlog: supply {supply}: output found ON at connect; switching it off and reading it back",
                    f"benchlog: warning: supply {supply}: output was ON when benchlog connected; switched off "
                    "(read back)"], context
    summary = json.loads(done.stdout)
    assert done.returncode == 0 and summary["outcome"] == "complete" and summary["safe_state"] == "verified", context
    notes = [e.message for e in read_events(summary["run_file"]) if isinstance(e, Note) and e.kind == "warning"]
    assert f"supply {supply}: output was ON when benchlog connected; switched off (read back)" in notes
    assert state == OutputState(supply_output_on=False, load_input_on=False)


@pytest.mark.fault_survival("the load's own protection trips mid-sweep")
def test_a_load_protection_trip_stops_the_sweep_as_a_fault(tmp_path):
    with SimProcess() as sim:
        load = sim.resources["load"]
        bench = write_bench_file(tmp_path / "bench.toml", sim.resources, **LOAD_WIRING)
        first = start_benchlog("sweep", str(_slow_plan(tmp_path)), "--bench", str(bench), "--out",
                               str(tmp_path / "runs"), "--json")
        try:
            _wait_for_points(first, tmp_path / "runs", 5)
            # the load's level drops below the current (as a fault inside the load would make it act)
            send(load, "SOURce:CURRent:PROTection 0.05")
            out, err = first.communicate(timeout=120)
        finally:
            if first.poll() is None:
                first.kill()
        tripped, questionable = send(load, "INPut:PROTection:TRIPped?", "STATus:QUEStionable:CONDition?")
        state = output_state(sim.resources)
    context = f"exit {first.returncode}\n{err}"
    summary = json.loads(out)
    assert first.returncode == 1 and summary["outcome"] == "fault", context
    told = messages(err)
    assert len(told) == 1 and "load input went off during the sweep (its protection tripped)" in told[0], context
    assert summary["safe_state"] == "verified" and 5 <= summary["points"] < 299
    assert tripped == "1" and int(questionable) & 0b10  # the over-current bit (SCPI-99 questionable; from memory)
    events = list(read_events(summary["run_file"]))
    assert sum(isinstance(e, Point) for e in events) == summary["points"]  # nothing after the trip recorded
    assert isinstance(events[-1], RunFinished) and events[-1].outcome == "fault"
    assert "load input went off during the sweep (its protection tripped)" in events[-1].message
    assert state == OutputState(supply_output_on=False, load_input_on=False)
