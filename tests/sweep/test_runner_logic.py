"""The runner's decisions with an injected clock and fake roles: settle, averaging, limits, cool-down, cancel, faults.

Pure logic only (dependency injection); the same behaviour against the simulated
bench over real pyvisa-py is in test_sweep_sim.py.
"""

import threading

import pytest

from benchlog.runs.events import Note, Offset, Point, ReverseResult, RunFinished, RunStarted
from benchlog.runs.record import is_run_id
from benchlog.sweep.plan import Settle, parse_plan
from benchlog.sweep.runner import SweepRunner
from benchlog.sweep.settle import Overload, settle

from .fakes import Element, FakeClock, ListWriter, fake_rig

BASE = """
[element]
id = "R1"
kind = "resistor"
[steps]
mode = "linear"
start_a = 0.1
stop_a = 1.0
count = 10
[settle]
dwell_s = 0.01
tolerance_v = 0.0001
consecutive = 2
timeout_s = 1.0
[limits]
max_current_a = 1.0
compliance_v = 2.0
"""


def plan_of(extra: str = "", base: str = BASE, **replace):
    text = base
    for old, new in replace.items():
        text = text.replace(old.replace("_", " ", 0), new)
    return parse_plan(text + extra, "plan.toml")


def run(plan, rig, clock, **kw):
    writer = ListWriter()
    runner = SweepRunner(plan, rig, clock=clock, sleep=clock.sleep, writer=writer, **kw)
    seen = []
    outcome = runner.run(seen.append)
    assert seen == writer.events  # the writer gets every event the consumer gets, in the same order
    return runner, outcome, seen


def notes(events, kind):
    return [e for e in events if isinstance(e, Note) and e.kind == kind]


# -- settle rule --------------------------------------------------------------


def test_settle_waits_for_consecutive_agreement():
    clock = FakeClock()
    values = iter([1.0, 0.5, 0.30, 0.2002, 0.2001, 0.2000, 0.2])
    rule = Settle(dwell_s=0, tolerance_v=0.0003, consecutive=3, timeout_s=10)
    got = settle(lambda: (next(values),), rule, clock)
    assert got.settled and got.reads == 6
    assert got.value == pytest.approx((0.2002 + 0.2001 + 0.2) / 3)


def test_settle_times_out_and_says_so():
    clock = FakeClock()

    def read():
        clock.now += 0.1
        return (clock.now,)  # drifts forever

    rule = Settle(dwell_s=0, tolerance_v=1e-6, consecutive=2, timeout_s=0.55)
    got = settle(read, rule, clock)
    assert not got.settled and got.reads == 6


def test_settle_bounded_when_the_clock_stands_still():
    clock = FakeClock()
    counter = iter(range(10**6))
    rule = Settle(dwell_s=0, tolerance_v=1e-9, consecutive=2, timeout_s=5, max_reads=7)
    got = settle(lambda: (float(next(counter)),), rule, clock)
    assert got.reads == 7 and not got.settled


def test_settle_averages_samples_and_refuses_overload():
    clock = FakeClock()
    rule = Settle(dwell_s=0, tolerance_v=1e-3, consecutive=1, timeout_s=1)
    assert settle(lambda: (0.1, 0.3), rule, clock).value == pytest.approx(0.2)
    with pytest.raises(Overload):
        settle(lambda: (0.1, None), rule, clock)


def test_runner_flags_unsettled_points_and_counts_reads():
    clock = FakeClock()
    rig, bench = fake_rig(clock, tau_s=0.05)
    plan = plan_of()
    runner, outcome, events = run(plan, rig, clock)
    assert outcome == "complete"
    points = [e for e in events if isinstance(e, Point)]
    assert len(points) == 10 and all(p.settle_reads > 2 for p in points)
    assert not any("unsettled" in p.flags for p in points)
    # a drift faster than the tolerance for longer than the timeout leaves every point flagged
    clock = FakeClock()
    rig, bench = fake_rig(clock, tau_s=5.0)
    plan = plan_of("", BASE.replace("tolerance_v = 0.0001", "tolerance_v = 0.000001"))
    runner, outcome, events = run(plan, rig, clock)
    assert outcome == "complete"
    assert all("unsettled" in p.flags for p in runner.points)
    # timeout 1 s at 0.02 s per read: about 50 reads, never the 200-read bound
    assert all(45 <= p.settle_reads <= 55 for p in runner.points)


