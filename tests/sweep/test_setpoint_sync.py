"""A new setpoint is applied before the drop is read: the runner syncs (`*OPC?`) with the instrument that changed.

The meter sits on its own socket; commands on separate links are not ordered, so
without the sync a zero-dwell reading can still see the previous step's current.

Reference: Ohm's law with the resistor's linear temperature coefficient,
R(T) = R25·(1 + α·(T − 25 °C)) (common practice), against the current read by a
series meter; IEEE 488.2 10.18 for what `*OPC?` promises.
"""

from __future__ import annotations

import math

import pytest

from benchlog.sim.meter import reading_noise_a, reading_noise_v
from benchlog.sim.specs import METER_DCI, METER_DCV, THERMAL_EMF_MAX_V, range_for
from benchlog.sweep.bench_file import Wiring
from benchlog.sweep.plan import parse_plan
from benchlog.sweep.runner import SweepRunner

from .fakes import FakeClock, ListWriter, fake_rig
from .simrig import parse, plan_text, record, setup_for

POINTS = 120
MAX_A = 2.0
ZERO_DWELL = "dwell_s = 0.0\ntolerance_v = 1.0\nconsecutive = 1\ntimeout_s = 0.5"  # one reading per point


@pytest.mark.parametrize("force", ["load", "supply"])
def test_zero_dwell_readings_see_the_new_setpoint(sim_bench, tmp_path, force):
    running = sim_bench("resistor", seed=11, current_meter=True)
    wiring = Wiring(force=force, current_from="meter", input_v=5.0 if force == "load" else None)
    plan = parse(plan_text("resistor", steps=f"mode = 'linear'\nstart_a = 0.1\nstop_a = {MAX_A}\ncount = {POINTS}",
                           limits=f"max_current_a = {MAX_A}\ncompliance_v = 5.0", meter="range_v = 1\nnplc = 1",
                           settle=ZERO_DWELL))
    rec = record(plan, setup_for(running, wiring), tmp_path)
    assert rec.outcome == "complete" and len(rec.points) == POINTS
    assert all(p.settle_reads == 1 for p in rec.points)

    truth = running.truth()
    r25, alpha = truth["r_on_ohm"], truth["tempco_per_k"]
    # Self-heating cannot exceed the steady-state rise at the largest power, ΔT = P·RθJA.
    rise_max_c = MAX_A**2 * r25 * (1 + abs(alpha) * 100) * truth["rth_ja_k_per_w"]
    v_spec = range_for(METER_DCV, 1.0)
    i_spec = range_for(METER_DCI, MAX_A)  # the runner picks the smallest current range holding max_current_a
    sigma_v = reading_noise_v(v_spec.range, 1.0, running.config.line_frequency_hz)
    sigma_i = reading_noise_a(i_spec.range, 1.0, running.config.line_frequency_hz)
    for p in rec.points:
        expected_v = p.current_a * r25  # at 25 °C; heating moves it by at most α·ΔT below
        tolerance_v = (v_spec.limit(p.drop_v) + THERMAL_EMF_MAX_V + 5 * sigma_v
                       + r25 * (i_spec.limit(p.current_a) + 5 * sigma_i)
                       + abs(expected_v * alpha * rise_max_c))
        # The previous step is 1.9/119 A away: a reading taken before the new current would miss by
        # r25 * 0.016 A = 0.8 mV, three times this tolerance at 2 A (about 0.26 mV) and more below.
        assert p.drop_v == pytest.approx(expected_v, abs=tolerance_v), p
    steps = [b.current_a - a.current_a for a, b in zip(rec.points, rec.points[1:])]
    assert min(steps) > 0.5 * (MAX_A - 0.1) / (POINTS - 1)  # the check above can tell one step from the next
    assert math.isclose(r25 * min(steps), 0.8e-3, rel_tol=0.3)


@pytest.mark.parametrize("force", ["supply", "load"])
def test_each_setpoint_is_followed_by_a_sync_on_its_own_instrument(force):
    clock = FakeClock()
    rig, bench = fake_rig(clock, force=force)
    reads = []
    original = rig.meter.read

    def read():
        bench.log.append("read")
        reads.append(1)
        return original()

    rig.meter.read = read
    plan = parse_plan(
        "[element]\nid = 'X'\nkind = 'resistor'\n[steps]\nmode = 'list'\ncurrents_a = [0.5, 1.0, 1.5]\n"
        "[settle]\ndwell_s = 0.0\nconsecutive = 1\ntolerance_v = 1.0\n"
        f"[limits]\nmax_current_a = 2.0\ncompliance_v = 5.0\n", "sync-plan.toml")
    runner = SweepRunner(plan, rig, clock=clock, sleep=clock.sleep, writer=ListWriter())
    assert runner.run() == "complete"
    setpoint = "I=" if force == "supply" else "load="
    sync = f"sync FAKE::{force}"
    changes = [i for i, entry in enumerate(bench.log) if entry.startswith(setpoint)]
    after_power = [i for i in changes if i > bench.log.index("out=True")]
    assert [bench.log[i] for i in after_power] == [f"{setpoint}1.0", f"{setpoint}1.5"]
    for i in after_power:
        assert bench.log[i + 1] == sync  # synced at once, before the dwell and the first reading
        assert bench.log[i + 2] == "read"
