"""Every simulator fault, end to end: `benchlog sweep` in one process against `benchlog sim` in another.

For each fault the sim is started with that fault's option, a bench file points
the sim profiles at its sockets, and the sweep runs as a real command. Then:
the outputs are off (asked of the sim over a fresh pyvisa-py connection), every
point the sweep reported is in the run file, stderr holds exactly one message
and it names the fault (no traceback), and the exit code is non-zero (2 for a
nonsense reply, which is bad input; 1 for the other faults).

All scenarios run side by side in one module fixture, so the suite waits for
the slowest (a timeout), not for the sum.
"""

from __future__ import annotations

import json
import re
import tempfile
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path

import pytest

from benchlog.runs import load, read_events
from benchlog.runs.events import Point, RunFinished

from .procs import OutputState, SimProcess, messages, output_state, run_benchlog, stderr_lines, write_bench_file

PLANS = Path(__file__).parent / "plans"
PMOS_PLAN = PLANS / "pmos-40.toml"  # load wiring: supply in CV at 12 V, load forces the current
RECT_PLAN = PLANS / "rectifier-30.toml"  # supply wiring: the supply forces the current in CC

LOAD_WIRING = {"force": "load", "current_from": "load", "input_v": 12.0}
SUPPLY_WIRING = {"force": "supply", "current_from": "supply"}


@dataclass(frozen=True)
class Scenario:
    fault: str  # the fault as the issue names it (the tally's key)
    case: str  # test id
    sim_args: tuple[str, ...]
    plan: Path
    wiring: dict
    words: str  # regular expression the one message must match (names the fault)
    exit_code: int
    mid_sweep: bool = True  # False: the fault is on from the first message, so it shows at connect
    stops_early: bool = True  # False: seen at the end-of-sweep error check, after the last point


# Counts are messages per instrument; connect and configuration take about a dozen,
# so 30..60 lands the fault mid-sweep (the sweep tests in tests/sweep pick alike).
SCENARIOS = [
    Scenario("link lost or output not obeying off: verified off or declared unverified", "drop-supply",
             ("--drop-after", "40", "--fault-role", "supply"), PMOS_PLAN, LOAD_WIRING, r"connection closed", 1),
    Scenario("dropped connection", "drop-load", ("--drop-after", "40", "--fault-role", "load"),
             PMOS_PLAN, LOAD_WIRING, r"connection closed", 1),
    Scenario("dropped connection", "drop-meter", ("--drop-after", "40", "--fault-role", "meter"),
             PMOS_PLAN, LOAD_WIRING, r"connection closed", 1),
    Scenario("hung query", "hang-meter", ("--hang-after", "40", "--fault-role", "meter"),
             PMOS_PLAN, LOAD_WIRING, r"no reply to .* within [\d.]+ s", 1),
    Scenario("garbage reply", "garbage-meter", ("--garbage-after", "40", "--fault-role", "meter"),
             PMOS_PLAN, LOAD_WIRING, r"GARBLED.*expected", 2),
    Scenario("garbage reply", "garbage-load", ("--garbage-after", "30", "--fault-role", "load"),
             PMOS_PLAN, LOAD_WIRING, r"GARBLED.*expected", 2),
    Scenario("queue error", "queue-load", ("--queue-error-after", "30", "--fault-role", "load"),
             PMOS_PLAN, LOAD_WIRING, r"error -300 .*after 'sweep'", 1, stops_early=False),
    Scenario("supply trip", "trip-load-wiring", ("--trip-after", "30"),
             PMOS_PLAN, LOAD_WIRING, r"supply output went off .*protection tripped", 1),
    Scenario("supply trip", "trip-supply-wiring", ("--element", "rectifier", "--trip-after", "40"),
             RECT_PLAN, SUPPLY_WIRING, r"supply output went off .*protection tripped", 1),
    # the sim profiles wait 2 s (supply, load) and 3 s (meter) for a reply
    # one byte every 0.3 s: the meter's FETCh? reply would take about 4 s; its deadline is 3 s in total
    Scenario("trickling reply past the deadline", "trickle-meter",
             ("--trickle-after", "40", "--trickle-byte-s", "0.3", "--fault-role", "meter"),
             PMOS_PLAN, LOAD_WIRING, r"reply to .* incomplete after [\d.]+ s", 1),
    Scenario("added latency past the timeout", "latency-load", ("--extra-latency-s", "2.5", "--fault-role", "load"),
             PMOS_PLAN, LOAD_WIRING, r"no reply to '\*IDN\?' within 2 s", 1, mid_sweep=False),
]


