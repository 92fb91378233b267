"""Loss prediction from specs: facts of the trade, the diode law, R_DS(on) with Tj and Vgs, conduction modes."""

import math

import pytest
from scipy import constants

from benchlog.analysis.predict import channel_model, predict, reverse_leakage

from .spec_texts import PMOS, RECT, SCHOTTKY, spec


def test_trade_facts_12v_2a():
    # Common practice: at 2 A a rectifier at 0.85 V dissipates 1.7 W, a Schottky at 0.55 V
    # 1.1 W, a P-MOSFET of 26 mΩ 0.104 W, about 17 times less than the rectifier.
    rect = predict(spec(RECT), 2.0, vin_v=12.0)
    sch = predict(spec(SCHOTTKY), 2.0, vin_v=12.0)
    mos = predict(spec(PMOS), 2.0)  # gate driven at the rated 10 V
    assert rect.loss_w == pytest.approx(1.7, rel=1e-12)
    assert sch.loss_w == pytest.approx(1.1, rel=1e-12)
    assert mos.loss_w == pytest.approx(0.104, rel=1e-6)
    assert mos.conduction == "channel"
    assert 15.0 < rect.loss_w / mos.loss_w < 18.0


def test_diode_law_decade_slope():
    # Shockley law: ΔVf = n·(kT/q)·ln(I2/I1); for n = 1 at 25 °C that is 59.2 mV per decade
    # (textbook value, Sze). Constants from scipy.constants (CODATA), not our code.
    d = spec(SCHOTTKY + "ideality = 1.0\nvf_tempco_v_per_k = 0.0\n")
    v1 = predict(d, 0.2).drop_v
    v2 = predict(d, 2.0).drop_v
    vt = constants.k * 298.15 / constants.e
    assert v2 - v1 == pytest.approx(vt * math.log(10), rel=1e-9)
    assert v2 - v1 == pytest.approx(0.05916, abs=2e-5)


def test_diode_series_resistance_and_tempco_terms():
    # V = V0 + nVt ln(I/I0) + Rs(I − I0) + c(T − T0) at the datasheet point's current.
    d = spec(RECT + "ideality = 1.5\nrs_ohm = 0.05\nvf_tempco_v_per_k = -0.002\n")
    p = predict(d, 3.0, ambient_c=75.0)  # no Rθ: Tj = 75 °C
    vt = constants.k * (75 + 273.15) / constants.e
    assert p.drop_v == pytest.approx(0.85 + 1.5 * vt * math.log(1.5) + 0.05 * 1.0 - 0.002 * 50, rel=1e-12)


def test_default_ideality_is_stated():
    p = predict(spec(RECT), 1.0)
    assert any("ideality n = 2" in n for n in p.notes)


def test_max_variant_uses_vf_max():
    p = predict(spec(RECT + "vf_max_v = 1.0\n"), 2.0)
    assert p.maximum.loss_w == pytest.approx(2.0) and p.limit is p.maximum
    assert predict(spec(RECT), 2.0).maximum is None


def test_rds_on_temperature_table_and_tempco():
    # Linear interpolation in the normalised curve: at 87.5 °C, halfway 25..150 between 1.0 and 1.6 -> 1.3.
    m = spec(PMOS + "rds_on_tj_c = [25.0, 150.0]\nrds_on_factor = [1.0, 1.6]\n")
    p = predict(m, 2.0, ambient_c=87.5)
    assert p.typical.resistance_ohm == pytest.approx(0.026 * 1.3, rel=1e-9)
    # The loss is I²R; the hot body diode in parallel takes ~1e-6 of the current.
    assert p.loss_w == pytest.approx(4 * 0.026 * 1.3, rel=1e-5)
    t = predict(spec(PMOS + "rds_on_tempco_per_k = 0.004\n"), 1.0, ambient_c=75.0)
    assert t.typical.resistance_ohm == pytest.approx(0.026 * 1.2, rel=1e-9)


def test_two_rds_on_points_are_both_reproduced():
    m = spec(PMOS + "rds_on_2_ohm = 0.040\nrds_on_2_vgs_v = 4.5\n").part
    ch = channel_model(m, "typical", [])
    assert ch.rds_on_ohm(10.0, 25.0) == pytest.approx(0.026, rel=1e-12)
    assert ch.rds_on_ohm(4.5, 25.0) == pytest.approx(0.040, rel=1e-12)
    assert ch.rds_on_ohm(2.0, 25.0) == math.inf  # at threshold the channel is off


def test_gate_drive_from_input_and_zener_clamp():
    m = spec(PMOS + "rds_on_2_ohm = 0.040\nrds_on_2_vgs_v = 4.5\n")
    p12 = predict(m, 2.0, vin_v=12.0)
    assert p12.vgs_v == pytest.approx(12.0 - p12.drop_v, abs=1e-9)  # |Vgs| = Vin − drop, gate at ground
    p36 = predict(m, 2.0, vin_v=36.0, zener_v=12.0)
    assert p36.vgs_v == pytest.approx(12.0)  # the clamp holds the gate at Vz
    assert p36.drop_v == pytest.approx(p12.drop_v, rel=0.02)


def test_body_diode_conducts_below_threshold():
    m = spec(PMOS + "body_ideality = 1.5\n")
    p = predict(m, 2.0, vin_v=2.5)  # 2.5 V minus ~0.8 V leaves 1.7 V on the gate < 2.0 V threshold
    assert p.conduction == "body_diode"
    vt = constants.k * 298.15 / constants.e
    assert p.drop_v == pytest.approx(0.8 + 1.5 * vt * math.log(2.0), rel=1e-9)  # body-diode law
    assert p.vgs_v < 2.0
    full = predict(m, 2.0, vin_v=12.0)
    assert full.conduction == "channel" and full.loss_w < p.loss_w / 10


def test_leakage_doubles_every_10_k():
    # Common practice: Schottky leakage doubles about every 10 K.
    d = spec(SCHOTTKY + "ir_max_a = 50e-6\nir_at_v = 40.0\nvr_max_v = 40.0\n")
    assert reverse_leakage(d, 14.0, 25.0).current_a == pytest.approx(50e-6)
    assert reverse_leakage(d, 14.0, 45.0).current_a == pytest.approx(200e-6)
    assert "breakdown" in reverse_leakage(d, 50.0, 25.0).note


@pytest.mark.parametrize("bad", [-1.0, math.nan, "2"])
def test_bad_current_is_bad_input(bad):
    from benchlog.badinput import BadInput

    with pytest.raises(BadInput):
        predict(spec(RECT), bad)
