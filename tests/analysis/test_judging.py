"""The one judging path: Tj with its u and source, the limit at that Tj and gate drive, the budget's terms.

References are named beside each check: GUM (JCGM 100:2008), ILAC-G8:09/2019, numpy/scipy, hand arithmetic
from the formulas in `analysis.predict`'s docstring. Runs on the simulated bench go through real pyvisa-py.
"""

from __future__ import annotations

import math
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest

import benchlog
from benchlog.analysis.judging import (
    GATE_MATCH_FRACTION,
    TEMPERATURE_TERM,
    TRANSLATION_TERM,
    judge_run,
)
from benchlog.ambient import DEFAULT_AMBIENT_HALF_WIDTH_K
from benchlog.analysis.junction import JunctionTemperature, sweep_heating
from benchlog.analysis.fits import fit_resistive
from benchlog.specfiles import load_spec
from benchlog.analysis.uncertainty import Accuracy, MeasurementAccuracy
from benchlog.analysis.judging import check_run
from benchlog.runs.record import RunHeader, new_run_id
from benchlog.analysis.verdict import decide
from benchlog.badinput import BadInput
from benchlog.runs import load
from benchlog.sweep.bench_file import Wiring, parse_bench
from benchlog.sweep.plan import load_plan, parse_plan
from benchlog.sweep.session import run_sweep
from benchlog.cli.simbench import builtin_bench

from .monte_carlo import monte_carlo_k

DEMO = Path(benchlog.__file__).parent / "demo"
PFET = DEMO / "specs" / "demo-pfet-10m.toml"


def frame_and_meta(current, drop, *, ambient_c=25.0, gate="driven", gate_v=10.0, simulated=False,
                   ambient_u_c=None, supply_v=np.nan, operating_a=2.0, kind="pmos", wiring=None, accuracy=None):
    """Invented demo data handed to the analysis as a loaded run would be (dependency injection)."""
    n = len(current)
    frame = pd.DataFrame({"index": np.arange(n), "t_s": np.arange(n, dtype=float), "setpoint_a": current,
                          "current_a": current, "drop_v": drop, "supply_v": supply_v, "supply_mode": "CC",
                          "temperature_c": np.nan, "settle_reads": 1, "direction": "up", "flags": "",
                          "power_w": current * drop})
    element = {"id": "U1", "kind": kind, "ambient_c": ambient_c, "operating_a": operating_a}
    if kind == "pmos":
        element.update(gate=gate, gate_v=gate_v)
    if ambient_u_c is not None:
        element["ambient_u_c"] = ambient_u_c
    table = {"tool_version": "test", "started_utc": "2025-01-01T00:00:00Z", "run_id": new_run_id(),
             "element": element, "bench": {"simulated": simulated, "wiring": wiring or {}}}
    if accuracy is not None:
        table["accuracy"] = accuracy
    meta = SimpleNamespace(path="demo.run", header=RunHeader.from_table(table), offset_v=None,
                           outcome="complete", complete=True, finished=None, reverse=None)
    return frame, meta


def line(r_ohm, n=25, noise_v=5e-6, seed=1, top_a=3.0):
    rng = np.random.default_rng(seed)
    i = np.linspace(0.1, top_a, n)
    return i, r_ohm * i + rng.normal(0.0, noise_v, n)


