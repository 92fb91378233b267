"""Heat-soak analysis: the pieces against numpy/scipy and hand formulas, the whole against the simulator's truth.

The end-to-end soaks run on the simulated bench through real pyvisa-py sockets with a
clock shared by runner and sim (tests/analysis/soakbench.py), so a minute of thermal
time takes a few seconds.
"""

import json
import math
import subprocess
import sys

import numpy as np
import pytest

from benchlog import runs
from benchlog.analysis import thermal_response as tr
from benchlog.runs import events
from benchlog.specfiles import load_spec

from .soakbench import measure_calibration, record_soak, soak_plan

ROOT = __import__("pathlib").Path(__file__).resolve().parents[2]
PFET_SPEC = str(ROOT / "benchlog" / "demo" / "specs" / "demo-pfet-10m.toml")


def test_the_run_record_words_are_the_same_in_both_layers():
    assert (tr.FLAG_SOAK, tr.FLAG_COOL) == (events.FLAG_SOAK, events.FLAG_COOL)
    assert (tr.SOAK_STARTED, tr.COOL_STARTED) == (events.SOAK_STARTED, events.COOL_STARTED)


# -- pieces -------------------------------------------------------------------------------------
def test_aicc_is_the_least_squares_form():
    # Burnham & Anderson (2002) eq. 2.14 with AIC = n ln(RSS/n) + 2k: hand arithmetic
    n, k, rss = 50, 4, 0.8
    assert tr.aicc(rss, n, k) == pytest.approx(n * math.log(rss / n) + 2 * k + 2 * k * (k + 1) / (n - k - 1))
    assert tr.aicc(rss, 5, 4) == math.inf


def test_fit_response_recovers_a_two_pole_foster_sum():
    # data made by numpy from ΔT = P·Σ Rᵢ(1 − e^(−t/τᵢ)) (the Foster step response, common practice)
    t = np.arange(0.25, 60.0, 0.25)
    p = np.full(t.size, 0.3)
    truth = ((50.0, 12.0), (8.0, 0.9))
    y = sum(0.3 * r * -np.expm1(-t / tau) for r, tau in truth)
    rng = np.random.default_rng(4)
    y = y + rng.normal(0, 0.02, t.size)
    steps = tr.power_steps(t, p)
    two = tr.fit_response(t, y, *steps, poles=2, guess=[40, 10, 5, 1])
    one = tr.fit_response(t, y, *steps, poles=1)
    assert two.total_k_per_w == pytest.approx(58.0, rel=0.01)
    assert two.tau_s[0] == pytest.approx(12.0, rel=0.02) and two.tau_s[1] == pytest.approx(0.9, rel=0.1)
    assert two.aicc < one.aicc  # AICc prefers the model the data were made with
    # the covariance is the Gauss–Newton one: the residual scatter recovers the noise σ
    assert math.sqrt(two.rss / (t.size - 4)) == pytest.approx(0.02, rel=0.15)


def test_power_steps_superpose_to_the_measured_power():
    t = np.array([0.1, 0.2, 0.3, 0.4])
    p = np.array([1.0, 1.1, 1.15, 1.2])
    starts, steps = tr.power_steps(t, p)
    assert starts.tolist() == [0.0, 0.1, 0.2, 0.3]
    assert np.cumsum(steps) == pytest.approx(p)  # each step adds the change, the sum is the power now


def test_calibration_slope_and_relative_coefficient_against_numpy_polyfit():
    temps = [25.0, 50.0, 75.0, 100.0]
    r = [0.0100, 0.01126, 0.01249, 0.01377]
    sense = 0.5
    drops = [x * sense for x in r]
    got = tr.tempco_from_calibration(temps, drops, sense, True, 25.0)
    (b, a), cov = np.polyfit(temps, r, 1, cov=True)  # numpy reference
    assert got.value == pytest.approx(b / (a + b * 25.0), rel=1e-12)
    # GUM 5.1.2 by hand: α = b/(a + 25 b), sensitivities a/r², −b/r²
    r25 = a + 25 * b
    g = np.array([a / r25**2, -b / r25**2])
    assert got.u == pytest.approx(math.sqrt(g @ cov @ g), rel=1e-9)
    assert got.source == "calibration" and got.relative
    junction = tr.tempco_from_calibration([25.0, 85.0], [0.60, 0.48], 0.01, False, 25.0)
    assert junction.value == pytest.approx(-0.002, rel=1e-12)  # (0.48 − 0.60)/(85 − 25) V/K: hand
    with pytest.raises(tr.SoakError):
        tr.tempco_from_calibration([25.0, 25.0], [0.6, 0.6], 0.01, False, 25.0)


