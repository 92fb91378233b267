"""What the design review adds at the edges of the input range: clamp drain, reverse conduction, takeover, guaranteed drive.

Each figure is checked against a hand calculation written out beside it.
"""

from pathlib import Path

import pytest
from scipy.constants import Boltzmann, elementary_charge, zero_Celsius
from scipy.optimize import brentq

import benchlog
from benchlog.analysis.design import ClampDesign, review, size_clamp
from benchlog.analysis.low_input import guaranteed_vgs_v, takeover_input_v
from benchlog.specfiles import load_design, load_spec, review_file

from .spec_texts import PMOS, RECT
from .test_design import write_design

DEMO = Path(benchlog.__file__).parent / "demo"


def test_clamp_quiescent_drain_at_the_nominal_input():
    # Hand calculation (Ohm's law, IEC 60063 E24): a 30 V design, 10 V zener, 5 mA at the highest input ->
    # R = (30 − 10)/5 mA = 4.0 kΩ, next E24 value up 4.3 kΩ; at the nominal 24 V the clamp draws
    # I = (24 − 10)/4300 = 3.256 mA continuously, P = 24 V · I = 78.1 mW (zener 10·I + resistor 14·I).
    s = size_clamp(ClampDesign(zener_v=10.0, target_current_a=5e-3), 30.0, 0.5, vin_nominal_v=24.0)
    assert s.resistor_ohm == 4300.0
    assert s.quiescent_a == pytest.approx(3.26e-3, abs=0.005e-3)
    assert s.quiescent_w == pytest.approx(24.0 * 14.0 / 4300.0, rel=1e-12)
    # Below the zener voltage nothing flows: 9 V nominal on a 10 V zener.
    assert size_clamp(ClampDesign(zener_v=10.0), 30.0, 0.5, vin_nominal_v=9.0).quiescent_a == 0.0


def test_review_states_the_clamp_drain(tmp_path):
    r = review_file(write_design(tmp_path, {"mos": PMOS + "vgs_max_v = 20.0\n"}, vin=(24.0, 18.0, 30.0),
                                 clamp="[clamp]\nzener_v = 10.0\n"))
    assert r.clamp.quiescent_a == pytest.approx(14.0 / 4300.0)
    assert any("3.26 mA" in m and "24 V" in m and "battery" in m for m in r.reminders)


def _body_diode_hand(vf_v, at_a, n, current_a, ambient_c, rth):
    """Kirchhoff + Shockley (Sze, ch. 2) with a −2 mV/K junction tempco (common practice), by hand:
    Vf(Tj) = Vf0 + n·kT/q·ln(I/I0) − 2 mV/K·(Tj − 25 °C);  Tj = Ta + Rθ·I·Vf(Tj)  (solved with scipy brentq)."""
    def vf(tj):
        vt = Boltzmann * (tj + zero_Celsius) / elementary_charge
        return vf_v + n * vt * __import__("math").log(current_a / at_a) - 2e-3 * (tj - 25.0)
    tj = brentq(lambda t: t - ambient_c - rth * current_a * vf(t), ambient_c, 400.0)
    return vf(tj), current_a * vf(tj), tj


def test_demo_pmos_takeover_against_a_hand_calculation():
    spec = load_spec(DEMO / "specs" / "demo-pfet-10m.toml")
    t = takeover_input_v(spec, 2.5, 70.0)
    # Below the takeover the body diode alone carries 2.5 A at 70 °C ambient, Rθ 62.5 K/W:
    vf, loss, tj = _body_diode_hand(0.78, 1.0, 1.3, 2.5, 70.0, 62.5)
    assert t.body_loss_w == pytest.approx(loss, rel=1e-3)
    assert t.body_tj_c == pytest.approx(tj, abs=0.2)
    assert loss == pytest.approx(1.4, abs=0.05) and tj == pytest.approx(157.0, abs=2.0)  # the demo's "1.4 W, 157 °C"
    # Kirchhoff: the channel is off once |Vgs| = Vin − Vf_body ≤ Vgs(th)max = 2.5 V, so the body diode
    # carries everything below Vin = 2.5 V + Vf_body(Tj).
    assert t.full_v == pytest.approx(2.5 + vf, abs=0.02)
    # It starts to share a little higher (the channel's drop must stay below the body diode's knee):
    # between the full takeover and 3.4 V, the demo's "about 3.3 V".
    assert t.full_v < t.input_v < 3.4


def test_takeover_is_checked_against_the_lowest_input(tmp_path):
    mos = PMOS + "vgs_max_v = 20.0\nvgs_th_max_v = 2.5\n"  # body diode 0.8 V at 1 A
    fine = review_file(write_design(tmp_path, {"mos": mos}, vin=(12.0, 6.0, 16.0))).candidates[0]
    check = {c.name: c for c in fine.checks}["body-diode takeover"]
    assert check.ok is True and fine.takeover_v < 6.0
    # A cold crank to 3 V is below |Vgs| = Vth + Vf ≈ 2.5 + 0.8 V: the body diode carries the load there.
    low = review_file(write_design(tmp_path, {"mos": mos}, vin=(12.0, 3.0, 16.0))).candidates[0]
    assert {c.name: c.ok for c in low.checks}["body-diode takeover"] is False
    assert low.min_input_conduction != "channel"


def test_threshold_rule_does_not_lean_on_r_ds_on_below_the_stated_drive(tmp_path):
    # The spec states R_DS(on) at 10 V and 4.5 V only. At a 4 V lowest input |Vgs| ≈ 4 V − drop ≈ 3.9 V:
    # 1.4 V above Vgs(th)max 2.5 V (the old 1 V margin passes) but below 4.5 V, where nothing is guaranteed.
    mos = PMOS + "vgs_th_max_v = 2.5\nrds_on_2_ohm = 0.040\nrds_on_2_vgs_v = 4.5\n"
    spec_path = tmp_path / "g.toml"
    spec_path.write_text(mos)
    assert guaranteed_vgs_v(load_spec(spec_path)) == 4.5
    c = review_file(write_design(tmp_path, {"mos": mos}, vin=(12.0, 4.0, 16.0))).candidates[0]
    thr = {k.name: k for k in c.checks}["threshold margin"]
    assert c.threshold_margin_v > 1.0 and thr.ok is False and "not guaranteed" in thr.detail
    ok = review_file(write_design(tmp_path, {"mos": mos}, vin=(12.0, 6.0, 16.0))).candidates[0]
    assert {k.name: k.ok for k in ok.checks}["threshold margin"] is True


def test_reverse_conduction_caution_for_gate_tied_mosfets_only(tmp_path):
    r = review(load_design(DEMO / "design.toml"))
    caution = [m for m in r.reminders if "conducts in both directions" in m]
    assert {m.split(":")[0] for m in caution} == {"C", "D"}  # the two MOSFET candidates, not the diodes
    assert all("not an ideal diode" in m for m in caution)
    diodes = review_file(write_design(tmp_path, {"rect": RECT}))
    assert not any("both directions" in m for m in diodes.reminders)
