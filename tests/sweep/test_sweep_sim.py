"""Sweeps against the simulated bench over real pyvisa-py sockets: every kind, both wirings, limits, cancel.

Reference checks: Ohm's law and a least-squares line (numpy.polyfit) for the
resistive elements; the Shockley diode equation with series resistance,
V = n·Vt·ln(I/Is + 1) + I·Rs (Sze, Physics of Semiconductor Devices, ch. 2),
evaluated with the simulator's true parameters, for the diodes.
"""

from __future__ import annotations

import math
import threading

import numpy as np
import pytest

from benchlog.badinput import BadInput
from benchlog.runs import load, read_events, replay
from benchlog.runs.events import Note, Point, ReverseResult, RunFinished
from benchlog.sweep.bench_file import Wiring
from benchlog.cli.simbench import sim_wiring

from .simrig import parse, plan_text, record, setup_for

BOLTZMANN_OVER_Q = 1.380649e-23 / 1.602176634e-19  # exact SI values (2019 redefinition)


def _off(running) -> bool:
    b = running.bench
    return not b.supply.output_on and not b.load.input_on


def _file_points(path):
    return [e for e in read_events(path) if isinstance(e, Point)]


LINEAR = "mode = 'linear'\nstart_a = 0.1\nstop_a = 2.0\ncount = 20"


@pytest.mark.parametrize("kind", ["resistor", "pmos"])
def test_resistive_kinds_follow_ohms_law(sim_bench, tmp_path, kind):
    running = sim_bench(kind, seed=3)
    compliance = "\ncompliance_v = 5.0" if kind == "resistor" else ""  # the pmos sits in the 12 V load wiring
    plan = parse(plan_text(kind, steps=LINEAR, limits="max_current_a = 2.0\nmax_drop_v = 1.0" + compliance,
                           meter="range_v = 1\nnplc = 1"))
    rec = record(plan, setup_for(running), tmp_path)
    assert rec.outcome == "complete" and len(rec.points) == 20
    assert _off(running)
    i = np.array([p.current_a for p in rec.points])
    v = np.array([p.drop_v for p in rec.points])
    slope, _ = np.polyfit(i, v, 1)  # least-squares line as the reference estimator
    truth = running.truth()["r_on_ohm"]
    # the channel warms a little (tempco) and the instruments carry their spec errors: 5 %
    assert slope == pytest.approx(truth, rel=0.05)
    assert _file_points(rec.path) == rec.points


@pytest.mark.parametrize("kind", ["rectifier", "schottky"])
def test_diode_kinds_follow_the_shockley_law(sim_bench, tmp_path, kind):
    running = sim_bench(kind, seed=4)
    plan = parse(plan_text(kind, steps="mode = 'log'\nstart_a = 0.01\nstop_a = 1.0\ncount = 12",
                           limits="max_current_a = 1.0\ncompliance_v = 3.0",
                           meter="range_v = 10", extra="[cooldown]\noff_s = 0.02\n"))
    rec = record(plan, setup_for(running), tmp_path)
    assert rec.outcome == "complete" and len(rec.points) == 12 and _off(running)
    t = running.truth()
    vt = BOLTZMANN_OVER_Q * (25.0 + 273.15)
    for p in rec.points:
        expected = t["ideality"] * vt * math.log1p(p.current_a / t["i_s_a"]) + p.current_a * t["r_s_ohm"]
        assert p.drop_v == pytest.approx(expected, abs=0.01), p  # self-heating kept small by the cool-down
    assert all(b.drop_v > a.drop_v for a, b in zip(rec.points, rec.points[1:]))


def test_supply_and_load_wirings_agree(sim_bench, tmp_path):
    plan = parse(plan_text("resistor", steps=LINEAR, limits="max_current_a = 2.0\ncompliance_v = 5.0",
                           meter="range_v = 1"))
    slopes = {}
    for force in ("supply", "load"):
        running = sim_bench("resistor", seed=5)
        wiring = Wiring(force=force, current_from=force, input_v=5.0 if force == "load" else None)
        rec = record(plan, setup_for(running, wiring), tmp_path / force)
        assert rec.outcome == "complete" and _off(running)
        modes = {p.supply_mode for p in rec.points}
        assert modes == ({"CC"} if force == "supply" else {"CV"})
        i = np.array([p.current_a for p in rec.points])
        v = np.array([p.drop_v for p in rec.points])
        slopes[force] = np.polyfit(i, v, 1)[0]
        running.stop()
        truth = running.truth()["r_on_ohm"]
    # each read-back has its own gain error (±0.10 % in the sim specs), a read-back offset only moves
    # the intercept; the rest is the resistor's warming (tempco) over the sweep: 2 % covers both
    for force, slope in slopes.items():
        assert slope == pytest.approx(truth, rel=0.02), force
    assert slopes["supply"] == pytest.approx(slopes["load"], rel=0.03)