# --------------------------------------------------------------------------- junction temperature
def test_heating_inside_a_sweep_is_found_and_the_fitted_value_stands_at_its_rise():
    # Invented demo data: R(T) = R0·(1 + α·θ·P) with P = I·V in the steady state (ΔT = θ·P, common practice).
    r0, alpha, theta = 0.010, 5e-3, 60.0
    i = np.linspace(0.2, 3.0, 40)
    v = r0 * i
    for _ in range(50):  # the steady state of V = R0·(1 + α·θ·I·V)·I, by fixed point
        v = r0 * (1 + alpha * theta * i * v) * i
    v = v + np.random.default_rng(3).normal(0.0, 2e-7, i.size)
    fit = fit_resistive(i, v)
    heating = sweep_heating(fit, lambda ii, vv: fit.params["r_on_ohm"] * alpha * ii, np.array([0.0, 1.0]),
                            fit.params["r_on_ohm"] * alpha)
    assert heating.significant
    # Reference: the least-squares line of the noise-free heated data (numpy.polyfit) against R0 gives the
    # rise the fitted slope stands at: (R_fit − R0)/(R0·α).
    slope = np.polyfit(i, r0 * (1 + alpha * theta * i * (v - 0)) * i, 1)[0]
    expected = (slope - r0) / (r0 * alpha)
    assert heating.rise_c == pytest.approx(expected, rel=0.05)
    assert heating.u_c < 0.1 * heating.rise_c


def no_zth(spec):
    from dataclasses import replace

    return replace(spec, thermal=replace(spec.thermal, zth_t_s=None, zth_k_per_w=None))


def test_pulse_heating_through_zth_matches_the_first_order_thermal_model_solved_by_scipy():
    # Reference: dT/dt = (P(t)·Rθ − T)/τ integrated by scipy.integrate.solve_ivp (a one-pole junction,
    # whose Zth(t) = Rθ·(1 − e^(−t/τ)), common practice); pulses on from t_{k−1} + off to t_k.
    from scipy.integrate import solve_ivp

    from benchlog.analysis.junction import rise_at_points

    r_th, tau, off = 50.0, 25.0, 0.05
    t = np.linspace(0.1, 1.9, 25)
    power = np.linspace(0.01, 2.0, 25)
    starts = np.concatenate(([t[0] - (t[1] - t[0]) + off], t[:-1] + off))

    def p_of(time):
        k = np.searchsorted(t, time)  # the pulse whose reading is next
        return power[k] if k < t.size and time >= starts[k] else 0.0

    sol = solve_ivp(lambda time, y: [(p_of(time) * r_th - y[0]) / tau], (starts[0], t[-1]), [0.0],
                    t_eval=t, max_step=0.002, rtol=1e-9, atol=1e-12)
    ours = rise_at_points(t, power, lambda lag: r_th * (1.0 - np.exp(-lag / tau)), off)
    assert ours == pytest.approx(sol.y[0], rel=2e-3, abs=1e-6)
    # shorter pulses (on 15 ms before each stamp) and the rise taken 5 ms before the stamp: the same ODE
    on, lag = 0.015, 0.005
    starts = t - on

    def p_short(time):
        k = np.searchsorted(t, time)
        return power[k] if k < t.size and time >= starts[k] else 0.0

    sol = solve_ivp(lambda time, y: [(p_short(time) * r_th - y[0]) / tau], (starts[0], t[-1]), [0.0],
                    t_eval=t - lag, max_step=0.001, rtol=1e-9, atol=1e-12)
    ours = rise_at_points(t, power, lambda s: r_th * (1.0 - np.exp(-s / tau)), off, lag_s=lag, on_s=on)
    assert ours == pytest.approx(sol.y[0], rel=2e-3, abs=1e-6)


def test_zth_from_the_spec_makes_tj_inferred_with_its_stated_u():
    i, v = line(0.010)
    j = judge_run(*frame_and_meta(i, v, ambient_u_c=0.0), load_spec(PFET))  # the demo spec has a Zth curve
    assert j.tj.source == "inferred" and j.tj.value_c > 25.0
    rise = j.tj.value_c - 25.0
    # u² = (zth_u_pct·rise)² + u(on-times)² (GUM 5.1.2); the demo spec states 3 %; without the key 20 %
    # (ZTH_RELATIVE_U, from memory). The on-time term is the same for both: it depends on the run alone.
    from dataclasses import replace

    spec = load_spec(PFET)
    assert spec.thermal.zth_u_pct == 3.0
    default = replace(spec, thermal=replace(spec.thermal, zth_u_pct=None))
    j20 = judge_run(*frame_and_meta(i, v, ambient_u_c=0.0), default)
    assert j20.tj.value_c == j.tj.value_c
    timing2 = j.tj.u_c ** 2 - (0.03 * rise) ** 2
    assert timing2 >= 0.0
    assert j20.tj.u_c ** 2 - (0.20 * rise) ** 2 == pytest.approx(timing2, rel=1e-6, abs=1e-15)
    assert "the spec's zth_u_pct" in j.tj.why and "default" in j20.tj.why