# -- the normal run -----------------------------------------------------------


def test_complete_run_event_order_and_values():
    clock = FakeClock()
    rig, bench = fake_rig(clock, element=Element(r_ohm=0.05))
    runner, outcome, events = run(plan_of(), rig, clock)
    assert isinstance(events[0], RunStarted) and isinstance(events[1], Offset)
    assert isinstance(events[-1], RunFinished) and events[-1].outcome == "complete" and events[-1].points == 10
    points = [e for e in events if isinstance(e, Point)]
    assert [p.index for p in points] == list(range(10))
    for p in points:
        assert p.current_a == pytest.approx(p.setpoint_a)
        assert p.drop_v == pytest.approx(0.05 * p.setpoint_a)  # Ohm's law
        assert p.supply_mode == "CC" and p.supply_v == 2.0
    assert not bench.supply.output_on and bench.supply.safe_calls == 1
    header = events[0].header
    assert header.element.id == "R1" and header.plan.steps["count"] == 10
    assert header.instrument("supply").idn == "FAKE,SUPPLY,0,1"
    assert header.meter.range_v == 10.0  # smallest fake range holding the 2 V compliance
    assert is_run_id(header.run_id) and not header.run_id_derived


def test_offset_is_read_before_power_is_applied():
    clock = FakeClock()
    rig, bench = fake_rig(clock)
    run(plan_of(), rig, clock)
    assert bench.log.index("out=True") > 0
    first_on = bench.log.index("out=True")
    assert rig.meter.reads >= 2  # the offset reading happened
    # nothing before the first output-on was a power change other than setpoints and "off"
    assert all(entry != "out=True" for entry in bench.log[:first_on])


def test_offset_can_be_switched_off():
    clock = FakeClock()
    rig, _ = fake_rig(clock)
    _, _, events = run(plan_of("[offset]\nenabled = false\n"), rig, clock)
    assert not any(isinstance(e, Offset) for e in events)


def test_updown_directions():
    clock = FakeClock()
    rig, _ = fake_rig(clock)
    plan = plan_of(base=BASE.replace('mode = "linear"', 'mode = "updown"').replace("count = 10", "count = 4"))
    runner, _, _ = run(plan, rig, clock)
    assert [p.direction for p in runner.points] == ["up"] * 4 + ["down"] * 3
    assert [p.setpoint_a for p in runner.points] == pytest.approx([0.1, 0.4, 0.7, 1.0, 0.7, 0.4, 0.1])


# -- limits -------------------------------------------------------------------


def test_max_drop_stops_with_the_offending_point_recorded():
    clock = FakeClock()
    rig, bench = fake_rig(clock, element=Element(r_ohm=0.5))
    runner, outcome, events = run(plan_of("", BASE.replace("compliance_v = 2.0", "compliance_v = 2.0\nmax_drop_v = 0.3")), rig, clock)
    assert outcome == "limit"
    (note,) = notes(events, "limit")
    assert "max_drop_v" in note.message and "0.3 V" in note.message
    assert runner.points[-1].drop_v > 0.3 and all(p.drop_v <= 0.3 for p in runner.points[:-1])
    assert len(runner.points) == 7  # 0.5 Ω x 0.7 A = 0.35 V is the first above 0.3 V
    assert not bench.supply.output_on
    assert events[-1].outcome == "limit"


def test_max_power_stops():
    clock = FakeClock()
    rig, bench = fake_rig(clock, element=Element(r_ohm=0.5))
    runner, outcome, events = run(plan_of("", BASE.replace("compliance_v = 2.0", "compliance_v = 2.0\nmax_power_w = 0.1")), rig, clock)
    assert outcome == "limit" and "max_power_w" in notes(events, "limit")[0].message
    # P = I²R: 0.4 A gives 0.08 W, 0.5 A gives 0.125 W
    assert runner.points[-1].setpoint_a == pytest.approx(0.5)
    assert not bench.supply.output_on


