"""`profiles probe` (plain and `--exercise`) and `profiles scan` take the instrument lock a sweep takes.

Against the simulated bench over real pyvisa-py. The witnesses are the simulator's
own: how many messages an instrument received, and whether its output is on.
"""

from __future__ import annotations

import json
import os
import socket

from benchlog.cli import main
from benchlog.instruments.benchlock import BenchLock
from benchlog.instruments.exercise import exercise
from benchlog.instruments.profile import load_profile
from benchlog.instruments.transport import VisaTransport


def _left_on(running) -> None:
    with running.bench.lock:
        running.bench.supply.voltage_set_v = 5.0
        running.bench.supply.output_on = True  # left on by whoever used the bench before


def test_exercise_on_a_resource_a_sweep_holds_is_refused_at_once_and_sends_nothing(sim_bench, capsys):
    running = sim_bench()
    supply = running.resources["supply"]
    _left_on(running)
    with BenchLock([supply]):  # another session (a sweep) holds the supply
        rc = main(["profiles", "probe", supply, "--exercise", "--profile", "sim-supply"])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 75  # EX_TEMPFAIL, as for a sweep refused on a bench in use
    assert len(err) == 1 and err[0].startswith(f"benchlog: {supply}: in use by PID {os.getpid()} on ")
    assert running.messages("supply") == 0  # not even *IDN?
    assert running.bench.supply.output_on  # the exercise would have switched it off: nothing reached it


def test_exercise_without_a_profile_does_not_even_ask_idn_of_a_held_resource(sim_bench, capsys):
    running = sim_bench()
    meter = running.resources["meter"]
    with BenchLock([meter]):
        assert main(["profiles", "probe", meter, "--exercise"]) == 75
    assert "in use by PID" in capsys.readouterr().err
    assert running.messages("meter") == 0


def test_plain_probe_is_refused_while_held_and_answers_once_free(sim_bench, capsys):
    running = sim_bench()
    load = running.resources["load"]
    with BenchLock([load]):
        assert main(["profiles", "probe", load]) == 75
    assert running.messages("load") == 0  # a read-only *IDN? would interleave with the holder's replies
    capsys.readouterr()
    assert main(["profiles", "probe", load, "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["idn"]["model"] == "SIM-LOAD"
    assert running.messages("load") == 1  # *IDN? and nothing else


def test_a_probe_holds_the_lock_while_it_talks(sim_bench):
    # While the exercise runs, a sweep's lock on the same resource must be refused: the lock is the
    # same one. The notice fires mid-exercise, after the lock is taken and before the off command.
    running = sim_bench()
    supply = running.resources["supply"]
    _left_on(running)
    refused = []

    def notice(text: str) -> None:
        try:
            BenchLock([supply]).acquire().release()
        except Exception as exc:  # noqa: BLE001 -- the refusal is the point
            refused.append(type(exc).__name__)

    from benchlog.cli import profiles_cmd

    with profiles_cmd.resource_lock(supply):
        with VisaTransport(supply, read_termination="\n", write_termination="\n", timeout_s=2.0) as link:
            exercise(link, load_profile("sim-supply"), on_notice=notice)
    assert refused == ["BenchInUse"]


def test_scan_names_the_holder_of_a_locked_resource_and_does_not_probe_it(sim_bench, capsys):
    running = sim_bench()
    supply, load = running.resources["supply"], running.resources["load"]
    with BenchLock([supply]):
        rc = main(["profiles", "scan", "--json", "--resource", supply, "--resource", load])
        report = json.loads(capsys.readouterr().out)
        by = {r["resource"]: r for r in report["resources"]}
        assert by[supply]["in_use"] and not by[supply]["answered"]
        assert by[supply]["problem"].startswith(f"in use by PID {os.getpid()} on {socket.gethostname()} since ")
        assert by[supply]["holder"]["pid"] == os.getpid()
        assert by[load]["answered"] and not by[load]["in_use"]
        assert rc == 0  # every resource either answered or is in use by a session: nothing is missing
        assert main(["profiles", "scan", "--resource", supply]) == 0
        line = capsys.readouterr().out.strip()
        assert line.startswith(supply) and "in use by PID" in line and line.endswith("not probed")
    assert running.messages("supply") == 0
    assert running.messages("load") == 1


def test_exercise_reports_an_output_found_on_before_switching_it_off(sim_bench, capsys):
    running = sim_bench()
    supply = running.resources["supply"]
    _left_on(running)
    seen = []

    def notice(text: str) -> None:
        seen.append((text, running.bench.supply.output_on))  # the sim's own state when the line is given

    with VisaTransport(supply, read_termination="\n", write_termination="\n", timeout_s=2.0) as link:
        result = exercise(link, load_profile("sim-supply"), on_notice=notice)
    assert seen == [(f"supply {supply}: output found ON at connect; switching it off and reading it back", True)]
    assert result.found_on is True and result.on_after_off is False
    assert not running.bench.supply.output_on

    _left_on(running)
    assert main(["profiles", "probe", supply, "--exercise", "--profile", "sim-supply", "--json"]) == 0
    out, err = capsys.readouterr()
    report = json.loads(out)
    assert report["found_on_at_connect"] is True and report["confirmed_off_after_connect"] is True
    assert [line for line in err.splitlines() if "found ON at connect" in line] == [
        f"benchlog: supply {supply}: output found ON at connect; switching it off and reading it back"]
    assert not running.bench.supply.output_on

    # off at connect: nothing said, and the text report says so
    assert main(["profiles", "probe", supply, "--exercise", "--profile", "sim-supply"]) == 0
    out, err = capsys.readouterr()
    assert "found ON" not in err and "state     output off at connect" in out.splitlines()


def test_exercise_of_a_load_left_on_names_its_input(sim_bench, capsys):
    running = sim_bench()
    load = running.resources["load"]
    with running.bench.lock:
        running.bench.load.input_on = True
    assert main(["profiles", "probe", load, "--exercise", "--profile", "sim-load"]) == 0
    out, err = capsys.readouterr()
    assert f"benchlog: load {load}: input found ON at connect; switching it off and reading it back" in err
    assert "state     input ON at connect; switched off (read back)" in out.splitlines()
    assert not running.bench.load.input_on