def test_tj_sources_and_their_uncertainty():
    i, v = line(0.010)
    # assumed, on a real bench without ambient_u_c: the stated default ±2 K, rectangular u = a/√3 (GUM 4.3.7)
    j = judge_run(*frame_and_meta(i, v), no_zth(load_spec(PFET)))
    assert j.tj.source == "assumed" and j.tj.value_c == 25.0
    assert j.tj.u_c >= DEFAULT_AMBIENT_HALF_WIDTH_K / math.sqrt(3.0)
    # the plan's ambient_u_c is used as given
    j2 = judge_run(*frame_and_meta(i, v, ambient_u_c=0.2), no_zth(load_spec(PFET)))
    assert 0.2 <= j2.tj.u_c < 0.3
    # recorded temperatures make the source "measured"
    frame, meta = frame_and_meta(i, v)
    frame["temperature_c"] = 31.0 + 0.1 * np.arange(i.size) / i.size
    j3 = judge_run(frame, meta, no_zth(load_spec(PFET)))
    # the junction sits above the measured case: Tj = Tc + P·RθJC in the steady state (JESD51's definition of
    # RθJC); a sweep's pulses reach between 0 and that, taken as rectangular (GUM 4.3.7): + P̄·RθJC/2, u P̄·RθJC/√12
    p_mean = float(np.mean(i * v))
    top = p_mean * 12.0  # the demo spec's rth_jc_k_per_w
    case_u = math.hypot(float(np.std(frame["temperature_c"], ddof=1)), 0.5)  # spread and the unstated probe's 0.5 K
    assert j3.tj.source == "measured"
    assert j3.tj.value_c == pytest.approx(31.05 + top / 2.0, abs=0.01)
    assert j3.tj.u_c == pytest.approx(math.hypot(case_u, top / math.sqrt(12.0)), rel=1e-6)
    assert "RθJC 12 K/W" in j3.tj.why
    # without RθJC, RθJA bounds the junction-case difference the same way; without either, none is added
    from dataclasses import replace

    spec = no_zth(load_spec(PFET))
    no_jc = replace(spec, thermal=replace(spec.thermal, rth_jc_k_per_w=None))
    j4 = judge_run(frame, meta, no_jc)
    assert j4.tj.value_c == pytest.approx(31.05 + p_mean * 62.5 / 2.0, abs=0.01) and "RθJA 62.5 K/W" in j4.tj.why
    neither = replace(spec, thermal=replace(spec.thermal, rth_jc_k_per_w=None, rth_ja_k_per_w=None))
    j5 = judge_run(frame, meta, neither)
    assert j5.tj.value_c == pytest.approx(31.05, abs=0.01) and "the case is taken as the junction" in j5.tj.why
    with pytest.raises(ValueError):
        JunctionTemperature(25.0, 1.0, "guessed", "")


def test_the_temperature_term_is_u_tj_times_the_specs_sensitivity():
    # GUM 5.1.3: u_i = |∂R/∂T|·u(T); ∂R/∂T from the spec's curve: between 25 and 75 °C the factor rises
    # 1.00 -> 1.25, i.e. 0.005/K at 25 °C (hand arithmetic from demo-pfet-10m.toml)
    i, v = line(0.010)
    j = judge_run(*frame_and_meta(i, v, ambient_u_c=1.0), no_zth(load_spec(PFET)))
    term = j.budget.component(TEMPERATURE_TERM)
    assert term.u == pytest.approx(j.value * 0.005 * j.tj.u_c, rel=1e-3)
    # the combined u is the root sum of squares of the terms (GUM 5.1.2)
    assert j.std_u == pytest.approx(math.sqrt(sum(c.u ** 2 for c in j.budget.components)), rel=1e-12)