def test_max_current_readback_stops():
    clock = FakeClock()
    rig, bench = fake_rig(clock, readback_gain=1.05)  # a read-back 5 % high at the top step
    runner, outcome, events = run(plan_of(), rig, clock)
    assert outcome == "limit" and "max_current_a" in notes(events, "limit")[0].message
    assert runner.points[-1].setpoint_a == pytest.approx(1.0)


def test_compliance_stops_when_supply_leaves_cc():
    clock = FakeClock()
    rig, bench = fake_rig(clock, element=Element(diode=True))
    plan = plan_of("", BASE.replace('kind = "resistor"', 'kind = "rectifier"').replace("compliance_v = 2.0", "compliance_v = 1.0"))
    runner, outcome, events = run(plan, rig, clock)
    assert outcome == "limit"
    assert "compliance_v" in notes(events, "limit")[0].message
    assert "compliance" in runner.points[-1].flags and runner.points[-1].supply_mode == "CV"
    assert not bench.supply.output_on


def test_max_time_stops_between_steps():
    clock = FakeClock()
    rig, bench = fake_rig(clock)
    plan = plan_of("", BASE.replace("compliance_v = 2.0", "compliance_v = 2.0\nmax_time_s = 0.3"))
    runner, outcome, events = run(plan, rig, clock)
    assert outcome == "limit" and "max_time_s" in notes(events, "limit")[0].message
    assert 0 < len(runner.points) < 10
    assert runner.points[-1].t_s <= 0.3 + 0.2


def test_meter_overload_stops():
    clock = FakeClock()
    rig, bench = fake_rig(clock, element=Element(r_ohm=0.5))
    rig.meter.overload_above = 0.2
    runner, outcome, events = run(plan_of("[offset]\nenabled=false\n"), rig, clock)
    assert outcome == "limit" and "overload" in notes(events, "limit")[0].message
    assert len(runner.points) == 4


# -- cool-down ----------------------------------------------------------------


def test_cooldown_switches_off_between_points():
    clock = FakeClock()
    rig, bench = fake_rig(clock)
    runner, outcome, _ = run(plan_of("[cooldown]\noff_s = 2.0\n"), rig, clock)
    assert outcome == "complete"
    gaps = [b.t_s - a.t_s for a, b in zip(runner.points, runner.points[1:])]
    assert min(gaps) >= 2.0
    assert bench.log.count("out=False") >= 10


# -- cancel, interrupt, faults -----------------------------------------------


def test_cancel_from_another_thread_reaches_safe_state_within_one_step():
    clock = FakeClock()
    rig, bench = fake_rig(clock)
    writer = ListWriter()
    runner = SweepRunner(plan_of(), rig, clock=clock, sleep=clock.sleep, writer=writer)

    def on_event(event):
        if isinstance(event, Point) and event.index == 3:
            t = threading.Thread(target=runner.cancel)
            t.start()
            t.join()

    outcome = runner.run(on_event)
    assert outcome == "cancelled" and len(runner.points) == 4
    assert not bench.supply.output_on and bench.supply.safe_calls == 1
    assert writer.events[-1].outcome == "cancelled" and writer.events[-2].kind == "cancel"


def test_closing_the_event_stream_is_a_safe_cancel():
    clock = FakeClock()
    rig, bench = fake_rig(clock)
    writer = ListWriter()
    runner = SweepRunner(plan_of(), rig, clock=clock, sleep=clock.sleep, writer=writer)
    stream = runner.events()
    for event in stream:
        if isinstance(event, Point) and event.index == 2:
            break
    stream.close()
    assert not bench.supply.output_on
    assert writer.events[-1].outcome == "cancelled" and writer.events[-1].points == 3


def test_ctrl_c_in_the_consumer_records_cancel_then_propagates():
    clock = FakeClock()
    rig, bench = fake_rig(clock)
    writer = ListWriter()
    runner = SweepRunner(plan_of(), rig, clock=clock, sleep=clock.sleep, writer=writer)

    def on_event(event):
        if isinstance(event, Point) and event.index == 1:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        runner.run(on_event)
    assert not bench.supply.output_on
    assert runner.outcome == "cancelled" and writer.events[-1].outcome == "cancelled"
    assert writer.events[-1].points == 2


