"""Input-voltage sweeps on the simulated bench (real pyvisa-py over loopback): one series per input, the takeover found.

Reference: Kirchhoff's voltage law for a gate tied to the opposite rail, |Vgs| = Vin − drop
(any circuit text), and the simulator's own truth (its threshold and body-diode law).
"""

from __future__ import annotations

import numpy as np
import pytest

from benchlog.analysis.input_sweep import analyse_input_sweep
from benchlog.badinput import BadInput
from benchlog.runs import load, read_events, replay
from benchlog.runs.events import Note, Point
from benchlog.runs.series import series_column, series_inputs, series_of
from benchlog.sweep.bench_file import Wiring
from benchlog.sweep.feasibility import check_plan_on_bench

from .simrig import parse, plan_text, record, setup_for

INPUTS = "[input]\nvoltages_v = [12.0, 4.0, 3.0, 2.6, 2.2]\n"
#: Inputs clear of the band Vth … Vth + Vf(body) where both states are self-consistent (the simulator's
#: thresholds are 2.0 V (pmos) and 1.8 V (nmos) ± 10 %, its body diodes drop about 0.8 V at 1 A).
CLEAR = {"pmos": (12.0, 4.0, 3.2, 1.7), "nmos": (12.0, 4.0, 3.2, 1.5)}
STEPS = "mode = 'linear'\nstart_a = 0.25\nstop_a = 1.0\ncount = 4"
LIMITS = "max_current_a = 1.2\nmax_drop_v = 1.2\nmax_power_w = 1.5\ncompliance_v = 15.0"


@pytest.mark.parametrize("kind", ["pmos", "nmos"])
def test_input_sweep_finds_the_body_diode_takeover(sim_bench, tmp_path, kind):
    running = sim_bench(kind, seed=5)
    inputs = CLEAR[kind]
    table = f"[input]\nvoltages_v = {list(inputs)}\n"
    plan = parse(plan_text(kind, steps=STEPS, limits=LIMITS, meter="range_v = 10\nnplc = 1",
                           element="operating_a = 1.0", extra=table))
    rec = record(plan, setup_for(running), tmp_path)
    assert rec.outcome == "complete" and len(rec.points) == len(inputs) * 4
    assert not running.bench.supply.output_on and not running.bench.load.input_on
    # every point carries its series; the series follow the plan's inputs in order
    assert [series_of(p.flags) for p in rec.points] == [k for k in range(len(inputs)) for _ in range(4)]
    starts = [e.message for e in read_events(rec.path) if isinstance(e, Note) and e.message.startswith("input series")]
    assert starts == [f"input series {k}: input {v:g} V" for k, v in enumerate(inputs)]
    # a replay yields the same points, each with its series (the UI and the analysis see one stream)
    assert [e for e in replay(rec.path) if isinstance(e, Point)] == rec.points
    # the supply held each input (its read-back of its own output voltage)
    for p in rec.points:
        assert p.supply_v == pytest.approx(inputs[series_of(p.flags)], abs=0.05)

    frame, meta = load(rec.path)
    result = analyse_input_sweep(frame, series_inputs(meta), series_column(frame), offset_v=meta.offset_v,
                                 operating_a=1.0)
    truth = running.truth()
    by_v = {s.input_v: s for s in result.series}
    # fully enhanced at 12 V: the fitted R is the simulator's R_DS(on) (channel tempco: 5 %)
    assert by_v[12.0].conduction == "channel"
    assert by_v[12.0].r_on_ohm == pytest.approx(truth["r_on_ohm"], rel=0.05)
    # R rises as |Vgs| falls towards the threshold
    rs = [by_v[v].r_on_ohm for v in inputs[:3]]
    assert rs == sorted(rs) and by_v[3.2].r_on_ohm > 1.3 * by_v[12.0].r_on_ohm
    # Kirchhoff against the truth: where the channel conducts |Vgs| = Vin − drop is above the threshold,
    # where the body diode does it is below it
    low = by_v[inputs[-1]]
    assert low.conduction == "body_diode" and low.vgs_v < truth["vgs_th_v"]
    assert all(by_v[v].vgs_v > truth["vgs_th_v"] for v in inputs[:3])
    # the body diode's drop at 1 A is the simulator's Shockley law, n·Vt·ln(I/Is + 1) + I·Rs (Sze, ch. 2),
    # at 25 °C or a little below it as the junction warms (−2 mV/K, the truth's tempco)
    bd = truth["body_diode"]
    vt = 1.380649e-23 * 298.15 / 1.602176634e-19
    shockley = bd["ideality"] * vt * np.log(1.0 / bd["i_s_a"] + 1) + bd["r_s_ohm"]
    assert shockley - 0.08 < low.drop_v < shockley + 0.01
    # the takeover lies between the two inputs that bracket it, the worst loss on the body diode
    assert result.takeover_v == pytest.approx(0.5 * (inputs[-1] + 3.2))
    assert result.takeover_u_v == pytest.approx(0.5 * (3.2 - inputs[-1]))
    assert result.worst.input_v == inputs[-1]


def test_input_sweep_needs_the_load_wiring(sim_bench):
    running = sim_bench("pmos", seed=5)
    plan = parse(plan_text("pmos", steps=STEPS, limits=LIMITS, extra=INPUTS, element='gate = "driven"'))
    setup = setup_for(running, wiring=Wiring(force="supply", current_from="supply"))
    with pytest.raises(BadInput, match=r"\[wiring\]\.force.*input"):
        check_plan_on_bench(plan, setup)


@pytest.mark.parametrize("table, where", [
    ("[input]\nvoltages_v = [12.0]\n", r"\[input\]\.voltages_v"),
    ("[input]\nvoltages_v = [12.0, -3.0]\n", r"voltages_v\[1\]"),
    ("[input]\nvoltages_v = [5.0, 5.0]\n", "repeats"),
    ("[input]\nvoltages_v = [5.0, 20.0]\n", r"voltages_v\[1\].*compliance"),
])
def test_bad_input_tables_are_one_line(sim_bench, table, where):
    running = sim_bench("pmos", seed=5)
    with pytest.raises(BadInput, match=where):
        plan = parse(plan_text("pmos", steps=STEPS, limits=LIMITS, extra=table))
        check_plan_on_bench(plan, setup_for(running))