# --------------------------------------------------------------------------- the limit at Tj and gate drive
def test_the_limit_is_the_maximum_at_tj_from_the_specs_curve():
    # Ambient 60 °C: the curve's factor is 1.0 + 0.25·35/50 = 1.175 (linear between 25 and 75 °C, hand
    # arithmetic), so the maximum 12.5 mΩ becomes 14.6875 mΩ; never "the larger of" two temperatures.
    i, v = line(0.012)
    j = judge_run(*frame_and_meta(i, v, ambient_c=60.0, ambient_u_c=0.5), no_zth(load_spec(PFET)))
    assert j.tj.value_c == pytest.approx(60.0, abs=0.05)
    assert j.limit == pytest.approx(0.0125 * (1.0 + 0.25 * (j.tj.value_c - 25.0) / 50.0), rel=1e-9)
    assert "Tj 60.0" in j.limit_at and "|Vgs| 10 V" in j.limit_at


def test_a_lower_gate_drive_translates_the_limit_within_the_specs_points():
    # Rf + K/(Vgs − Vth) through the spec's typical points 10 mΩ @ 10 V and 16.5 mΩ @ 4.5 V with Vth = 2 V
    # (predict docstring, square-law triode region, common practice); the maximum keeps that shape with
    # its own Vth 2.5 V. Hand arithmetic for |Vgs| = 7 V:
    vt = 2.0
    k = (0.0165 - 0.010) / (1 / (4.5 - vt) - 1 / (10.0 - vt))
    rf = 0.010 - k / (10.0 - vt)
    h = lambda v: rf + k / (v - 2.5)  # noqa: E731
    factor = h(7.0) / h(10.0)
    i, v = line(0.012)
    j = judge_run(*frame_and_meta(i, v, gate_v=7.0, ambient_u_c=0.5), no_zth(load_spec(PFET)))
    assert j.gate.vgs_v == 7.0 and j.gate.factor == pytest.approx(factor, rel=1e-9)
    assert j.limit == pytest.approx(0.0125 * factor, rel=1e-6)
    # the translation's uncertainty is in the comparison's budget: half the correction, rectangular (GUM 4.3.7)
    t = j.decision_budget.component(TRANSLATION_TERM)
    assert t.u == pytest.approx(j.value * abs(factor - 1) / 2 / math.sqrt(3), rel=1e-9)
    # GUM 5.1.2: the comparison's u adds the translation in quadrature; U = k_p·u of that budget, k_p checked
    # against a JCGM 101 Monte Carlo with numpy
    u_dec = math.hypot(j.std_u, t.u)
    assert j.decision_budget.u == pytest.approx(u_dec, rel=1e-9)
    k_p = monte_carlo_k([(c.distribution, c.u, c.dof) for c in j.decision_budget.components])
    assert j.verdict.k == j.decision_budget.k == pytest.approx(k_p, abs=4e-3)
    assert j.verdict.expanded_u == pytest.approx(j.verdict.k * u_dec, rel=1e-9)
    assert j.outcome == decide(j.value, j.verdict.expanded_u, j.limit).outcome  # ILAC-G8 on those numbers


@pytest.mark.parametrize("gate_v, why", [(12.0, "outside the spec's R_DS(on)(Vgs) points"),
                                         (3.5, "outside the spec's R_DS(on)(Vgs) points"),
                                         (None, "not known")])