def test_a_failing_consumer_switches_off_at_once_and_records_the_end():
    # A closed stdout pipe or a UI error in on_event must not leave power on until garbage collection.
    clock = FakeClock()
    rig, bench = fake_rig(clock)
    writer = ListWriter()
    runner = SweepRunner(plan_of(), rig, clock=clock, sleep=clock.sleep, writer=writer)

    def on_event(event):
        if isinstance(event, Point) and event.index == 1:
            raise BrokenPipeError(32, "Broken pipe")

    try:
        runner.run(on_event)
    except BrokenPipeError as exc:
        held = exc  # the traceback keeps run()'s frame, and so the event generator, alive
        assert held.__traceback__ is not None
        assert not bench.supply.output_on and bench.supply.safe_calls == 1
        assert writer.events[-1].outcome == "cancelled" and writer.events[-1].points == 2
    else:
        pytest.fail("the consumer's error must propagate")


def test_instrument_fault_stops_with_one_message():
    clock = FakeClock()
    rig, bench = fake_rig(clock)
    rig.meter.fail_after = 12
    runner, outcome, events = run(plan_of(), rig, clock)
    assert outcome == "fault"
    (note,) = notes(events, "fault")
    assert "connection reset" in note.message and "\n" not in note.message
    assert not bench.supply.output_on
    assert events[-1].points == len(runner.points) == len([e for e in events if isinstance(e, Point)])


def test_supply_trip_is_a_fault_and_the_point_is_not_recorded():
    clock = FakeClock()
    rig, bench = fake_rig(clock)
    n = 0

    def on_event(event):
        nonlocal n
        if isinstance(event, Point):
            n += 1
            if n == 3:
                bench.supply.trip = True

    runner = SweepRunner(plan_of(), rig, clock=clock, sleep=clock.sleep)
    assert runner.run(on_event) == "fault"
    assert len(runner.points) == 3
    assert "protection tripped" in runner.message


def test_declining_the_caution_never_switches_on():
    clock = FakeClock()
    rig, bench = fake_rig(clock)
    runner, outcome, events = run(plan_of(), rig, clock, before_power_on=lambda: False)
    assert outcome == "cancelled" and not runner.points
    assert "out=True" not in bench.log and not runner.power_applied


# -- load wiring and reverse step --------------------------------------------


def test_load_wiring_sets_the_load_and_holds_the_input():
    clock = FakeClock()
    rig, bench = fake_rig(clock, force="load")
    runner, outcome, _ = run(plan_of("", BASE.replace("compliance_v = 2.0", "")), rig, clock)
    assert outcome == "complete"
    assert bench.supply.limit_a == 0.0  # safe state zeroed it; during the run it was max_current_a
    assert "V=12.0" in bench.log and "I=1.05" in bench.log  # supply limit 5 % above max_current_a
    assert all(p.supply_mode == "CV" for p in runner.points)
    assert not bench.load.input_on and bench.load.safe_calls == 1


def test_reverse_step_reports_current_and_restores_polarity():
    clock = FakeClock()
    rig, bench = fake_rig(clock, reverse_leak_a=2e-6)
    plan = plan_of("[reverse]\nvoltage_v = 12\nduration_s = 0.5\nmax_current_a = 1e-5\n",
                   BASE.replace("compliance_v = 2.0", "compliance_v = 20.0"))
    runner, outcome, events = run(plan, rig, clock)
    (result,) = [e for e in events if isinstance(e, ReverseResult)]
    assert result.passed and result.current_a == pytest.approx(2e-6) and result.limit_a == 1e-5
    assert not bench.supply.reversed and not bench.supply.output_on
    # a leaky element fails the step
    clock = FakeClock()
    rig, bench = fake_rig(clock, reverse_leak_a=5e-5)
    runner, outcome, events = run(plan, rig, clock)
    (result,) = [e for e in events if isinstance(e, ReverseResult)]
    assert not result.passed and outcome == "complete"
