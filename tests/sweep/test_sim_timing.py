"""The runner on the simulator with real timing: the settle rule sees a setpoint settling, and no point beats the floor.

Runner and simulated bench share one injected clock that moves only when
someone waits on it (the runner's dwell, the meter's integration), so these
tests check bench-clock times exactly and take no wall time for them.
"""

from __future__ import annotations

import pytest

from benchlog.runs.events import Point
from benchlog.sweep.feasibility import check_plan_on_bench, check_plan_on_rig
from benchlog.sweep.rig import open_rig
from benchlog.sweep.runner import SweepRunner

from .simrig import parse, plan_text, setup_for

LINE_HZ = 50.0
NPLC = 1.0
SAMPLES = 1


def _sweep(clocked_sim_bench, timing: str) -> list[Point]:
    clock, running = clocked_sim_bench("resistor", 5, timing=timing, element_params={"r_on_ohm": 0.05})
    # steps of 0.2 A through 50 mΩ: 10 mV each; the supply's τ = 2 ms leaves e^-5 ≈ 0.7 % (67 µV) at the
    # middle of the first 20 ms reading, more than the 50 µV tolerance
    plan = parse(plan_text("resistor", steps="mode = 'linear'\nstart_a = 0.2\nstop_a = 2.0\ncount = 10",
                           limits="max_current_a = 2.2\ncompliance_v = 5.0",
                           meter=f"range_v = 1\nnplc = {NPLC:g}\nsamples = {SAMPLES}",
                           settle="dwell_s = 0.0\ntolerance_v = 0.00005\nconsecutive = 2\ntimeout_s = 2.0"))
    setup = setup_for(running)
    warnings = check_plan_on_bench(plan, setup)
    rig = open_rig(setup)
    try:
        warnings += check_plan_on_rig(plan, rig)
        runner = SweepRunner(plan, rig, clock=clock, sleep=clock.sleep, warnings=warnings)
        events: list = []
        assert runner.run(events.append) == "complete"
    finally:
        rig.close()
    return [e for e in events if isinstance(e, Point)]


def test_settle_rule_sees_the_supply_settling_with_real_timing(clocked_sim_bench):
    real = _sweep(clocked_sim_bench, "real")
    instant = _sweep(clocked_sim_bench, "instant")
    assert len(real) == len(instant) == 10
    # instant: the first two readings already agree; real: the first one still carries the step's tail
    assert all(p.settle_reads == 2 for p in instant)
    assert all(p.settle_reads >= 3 for p in real[1:])


def test_no_point_is_faster_than_its_integration_time(clocked_sim_bench):
    points = _sweep(clocked_sim_bench, "real")
    reading_s = SAMPLES * NPLC / LINE_HZ  # t = N·NPLC/f_line (definition of NPLC, common practice)
    for before, after in zip(points, points[1:]):
        assert after.t_s - before.t_s >= after.settle_reads * reading_s - 1e-9
    instant = _sweep(clocked_sim_bench, "instant")
    assert instant[-1].t_s - instant[0].t_s == pytest.approx(0.0, abs=1e-9)
