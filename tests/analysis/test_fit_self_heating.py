"""Self-heating on synthetic up/down sweeps with a known thermal model, and not on a clean one."""

import numpy as np
import pandas as pd
import pytest

from benchlog.analysis.fits import detect_self_heating, fit_diode, fit_resistive, shockley_drop_v

R25 = 0.026  # Ω at 25 °C (invented part)
ALPHA_R = 0.004  # 1/K, R_DS(on) tempco: common practice for silicon MOSFETs ≈ +0.4 %/K (from memory)
THETA = 40.0  # K/W, junction to ambient (invented)


def updown_frame(i_up, drop_of, tau_steps=None):
    """Up-then-down sweep with a first-order thermal lag: ΔT relaxes to θ·P by 1 − e^(−1/τ) per step."""
    currents = np.concatenate([i_up, i_up[::-1]])
    direction = ["up"] * i_up.size + ["down"] * i_up.size
    rise = 0.0
    drops = []
    for current in currents:
        v = drop_of(current, rise)
        target = THETA * current * v
        rise = target if tau_steps is None else rise + (target - rise) * (1 - np.exp(-1.0 / tau_steps))
        drops.append(drop_of(current, rise))
    return pd.DataFrame(
        {"index": np.arange(currents.size), "setpoint_a": currents, "current_a": currents,
         "drop_v": np.array(drops), "direction": direction}
    )


def resistor(current, rise):
    return R25 * (1 + ALPHA_R * rise) * current


def add_noise(frame, sigma, seed):
    out = frame.copy()
    out["drop_v"] = out["drop_v"] + np.random.default_rng(seed).normal(0, sigma, len(out))
    return out


def test_clean_updown_sweep_shows_no_heating():
    frame = updown_frame(np.linspace(0.25, 5, 20), lambda i, rise: R25 * i)
    frame = add_noise(frame, 2e-5, 1)
    fit = fit_resistive(frame.current_a, frame.drop_v, point_index=frame["index"])
    result = detect_self_heating(frame, fit, tempco_per_k=ALPHA_R)
    assert not result.detected, result.reason
    assert result.updown_p is not None and result.updown_p > 0.001
    assert result.trend_p is not None and result.trend_p > 0.001
    assert result.delta_t_c is None


def test_steady_heating_is_seen_as_a_trend_and_its_rise_recovered():
    # ΔT = θ·P at each point (fast thermal path). At 5 A, P ≈ 0.65 W ... 0.73 W -> rise ≈ 29 K.
    frame = add_noise(updown_frame(np.linspace(0.25, 5, 20), resistor), 2e-5, 2)
    true_rise = THETA * float((frame.current_a * frame.drop_v).max())
    fit = fit_resistive(frame.current_a, frame.drop_v, point_index=frame["index"])
    result = detect_self_heating(frame, fit, tempco_per_k=ALPHA_R)
    assert result.detected and "trend" in result.reason
    assert result.trend_p < 1e-6
    # ΔV = R₀·α·θ·P·I holds exactly here, so only the noise limits the estimate: within 3 %
    assert result.delta_t_c == pytest.approx(true_rise, rel=0.03)


def test_lagging_heating_splits_up_and_down():
    # slow thermal path: the down pass is warmer at the same current (hysteresis)
    frame = add_noise(updown_frame(np.linspace(0.25, 5, 20), resistor, tau_steps=4.0), 2e-5, 3)
    fit = fit_resistive(frame.current_a, frame.drop_v, point_index=frame["index"])
    result = detect_self_heating(frame, fit, tempco_per_k=ALPHA_R)
    assert result.detected and "hysteresis: " in result.reason and "hysteresis of the sign opposite" not in result.reason
    assert result.updown_shift_v > 0  # R rises with T, so the warmer down pass drops more
    assert result.updown_delta_t_c > 0
    # without a tempco it is still detected, but no rise is claimed
    plain = detect_self_heating(frame, fit)
    assert plain.detected and plain.delta_t_c is None and plain.updown_delta_t_c is None


def test_diode_heating_lowers_the_down_pass():
    tc = -2e-3  # V/K, Vf tempco of a silicon junction ≈ −2 mV/K (common practice)

    def diode(current, rise):
        return float(shockley_drop_v(current, 1.6, 1e-9, 0.02, 25.0)) + tc * rise

    frame = add_noise(updown_frame(np.linspace(0.1, 3, 20), diode, tau_steps=4.0), 2e-4, 4)
    fit = fit_diode(frame.current_a, frame.drop_v, temperature_c=25.0, point_index=frame["index"])
    result = detect_self_heating(frame, fit, tempco_per_k=tc)
    assert result.detected and "hysteresis: " in result.reason
    assert "hysteresis of the sign opposite" not in result.reason  # a lower down pass is a diode's heating, not the other sign
    assert result.updown_shift_v < 0 and result.updown_delta_t_c > 0
    clean = add_noise(updown_frame(np.linspace(0.1, 3, 20), lambda i, r: diode(i, 0.0)), 2e-4, 5)
    fit_c = fit_diode(clean.current_a, clean.drop_v, temperature_c=25.0, point_index=clean["index"])
    assert not detect_self_heating(clean, fit_c, tempco_per_k=tc).detected


def test_without_direction_column_only_the_trend_is_tested():
    frame = add_noise(updown_frame(np.linspace(0.25, 5, 20), resistor), 2e-5, 6).drop(columns="direction")
    fit = fit_resistive(frame.current_a, frame.drop_v, point_index=frame["index"])
    result = detect_self_heating(frame, fit, tempco_per_k=ALPHA_R)
    assert result.updown_p is None and "not tested" in result.reason
    assert result.detected


def test_hysteresis_of_the_other_sign_is_still_reported():
    # a warm diode fitted with a straight line: the down pass is lower, not higher as a resistance's
    # would be; the disagreement is beyond the scatter, so it is reported, with the sign named
    tc = -2e-3

    def diode(current, rise):
        return float(shockley_drop_v(current, 1.6, 1e-9, 0.02, 25.0)) + tc * rise

    frame = add_noise(updown_frame(np.linspace(0.1, 3, 20), diode, tau_steps=4.0), 2e-4, 7)
    fit = fit_resistive(frame.current_a, frame.drop_v, point_index=frame["index"])
    result = detect_self_heating(frame, fit)
    assert result.detected and "opposite" in result.reason and result.updown_shift_v < 0