def test_outside_the_specs_gate_points_a_verdict_cannot_pass(gate_v, why):
    i, v = line(0.006)  # far below any limit: the guard band alone would pass it
    j = judge_run(*frame_and_meta(i, v, gate_v=gate_v, ambient_u_c=0.5), load_spec(PFET))
    assert j.outcome == "conditional" and any(why in b for b in j.bars)
    assert "Would pass by the guard band" in j.verdict.caveat


def test_gate_to_the_return_takes_vgs_from_the_recorded_input_and_names_the_input_for_the_spec():
    i, v = line(0.010)
    frame, meta = frame_and_meta(i, v, gate="return", gate_v=None, supply_v=12.0, ambient_u_c=0.5)
    c = check_run(frame, meta, load_spec(PFET))
    j = c.judgement
    assert j.vgs_v == pytest.approx(12.0 - j.value * 2.0, rel=1e-9)  # |Vgs| = Vin − R·I
    assert j.gate.input_for_spec_v == pytest.approx(10.0 + j.value * 2.0, rel=1e-9)
    assert c.outcome == "conditional"
    # within GATE_MATCH_FRACTION of the spec's point it is like for like: no translation, no bar
    frame["supply_v"] = 10.0 + j.value * 2.0 + 0.5 * GATE_MATCH_FRACTION * 10.0
    c2 = check_run(frame, meta, load_spec(PFET))
    assert c2.judgement.gate.factor == 1.0 and not c2.judgement.bars and c2.outcome == "pass"


# --------------------------------------------------------------------------- budget terms
def test_shunt_tolerance_and_tempco_and_the_current_source_are_named_in_the_budget():
    acc = {"drop": {"reading_pct": 0.004, "range_pct": 0.0007, "range_v": 1.0},
           "current": {"reading_pct": 0.005, "range_pct": 0.001, "range_a": 10.0}}
    wiring = {"current_from": "shunt", "shunt_tolerance_pct": 0.5, "shunt_tempco_ppm_per_k": 50.0}
    frame, meta = frame_and_meta(*line(0.050), kind="resistor", wiring=wiring, accuracy=acc, ambient_u_c=0.5)
    from benchlog.analysis.fits import fit_run

    fit = fit_run(frame, meta, "resistive")
    b = fit.budgets["r_on_ohm"]
    r = fit.params["r_on_ohm"]
    # rectangular within the stated bounds: u = a/√3 (GUM 4.3.7); a gain error of I scales R alike
    assert b.component("shunt tolerance").u == pytest.approx(r * 0.005 / math.sqrt(3), rel=1e-12)
    assert b.component("shunt tempco").u == pytest.approx(r * 50e-6 * 10.0 / math.sqrt(3), rel=1e-12)
    assert b.component("shunt meter reading gain").u == pytest.approx(r * 0.005e-2 / math.sqrt(3), rel=1e-12)
    names = [c.name for c in b.components]
    assert "current meter gain" not in names and any("temperature" in n for n in names)
    for source, name in (("supply", "supply read-back gain"), ("load", "load read-back gain"),
                         ("meter", "series meter gain")):
        a = RunHeader.from_table({"tool_version": "test", "started_utc": "2025-01-01T00:00:00Z",
                                  "run_id": new_run_id(), "element": {"id": "R1"}, "accuracy": acc,
                                  "bench": {"wiring": {"current_from": source}}}).accuracy
        assert a.current_gain_terms()[0][0] == name


