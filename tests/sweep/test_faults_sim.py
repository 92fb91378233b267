"""Every injected simulator fault stops the sweep safely: outputs off, one clear note, no emitted point lost."""

from __future__ import annotations

import pytest

from benchlog.badinput import BadInput
from benchlog.instruments.errors import InstrumentTimeout
from benchlog.runs import load, read_events
from benchlog.runs.events import Note, Point
from benchlog.sim.faults import FaultPlan

from .simrig import parse, plan_text, record, setup_for

PLAN = plan_text("pmos", steps="mode = 'linear'\nstart_a = 0.1\nstop_a = 2.0\ncount = 40",
                 limits="max_current_a = 2.0\nmax_drop_v = 0.09", meter="range_v = 0.1")

# (name, fault plan, expected words in the fault note). Counts are messages per instrument,
# chosen to land mid-sweep (connect and configuration take about a dozen).
FAULTS = [
    ("dropped connection (load)", FaultPlan(drop_after_commands=40, role="load"), "connection"),
    ("dropped connection (meter)", FaultPlan(drop_after_commands=40, role="meter"), "connection"),
    ("hung query", FaultPlan(hang_after=40, role="meter"), "no reply"),
    ("garbage reply", FaultPlan(garbage_after=40, role="meter"), "GARBLED"),
    ("queue error", FaultPlan(queue_error_after=30, role="load"), "-300"),
    ("supply trip", FaultPlan(supply_trip_after=30), "tripped"),
]


@pytest.mark.parametrize("name, faults, words", FAULTS, ids=[f[0] for f in FAULTS])
def test_fault_stops_safely_with_every_point_on_disk(sim_bench, tmp_path, name, faults, words):
    running = sim_bench("pmos", seed=21, faults=faults)
    rec = record(parse(PLAN), setup_for(running), tmp_path, timeout_s=0.5)
    assert rec.outcome == "fault", rec.runner.message
    b = running.bench
    assert not b.supply.output_on and not b.load.input_on
    notes = [e for e in rec.emitted if isinstance(e, Note) and e.kind == "fault"]
    assert len(notes) == 1 and "\n" not in notes[0].message
    assert words.lower() in notes[0].message.lower(), notes[0].message
    on_disk = [e for e in read_events(rec.path) if isinstance(e, Point)]
    assert on_disk == rec.points  # no emitted point lost
    frame, meta = load(rec.path)
    assert meta.outcome == "fault" and len(frame) == len(rec.points)
    if name == "garbage reply":
        assert isinstance(rec.runner.fault, BadInput)  # a nonsense reply is bad input: exit 2 from the CLI


def test_added_latency_past_the_timeout_is_a_fault(sim_bench, tmp_path):
    running = sim_bench("pmos", seed=22, faults=FaultPlan(extra_latency_s=0.8, role="meter"))
    plan = parse(PLAN.replace("count = 40", "count = 3"))
    # connecting already times out: nothing was switched on, the error is one clear line
    with pytest.raises(InstrumentTimeout, match="no reply to .* within 0.3 s"):
        record(plan, setup_for(running), tmp_path, timeout_s=0.3)
    assert not running.bench.supply.output_on and not running.bench.load.input_on