def test_spec_curve_tempco_and_its_assumed_bound():
    spec = load_spec(PFET_SPEC)
    got = tr.tempco_from_spec(spec, True, 25.0)
    # the demo spec's curve is 1.00 at 25 °C and 1.25 at 75 °C: linear between, 0.25/50 per K (hand)
    assert got.value == pytest.approx(0.005, rel=1e-12)
    assert got.u == pytest.approx(0.005 * 0.10 / math.sqrt(3), rel=1e-12)  # rectangular, GUM 4.3.7


def test_sqrt_t_extrapolation_is_exact_on_sqrt_t_data():
    # y = y0 + c·√t: the early-time law of a heated semi-infinite body (Carslaw & Jaeger; common practice)
    t = np.array([0.02, 0.05, 0.1, 0.2, 0.4])
    y0, u, model = tr.sqrt_t_extrapolation(t, 0.05 + 0.001 * np.sqrt(t), 5)
    assert y0 == pytest.approx(0.05, abs=1e-12) and u < 1e-12
    assert model < 0  # a straight line in t through √t-shaped data lands higher at t = 0


# -- against the simulator's truth -----------------------------------------------------------------
@pytest.fixture(scope="module")
def pmos_soak(tmp_path_factory):
    path, truth = record_soak(tmp_path_factory.mktemp("soak"), soak_plan(interval_s=0.25, cool_s=10.0))
    return path, truth


def test_soak_recovers_the_simulated_rth_and_dominant_tau(pmos_soak):
    path, truth = pmos_soak
    frame, meta = runs.load(path)
    result = tr.analyse_soak(frame, meta, load_spec(PFET_SPEC))
    # the goal: Rθ within 10 %, the dominant τ within 20 % of the truth
    assert result.rth_k_per_w == pytest.approx(truth["rth_ja_k_per_w"], rel=0.10)
    assert result.tau_s[0] == pytest.approx(truth["tau_s"][0], rel=0.20)
    # and the truth lies within the stated expanded uncertainty (k = 2)
    assert abs(result.rth_k_per_w - truth["rth_ja_k_per_w"]) <= 2 * result.rth_u_k_per_w
    # JESD51-2: Tj = Ta + P·RθJA at steady state, from the fitted RθJA and the last reading's power
    assert result.tj_steady_c == pytest.approx(25.0 + result.power_w * result.rth_k_per_w, rel=1e-12)
    assert result.tj_margin_c == pytest.approx(150.0 - result.tj_steady_c)
    assert result.tempco.source == "spec"
    assert result.first_reading_s == pytest.approx(0.25)
    assert "√t" in result.dc_limit_text() and "JESD51" in result.spec_text()
    # without a calibration at the sense current the cooling is not read as ΔTj, and the result says so
    assert result.cool_delta_tj_k is None
    assert any("calibration at the sense current" in n for n in result.notes)


def test_the_record_marks_soak_points_and_the_sweep_fit_leaves_them_out(pmos_soak):
    path, _ = pmos_soak
    frame, meta = runs.load(path)
    flags = frame["flags"].to_numpy().astype(str)
    assert (flags == "soak").sum() == 240 and (flags == "cool").sum() == 40
    phases = [n.message.split(":")[0] for n in meta.notes if n.kind == "info" and "started:" in n.message]
    assert phases == ["soak started", "cooling started"]
    from benchlog.analysis.fits import fit_run

    fit = fit_run(frame, meta, "resistive")
    assert fit.points == 5  # the five sweep points only
    assert any("heat-soak" in n for n in fit.notes)
    assert meta.header.plan.soak["current_a"] == 5.0
    assert meta.header.bench.table["sim"]["thermal_time_scale"] == 1.0


def test_soak_with_an_entered_calibration_uses_it(tmp_path):
    # the calibration measured as a lab would: the drop at 1 A with the whole bench at 25, 55 and 85 °C
    temps = (25.0, 55.0, 85.0)
    drops = measure_calibration(tmp_path, temps, 1.0)
    extra = f"sense_a = 1.0\ncalibration_c = {list(temps)}\ncalibration_v = {list(drops)}"
    path, truth = record_soak(tmp_path, soak_plan(interval_s=0.5, cool_s=20.0, extra=extra))
    frame, meta = runs.load(path)
    result = tr.analyse_soak(frame, meta)
    assert result.tempco.source == "calibration"
    # the sim's R_DS(on) rises by its tempco_per_k relative to 25 °C (sim/elements.py): α at 25 °C
    assert result.tempco.value == pytest.approx(truth["tempco_per_k"], rel=0.05)
    assert result.rth_k_per_w == pytest.approx(truth["rth_ja_k_per_w"], rel=0.10)
    # the cooling, read at the sense current and never fitted, follows the fitted response's prediction
    # (superposition of the power steps, common practice): a held-out check of the fit
    predicted = result.cooling_prediction_k()
    assert result.cool_delta_tj_k[-1] < 0.6 * result.delta_tj_k[-1]
    assert np.abs(result.cool_delta_tj_k - predicted).max() < 0.10 * result.delta_tj_k[-1]