@pytest.mark.parametrize("current_from", ["meter", "shunt"])
def test_current_from_a_second_meter(sim_bench, tmp_path, current_from):
    running = sim_bench("resistor", seed=6, current_meter=True, shunt_ohm=0.01)
    wiring = Wiring(force="supply", current_from=current_from, shunt_ohm=0.01 if current_from == "shunt" else None)
    plan = parse(plan_text("resistor", steps=LINEAR, limits="max_current_a = 2.0\ncompliance_v = 5.0",
                           meter="range_v = 1"))
    rec = record(plan, setup_for(running, wiring), tmp_path)
    assert rec.outcome == "complete" and _off(running)
    for p in rec.points:
        assert p.current_a == pytest.approx(p.setpoint_a, rel=0.02, abs=0.005)
    assert rec.emitted[0].header.accuracy.current.range > 0


def test_pmos_channel_with_load_wiring_and_body_diode_on_purpose(sim_bench, tmp_path):
    running = sim_bench("pmos", seed=7)
    channel = record(parse(plan_text("pmos", steps=LINEAR, limits="max_current_a = 2.0\nmax_drop_v = 0.09",
                                     meter="range_v = 0.1")), setup_for(running), tmp_path)
    assert channel.outcome == "complete"
    assert max(p.drop_v for p in channel.points) < 0.05  # 10 mΩ-class channel, not a 0.6 V body diode
    body_plan = parse(plan_text("pmos", element='measure = "body_diode"', steps=LINEAR,
                                limits="max_current_a = 2.0\ncompliance_v = 3.0", meter="range_v = 10"))
    body = record(body_plan, setup_for(running, sim_wiring(body_plan.element)), tmp_path)
    assert body.outcome == "complete" and _off(running)
    assert min(p.drop_v for p in body.points) > 0.4  # the body diode conducts: a pn junction drop


# -- limits -----------------------------------------------------------------------


LIMIT_CASES = [
    ("max_drop_v", "rectifier", "max_current_a = 2.0\ncompliance_v = 3.0\nmax_drop_v = 0.85", "range_v = 10"),
    ("max_power_w", "resistor", "max_current_a = 2.0\ncompliance_v = 3.0\nmax_power_w = 0.05", "range_v = 1"),
    ("compliance_v", "rectifier", "max_current_a = 2.0\ncompliance_v = 0.8", "range_v = 10"),
]


@pytest.mark.parametrize("name, kind, limits, meter", LIMIT_CASES, ids=[c[0] for c in LIMIT_CASES])
def test_each_limit_stops_the_sweep_with_outputs_off(sim_bench, tmp_path, name, kind, limits, meter):
    running = sim_bench(kind, seed=8)
    rec = record(parse(plan_text(kind, steps=LINEAR, limits=limits, meter=meter)), setup_for(running), tmp_path)
    assert rec.outcome == "limit"
    notes = [e for e in rec.emitted if isinstance(e, Note) and e.kind == "limit"]
    assert len(notes) == 1 and name in notes[0].message
    assert 0 < len(rec.points) < 20
    assert _off(running)
    frame, meta = load(rec.path)
    assert meta.outcome == "limit" and len(frame) == len(rec.points)


def test_max_time_limit(sim_bench, tmp_path):
    running = sim_bench("resistor", seed=9)
    plan = parse(plan_text("resistor", steps=LINEAR, limits="max_current_a = 2.0\ncompliance_v = 3.0\nmax_time_s = 0.3",
                           settle="dwell_s = 0.05\ntolerance_v = 0.01\nconsecutive = 1\ntimeout_s = 0.5"))
    rec = record(plan, setup_for(running), tmp_path)
    assert rec.outcome == "limit" and "max_time_s" in rec.runner.message
    assert 0 < len(rec.points) < 20 and _off(running)


# -- cancel -------------------------------------------------------------------------


