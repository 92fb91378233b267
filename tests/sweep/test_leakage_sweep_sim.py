"""A reverse-leakage sweep on the simulated bench (real pyvisa-py over loopback): one reverse record per voltage.

Reference: Shockley's reverse branch with the simulator's true saturation current, the slow rise and
Miller's multiplication (`benchlog.sim.elements.Leakage`, whose formula tests/analysis checks against
Sze and Miller), evaluated at the truth's parameters.
"""

from __future__ import annotations

import pytest

from benchlog.analysis.leakage_sweep import analyse_leakage
from benchlog.runs import read_events
from benchlog.runs.events import ReverseResult
from benchlog.sim.elements import Leakage
from benchlog.sweep.plan import parse_plan
from benchlog.sweep.rig import reverse_limit_a
from benchlog.cli.simbench import sim_wiring

from .simrig import parse, plan_text, record, setup_for

STEPS = "mode = 'linear'\nstart_a = 0.02\nstop_a = 0.1\ncount = 3"  # a short, cool forward sweep
LIMITS = "max_current_a = 1.0\ncompliance_v = 15.0"


def test_leakage_sweep_on_the_sim(sim_bench, tmp_path):
    running = sim_bench("schottky", seed=11, current_meter=True)
    plan = parse(plan_text("schottky", steps=STEPS, limits=LIMITS, meter="range_v = 10",
                           extra="[reverse]\nvoltages_v = [5.0, 10.0, 20.0, 30.0]\nduration_s = 0.1\n"
                                 "max_current_a = 0.0001\n"))
    junction: list[float] = []

    def on_event(runner, event):
        if isinstance(event, ReverseResult):  # the simulator's junction as the readings are reported
            running.bench.advance()
            junction.append(running.bench.junction_c)

    rec = record(plan, setup_for(running, sim_wiring("schottky", current_from="meter")), tmp_path, on_event=on_event)
    results = [e for e in read_events(rec.path) if isinstance(e, ReverseResult)]
    assert [r.voltage_v for r in results] == [5.0, 10.0, 20.0, 30.0] and all(r.passed for r in results)
    assert not running.bench.supply.inverted and not running.bench.supply.output_on
    truth = running.truth()
    law = Leakage(truth["reverse_leak_a"], truth["reverse_leak_doubling_k"], truth["reverse_v_scale_v"],
                  truth["reverse_breakdown_v"], truth["reverse_breakdown_m"])
    # the current meter's own fixed errors on the range the reverse reader chose (the sim's instrument truth,
    # drawn within the profile's accuracy): a reading of the reverse current −I is −I·(1 + g) + o
    rig = rec.runner.rig
    rng = min(r for r in rig.current_meter.profile.limits.current_ranges_a
              if r >= reverse_limit_a(plan, rig.supply.profile))
    gain, offset = running.bench.current_meter.gain[("CURR", rng)], running.bench.current_meter.offset[("CURR", rng)]
    for r, tj in zip(results, junction):
        # the junction, a little above 25 °C after the forward sweep, cools by far less than 0.1 K during the
        # reverse steps (τ = Rθ·Cθ = 25 s); meter noise and that drift stay within 2 %
        assert 25.0 <= tj < 30.0
        expected = abs(-law.current_a(r.voltage_v, tj) * (1 + gain) + offset)
        assert r.current_a == pytest.approx(expected, rel=0.02)
    currents = [r.current_a for r in results]
    assert currents == sorted(currents)  # leakage rises with reverse voltage
    s = analyse_leakage(results, 25.0, "assumed")
    assert s.outcome == "pass" and len(s.points) == 4


def test_leakage_sweep_stops_at_the_first_failing_voltage(sim_bench, tmp_path):
    running = sim_bench("schottky", seed=11, current_meter=True)
    # 20 µA·(1 + V/20)·M(V) at about 25 °C, read with this seed's +6.8 µA offset on the 0.1 A range (see above):
    # about 32 µA at 5 V, 37 µA at 10 V, 41 µA at 15 V and 47 µA at 20 V, so a 42 µA limit stops it at 20 V
    plan = parse(plan_text("schottky", steps=STEPS, limits=LIMITS, meter="range_v = 10",
                           extra="[reverse]\nstart_v = 5.0\nstop_v = 30.0\ncount = 6\nduration_s = 0.1\n"
                                 "max_current_a = 42e-6\n"))
    rec = record(plan, setup_for(running, sim_wiring("schottky", current_from="meter")), tmp_path)
    results = [e for e in rec.emitted if isinstance(e, ReverseResult)]
    assert [r.voltage_v for r in results] == [5.0, 10.0, 15.0, 20.0]
    assert [r.passed for r in results] == [True, True, True, False]
    assert any("stopped after 4 of 6" in getattr(e, "message", "") for e in rec.emitted)
    assert not running.bench.supply.inverted and not running.bench.supply.output_on


@pytest.mark.parametrize("table, where", [
    ("voltage_v = 5.0\nvoltages_v = [5.0]\n", "exactly one"),
    ("start_v = 5.0\nstop_v = 2.0\ncount = 3\n", "stop_v"),
    ("voltages_v = [5.0, 0.0]\n", r"voltages_v\[1\]"),
    ("stop_v = 2.0\nvoltage_v = 3.0\n", "only used with start_v"),
])
def test_bad_reverse_tables_are_one_line(table, where):
    from benchlog.badinput import BadInput

    with pytest.raises(BadInput, match=where):
        parse_plan(plan_text("schottky", steps=STEPS, limits=LIMITS,
                             extra=f"[reverse]\n{table}duration_s = 0.1\nmax_current_a = 0.001\n"), "p.toml")