@pytest.mark.parametrize("params", [
    {"rth_ja_k_per_w": 40.0, "cth_j_per_k": 0.08, "rth_jc_k_per_w": 8.0, "cth_case_j_per_k": 0.2},
    {"rth_ja_k_per_w": 90.0, "cth_j_per_k": 0.05, "rth_jc_k_per_w": 20.0, "cth_case_j_per_k": 0.08},
])
def test_held_out_thermal_constants_are_followed(tmp_path, params):
    # thermal constants the analysis was never tuned on, set by the sim's config
    path, truth = record_soak(tmp_path, soak_plan(duration_s=80.0, interval_s=0.5), element_params=params)
    assert truth["rth_ja_k_per_w"] == params["rth_ja_k_per_w"]
    frame, meta = runs.load(path)
    result = tr.analyse_soak(frame, meta, load_spec(PFET_SPEC))
    assert result.rth_k_per_w == pytest.approx(truth["rth_ja_k_per_w"], rel=0.10)
    assert result.tau_s[0] == pytest.approx(truth["tau_s"][0], rel=0.20)


def test_thermal_time_scale_is_followed(tmp_path):
    # a twentieth of the thermal time and a plan twenty times shorter: the same Rθ, τ twenty times smaller
    path, truth = record_soak(tmp_path, soak_plan(duration_s=3.0, interval_s=0.0125), thermal_time_scale=0.05)
    frame, meta = runs.load(path)
    result = tr.analyse_soak(frame, meta, load_spec(PFET_SPEC))
    assert meta.header.bench.table["sim"]["thermal_time_scale"] == 0.05
    assert result.rth_k_per_w == pytest.approx(truth["rth_ja_k_per_w"], rel=0.10)
    assert result.tau_s[0] == pytest.approx(truth["tau_s"][0], rel=0.20)
    assert truth["tau_s"][0] < 1.0


def test_fit_cli_gives_the_soak_in_json(pmos_soak):
    path, truth = pmos_soak
    out = subprocess.run([sys.executable, "-m", "benchlog", "fit", str(path), "--json", "--spec", PFET_SPEC],
                         capture_output=True, text=True, check=True)
    soak = json.loads(out.stdout)["soak"]
    assert set(soak) >= {"rth_k_per_w", "rth_u_k_per_w", "tau_s", "tau_u_s", "tj_steady_c", "tj_steady_u_c"}
    assert soak["rth_k_per_w"] == pytest.approx(truth["rth_ja_k_per_w"], rel=0.10)
    text = subprocess.run([sys.executable, "-m", "benchlog", "fit", str(path), "--spec", PFET_SPEC],
                          capture_output=True, text=True, check=True).stdout
    assert "RθJA on this board" in text and "√t" in text


def test_check_gives_the_sample_soak_beside_its_verdict():
    # the committed sample: seed 8 of the simulated P-MOSFET (sample_runs/README.md)
    from benchlog.sim.bench import SimBench
    from benchlog.sim.config import SimConfig

    out = subprocess.run([sys.executable, "-m", "benchlog", "check", str(ROOT / "sample_runs" / "pmos-heat-soak.run"), "--spec",
                          PFET_SPEC, "--json"], capture_output=True, text=True)
    assert out.returncode in (0, 1, 3), out.stderr
    entry = json.loads(out.stdout)
    truth = SimBench(SimConfig(element="pmos", seed=8)).truth()
    assert entry["verdict"] in ("pass", "fail", "conditional")
    assert entry["soak"]["rth_k_per_w"] == pytest.approx(truth["rth_ja_k_per_w"], rel=0.10)
    assert entry["soak"]["tau_s"][0] == pytest.approx(truth["tau_s"][0], rel=0.20)
    assert entry["soak"]["tj_margin_c"] == pytest.approx(150.0 - entry["soak"]["tj_steady_c"])


def test_a_soak_whose_junction_settled_before_the_first_reading_is_refused_plainly(tmp_path):
    # a two-hundredth of the thermal time (τ about 60 ms) but a 0.25 s interval: flat readings, nothing to fit
    path, _ = record_soak(tmp_path, soak_plan(duration_s=10.0, interval_s=0.25), thermal_time_scale=0.005)
    frame, meta = runs.load(path)
    with pytest.raises(tr.SoakError, match="did not drift measurably"):
        tr.analyse_soak(frame, meta, load_spec(PFET_SPEC))
    out = subprocess.run([sys.executable, "-m", "benchlog", "fit", str(path), "--json"], capture_output=True,
                         text=True, check=True)
    assert "did not drift measurably" in json.loads(out.stdout)["soak"]["error"]