@dataclass(frozen=True)
class Outcome:
    returncode: int
    stdout: str
    stderr: str
    state: OutputState
    out_dir: Path


def _run(scenario: Scenario, work: Path) -> Outcome:
    folder = work / scenario.case
    folder.mkdir()
    with SimProcess(*scenario.sim_args) as sim:
        bench = write_bench_file(folder / "bench.toml", sim.resources, **scenario.wiring)
        done = run_benchlog("sweep", str(scenario.plan), "--bench", str(bench), "--out", str(folder / "runs"),
                            "--json", timeout_s=60)
        state = output_state(sim.resources)
    return Outcome(done.returncode, done.stdout, done.stderr, state, folder / "runs")


@pytest.fixture(scope="module")
def outcomes():
    with tempfile.TemporaryDirectory(prefix="benchlog-faults-") as tmp:
        with ThreadPoolExecutor(max_workers=len(SCENARIOS)) as pool:
            futures = {s.case: pool.submit(_run, s, Path(tmp)) for s in SCENARIOS}
            yield {case: future.result() for case, future in futures.items()}


def _check(scenario: Scenario, got: Outcome) -> None:
    context = f"{scenario.case}: exit {got.returncode}\nstdout {got.stdout}\nstderr {got.stderr}"
    # outputs off at the end, as the sim itself reports over a fresh connection
    assert got.state == OutputState(supply_output_on=False, load_input_on=False), context
    # non-zero exit, the documented code
    assert got.returncode == scenario.exit_code, context
    # one clear message naming the fault, and nothing else but the caution and progress
    assert "Traceback" not in got.stderr, context
    told = messages(got.stderr)
    assert len(told) == 1, context
    assert told[0].startswith("benchlog: ") and re.search(scenario.words, told[0]), context
    runs = sorted(got.out_dir.glob("*.run")) if got.out_dir.exists() else []
    if not scenario.mid_sweep:
        # the fault shows at connect: nothing was measured, no run file was started, no power applied
        assert runs == [] and got.stdout == "", context
        return
    # every point the sweep reported is in the run file, in order, and the file says how it ended
    summary = json.loads(got.stdout)
    assert summary["outcome"] == "fault" and [Path(summary["run_file"])] == runs, context
    # the outputs were read back off (after reopening a lost link): said once, in the JSON and the end record
    assert summary["safe_state"] == "verified", context
    reported = summary["points"]
    progress = [int(m.group(1)) for line in stderr_lines(got.stderr) if (m := re.match(r"sweep: (\d+)/", line))]
    assert all(k <= reported for k in progress), context
    planned = 40 if scenario.plan == PMOS_PLAN else 30
    if scenario.stops_early:
        assert 0 < reported < planned, context  # the fault landed mid-sweep, after some points
    else:
        assert reported == planned, context
    frame, meta = load(runs[0])
    assert len(frame) == reported and frame["index"].tolist() == list(range(reported)), context
    assert meta.complete and meta.outcome == "fault", context
    events = list(read_events(runs[0]))
    assert sum(isinstance(e, Point) for e in events) == reported
    end = events[-1]
    assert isinstance(end, RunFinished) and end.points == reported and end.safe_state == "verified"


@pytest.mark.parametrize("scenario", [pytest.param(s, marks=pytest.mark.fault_survival(s.fault), id=s.case)
                                      for s in SCENARIOS])
def test_fault_survived_end_to_end(outcomes, scenario):
    _check(scenario, outcomes[scenario.case])


def test_every_fault_of_the_simulator_is_exercised():
    # the tally must cover every fault the sim can inject (FaultPlan's fields)
    from dataclasses import fields

    from benchlog.sim.faults import FaultPlan

    from .test_safety_survived import SIM_OPTIONS_USED

    option_of = {"drop_after_commands": "--drop-after", "hang_after": "--hang-after",
                 "garbage_after": "--garbage-after", "queue_error_after": "--queue-error-after",
                 "supply_trip_after": "--trip-after", "extra_latency_s": "--extra-latency-s",
                 "trickle_after": "--trickle-after", "trickle_byte_s": "--trickle-byte-s",
                 "stuck_on_after": "--stuck-on-after"}
    injectable = {f.name for f in fields(FaultPlan)} - {"role"}
    assert injectable == set(option_of)
    used = {arg for s in SCENARIOS for arg in s.sim_args} | set(SIM_OPTIONS_USED)
    assert set(option_of.values()) <= used
    assert len({s.fault for s in SCENARIOS}) == 8