def test_shunt_keys_in_the_bench_file_are_checked():
    base = ('[supply]\nresource = "TCPIP0::127.0.0.1::5025::SOCKET"\nprofile = "sim-supply"\n'
            '[meter]\nresource = "TCPIP0::127.0.0.1::5027::SOCKET"\nprofile = "sim-meter"\n'
            '[current_meter]\nresource = "TCPIP0::127.0.0.1::5028::SOCKET"\nprofile = "sim-meter"\n')
    ok = parse_bench(base + '[wiring]\nforce = "supply"\ncurrent_from = "shunt"\nshunt_ohm = 0.01\n'
                     'shunt_tolerance_pct = 0.1\nshunt_tempco_ppm_per_k = 50\n')
    assert ok.to_dict()["wiring"]["shunt_tolerance_pct"] == 0.1
    with pytest.raises(BadInput, match="shunt_tolerance_pct"):
        parse_bench(base + '[wiring]\nforce = "supply"\ncurrent_from = "supply"\nshunt_tolerance_pct = 0.1\n')
    with pytest.raises(BadInput, match="shunt_tempco_ppm_per_k"):
        parse_bench(base + '[wiring]\nforce = "supply"\ncurrent_from = "shunt"\nshunt_ohm = 0.01\n'
                    'shunt_tempco_ppm_per_k = -5\n')


PLAN = """
[element]
id = "Q1"
kind = "pmos"
{extra}
[steps]
mode = "linear"
start_a = 0.1
stop_a = 1.0
count = 5
[limits]
max_current_a = 1.5
compliance_v = 15.0
"""


def test_a_plan_states_gate_v_for_a_driven_gate_only():
    plan = parse_plan(PLAN.format(extra='gate = "driven"\ngate_v = 8.0\nambient_u_c = 0.3'), "p.toml")
    assert plan.element.gate_v == 8.0 and plan.element.ambient_u_c == 0.3
    assert plan.to_dict()["element"]["gate_v"] == 8.0
    with pytest.raises(BadInput, match="gate_v"):
        parse_plan(PLAN.format(extra='gate = "return"\ngate_v = 8.0'), "p.toml")
    with pytest.raises(BadInput, match="gate_v"):
        parse_plan(PLAN.format(extra='gate = "driven"\ngate_v = -1.0'), "p.toml")
    with pytest.raises(BadInput, match="gate_v"):
        parse_plan(PLAN.format(extra='gate = "driven"\ngate_v = 12.0\nzener_v = 10.0'), "p.toml")


# --------------------------------------------------------------------------- parts above their limit never pass
def _sweep(tmp_path, r_on_ohm, ambient_c, seed, input_v=10.02):
    """The demo lot plan on the simulated bench, the part's R_DS(on) at 25 °C set, the input set."""
    text = (DEMO / "plans" / "pmos-prototype.toml").read_text().replace("ambient_c = 25.0", f"ambient_c = {ambient_c}")
    path = tmp_path / f"plan-{ambient_c}.toml"
    path.write_text(text)
    plan = load_plan(path)
    setup, running = builtin_bench(plan.element, seed, wiring=Wiring(force="load", current_from="load",
                                                                     input_v=input_v),
                                   element_params={"r_on_ohm": r_on_ohm})
    try:
        result = run_sweep(plan, setup, tmp_path / f"run-{ambient_c}-{r_on_ohm}")
    finally:
        running.stop()
    assert result.outcome == "complete"
    return result.run_file


@pytest.mark.parametrize("ambient_c", [25.0, 60.0])
def test_a_part_above_its_limit_at_the_tests_conditions_never_passes(tmp_path, ambient_c):
    # The simulated channel is 0.5 %/K like the spec near 25 °C; at 60 °C the spec's curve gives 1.175 and the
    # sim 1 + 0.005·35 = 1.175 (hand arithmetic): 12.8 mΩ at 25 °C is 2.4 % above the 12.5 mΩ maximum at
    # either temperature. Judged like for like (|Vgs| ≈ 10 V), it fails by the guard band (ILAC-G8 x − U > L);
    # `check` and `lot` agree on it.
    from benchlog.report.lot_runs import lot_from_runs

    spec = load_spec(PFET)
    run = _sweep(tmp_path, 0.0128, ambient_c, seed=5)
    c = check_run(*load(run), spec)
    j = c.judgement
    assert abs(j.tj.value_c - ambient_c) < 1.0 and not j.bars
    assert j.value > j.limit and c.outcome == "fail"
    lot = lot_from_runs([run], spec, workers=1)
    assert lot.parts[0].outcome == "fail" and lot.parts[0].value == pytest.approx(j.value, rel=1e-12)
    # a part at 11.5 mΩ passes at the same conditions (the limit is not simply unreachable)
    good = check_run(*load(_sweep(tmp_path, 0.0115, ambient_c, seed=5)), spec)
    assert good.outcome == "pass"