def test_cancel_mid_sweep_leaves_every_output_off(sim_bench, tmp_path):
    running = sim_bench("pmos", seed=10)
    plan = parse(plan_text("pmos", steps=LINEAR, limits="max_current_a = 2.0\nmax_drop_v = 0.09",
                           meter="range_v = 0.1"))
    seen_on = []

    def on_event(runner, event):
        if isinstance(event, Point) and event.index == 5:
            seen_on.append(running.bench.supply.output_on and running.bench.load.input_on)
            t = threading.Thread(target=runner.cancel)  # as the UI would, from another thread
            t.start()
            t.join()

    rec = record(plan, setup_for(running), tmp_path, on_event=on_event)
    assert seen_on == [True]  # really on before the cancel
    assert rec.outcome == "cancelled" and len(rec.points) == 6
    assert _off(running)
    frame, meta = load(rec.path)
    assert meta.outcome == "cancelled" and len(frame) == 6


def test_reverse_step_on_the_sim(sim_bench, tmp_path):
    running = sim_bench("rectifier", seed=11, current_meter=True)
    plan = parse(plan_text("rectifier", steps="mode = 'linear'\nstart_a = 0.1\nstop_a = 0.5\ncount = 3",
                           limits="max_current_a = 1.0\ncompliance_v = 15.0", meter="range_v = 10",
                           extra="[reverse]\nvoltage_v = 12.0\nduration_s = 0.2\nmax_current_a = 0.0001\n"))
    setup = setup_for(running, sim_wiring("rectifier", current_from="meter"))
    rec = record(plan, setup, tmp_path)
    (result,) = [e for e in rec.emitted if isinstance(e, ReverseResult)]
    # the simulated rectifier leaks about 1 µA at 25 °C; 100 µA is the pass limit
    assert result.passed and 0 <= result.current_a < 1e-5
    assert not running.bench.supply.inverted and _off(running)
    _, meta = load(rec.path)
    assert meta.reverse == result


def test_reverse_step_refused_when_the_supply_readback_cannot_resolve_it(sim_bench, tmp_path):
    running = sim_bench("rectifier", seed=11)
    plan = parse(plan_text("rectifier", steps="mode = 'linear'\nstart_a = 0.1\nstop_a = 0.5\ncount = 3",
                           limits="max_current_a = 1.0\ncompliance_v = 15.0", meter="range_v = 10",
                           extra="[reverse]\nvoltage_v = 12.0\nduration_s = 0.2\nmax_current_a = 0.0001\n"))
    with pytest.raises(BadInput, match=r"\[reverse\].max_current_a.*could not tell a pass from a fail"):
        record(plan, setup_for(running), tmp_path)
    assert not list(tmp_path.glob("*.run"))  # refused before a run file was started


# -- replay -------------------------------------------------------------------------


def test_replay_yields_exactly_the_recorded_events(sim_bench, tmp_path):
    running = sim_bench("schottky", seed=12)
    plan = parse(plan_text("schottky", steps="mode = 'updown'\nstart_a = 0.05\nstop_a = 1.0\ncount = 8",
                           limits="max_current_a = 1.0\ncompliance_v = 2.0", meter="range_v = 1"))
    rec = record(plan, setup_for(running), tmp_path)
    assert rec.outcome == "complete" and len(rec.points) == 15
    replayed = list(replay(rec.path))
    assert [p for p in replayed if isinstance(p, Point)] == rec.points
    assert replayed == rec.emitted
    assert isinstance(replayed[-1], RunFinished) and replayed[-1].points == 15


# -- scale ------------------------------------------------------------------------


@pytest.mark.slow
def test_ten_thousand_points_against_the_zero_latency_sim(sim_bench, tmp_path):
    running = sim_bench("resistor", seed=13, latency_s=0.0)
    plan = parse(plan_text("resistor", steps="mode = 'linear'\nstart_a = 0.001\nstop_a = 1.0\ncount = 10000",
                           limits="max_current_a = 1.0\ncompliance_v = 3.0", meter="range_v = 1\nsamples = 1",
                           extra="[offset]\nenabled = false\n[record]\nsupply_v = false\n",
                           settle="dwell_s = 0\ntolerance_v = 1\nconsecutive = 1\ntimeout_s = 1"))
    rec = record(plan, setup_for(running), tmp_path)
    assert rec.outcome == "complete" and len(rec.points) == 10_000
    frame, meta = load(rec.path)
    assert meta.complete and len(frame) == 10_000
    assert frame["index"].tolist() == list(range(10_000))
    assert _off(running)