def test_a_recorded_case_probe_is_the_measured_junction_temperature_with_its_own_accuracy():
    # The bench's [sensor] probe: Tj is the mean of the recorded case temperatures; its u combines
    # their sample spread (ddof = 1) with the probe's stated ±a read as rectangular, a/√3 (GUM 4.3.7).
    from benchlog.analysis.junction import DEFAULT_SENSOR_U_C, junction_temperature

    temps = np.array([30.0, 30.4, np.nan, 30.2])
    tj = junction_temperature(25.0, 0.0, "", None, temps, sensor_u_c=0.6 / math.sqrt(3.0),
                              sensor_why="thermocouple probe on the case")
    spread = float(np.std([30.0, 30.4, 30.2], ddof=1))
    assert tj.source == "measured" and tj.value_c == pytest.approx(30.2)
    assert tj.u_c == pytest.approx(math.hypot(spread, 0.6 / math.sqrt(3.0)))
    assert "probe on the case" in tj.why and "stated accuracy" in tj.why
    # without a stated accuracy the default for an unstated probe is used, and the text says so
    bare = junction_temperature(25.0, 0.0, "", None, temps)
    assert bare.u_c == pytest.approx(math.hypot(spread, DEFAULT_SENSOR_U_C)) and "default" in bare.why


def test_check_judges_a_run_with_a_case_probe_at_the_probe_temperature(tmp_path):
    # End to end on the simulated bench (real pyvisa-py): a probe on the case fills temperature_c
    # and check takes Tj from it ("measured"), with the probe's 0.6 °C stated accuracy in u.
    from benchlog.cli.simbench import sweep_on_builtin_bench
    from benchlog.sweep.plan import load_plan

    demo = Path(benchlog.__file__).parent / "demo"
    plan = load_plan(demo / "plans" / "rectifier-prototype.toml")
    result = sweep_on_builtin_bench(plan, tmp_path, seed=3, sim_options={"case_sensor": True})
    frame, meta = load(result.run_file)
    c = check_run(frame, meta, load_spec(demo / "specs" / "demo-rect-3a.toml"))
    temps = frame["temperature_c"].to_numpy(dtype=float)
    assert c.judgement.tj.source == "measured"
    # Tj = Tc + the junction's rise above the case (JESD51's RθJC): each pulse lifts it by at most
    # P·min(RθJC, Zth(pulse length)) (the case lags the junction), taken as half that, rectangular (GUM 4.3.7)
    from benchlog.analysis.junction import zth_at

    spec = load_spec(demo / "specs" / "demo-rect-3a.toml")
    t = frame["t_s"].to_numpy(dtype=float)
    on = np.empty_like(t)
    on[1:] = np.diff(t) - plan.cooldown.off_s
    on[0] = on[1]
    zth = zth_at(spec.thermal.zth_t_s, spec.thermal.zth_k_per_w, spec.thermal.rth_ja_k_per_w, on)
    power = (frame["current_a"] * frame["drop_v"]).to_numpy(dtype=float)
    read = np.isfinite(temps)
    top = float(np.mean(power[read] * np.minimum(spec.thermal.rth_jc_k_per_w, zth[read])))
    assert 0.0 < top < 0.2  # 60 ms pulses: far below the steady P·RθJC
    assert c.judgement.tj.value_c == pytest.approx(float(np.nanmean(temps)) + top / 2.0, rel=1e-9)
    assert c.judgement.tj.u_c >= math.hypot(0.6 / math.sqrt(3.0), top / math.sqrt(12.0))
    assert meta.header.temperature.accuracy_c == 0.6
