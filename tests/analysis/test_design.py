"""Design review: gate clamp equations, E-series picking, ratings, leakage, recommendation, reminders."""

from pathlib import Path

import pytest

import benchlog
from benchlog.analysis.design import (
    ClampDesign,
    clamp_currents,
    review,
    size_clamp,
    suggest_zener_v,
)
from benchlog.badinput import BadInput
from benchlog.specfiles import load_design, load_spec, review_file

from .spec_texts import PMOS, RECT, SCHOTTKY

DEMO = Path(benchlog.__file__).parent / "demo"


def test_clamp_circuit_equations():
    # Standard zener clamp equations (Ohm/Kirchhoff): 36 V input, 12 V zener, 4.7 kΩ ->
    # I = 24/4700 = 5.11 mA, P_z = 12·I = 61.3 mW, P_R = 24·I = 123 mW.
    i, pz, pr = clamp_currents(36.0, 12.0, 4700.0)
    assert i == pytest.approx(5.11e-3, abs=0.005e-3)
    assert pz == pytest.approx(61.3e-3, abs=0.05e-3)
    assert pr == pytest.approx(123e-3, abs=0.5e-3)
    assert clamp_currents(10.0, 12.0, 4700.0) == (0.0, 0.0, 0.0)  # below Vz the zener is idle


def test_clamp_sizing_picks_from_e24():
    # Target 5 mA at 36 V: (36 − 12)/5 mA = 4.8 kΩ -> next E24 value up is 5.1 kΩ (IEC 60063 E24).
    s = size_clamp(ClampDesign(zener_v=12.0), 36.0)
    assert s.picked and s.resistor_ohm == 5100.0
    assert s.zener_current_a == pytest.approx(24 / 5100)
    # 113 mW in the resistor at 50 % derating needs a 0.25 W part (standard ratings).
    assert s.resistor_rating_w == 0.25
    given = size_clamp(ClampDesign(zener_v=12.0, resistor_ohm=4700.0, zener_power_w=0.5), 36.0)
    assert not given.picked and given.zener_ok
    # A small zener's derated power lowers the target: 0.5·0.1 W/12 V = 4.17 mA -> 24 V/4.17 mA = 5.76 kΩ -> 6.2 kΩ.
    small = size_clamp(ClampDesign(zener_v=12.0, zener_power_w=0.1), 36.0)
    assert small.resistor_ohm == 6200.0


@pytest.mark.parametrize("rating", [12.0, 16.0, 20.0])
def test_suggested_clamp_zener_is_in_the_usual_range(rating):
    # Common practice: a gate clamp zener is chosen in the 6–12 V range for the usual gate ratings.
    assert 6.0 <= suggest_zener_v(rating) <= 12.0


def write_design(tmp_path, specs: dict[str, str], *, application="bench", vin=(12.0, 9.0, 16.0),
                 reverse="reverse_v = 12.0", clamp="", ambient=25.0, load=(2.0, 2.0)):
    names = []
    for name, text in specs.items():
        (tmp_path / f"{name}.toml").write_text(text)
        names.append(name)
    cands = "".join(f'[[candidate]]\nspec = "{n}.toml"\nlabel = "{n}"\n' for n in names)
    path = tmp_path / "design.toml"
    path.write_text(
        f'name = "test"\napplication = "{application}"\n'
        f"[input]\nnominal_v = {vin[0]}\nmin_v = {vin[1]}\nmax_v = {vin[2]}\n{reverse}\n"
        f"[load]\nnominal_a = {load[0]}\nmax_a = {load[1]}\n[ambient]\nmax_c = {ambient}\n{clamp}{cands}"
    )
    return path


def test_trade_facts_in_a_review(tmp_path):
    # Common practice: 12 V, 2 A — rectifier 0.85 V -> 1.7 W, Schottky 0.55 V -> 1.1 W,
    # P-MOSFET 26 mΩ -> 0.104 W (no thermal data: Tj = ambient = the datasheet's 25 °C).
    # The MOSFET's spec states R_DS(on) down to 4.5 V, so the 9 V lowest input leans on no extrapolation.
    mos = PMOS + "rds_on_2_ohm = 0.040\nrds_on_2_vgs_v = 4.5\n"
    r = review_file(write_design(tmp_path, {"rect": RECT, "sch": SCHOTTKY, "mos": mos}))
    loss = {c.label: c.loss_w for c in r.candidates}
    assert loss["rect"] == pytest.approx(1.7)
    assert loss["sch"] == pytest.approx(1.1)
    assert loss["mos"] == pytest.approx(0.104, rel=1e-5)
    eff = {c.label: c.efficiency for c in r.candidates}
    assert eff["rect"] == pytest.approx(1 - 0.85 / 12)  # η = (Vin − drop)/Vin for a series element
    assert r.recommended == "mos"


def test_vds_rating_must_exceed_the_supply(tmp_path):
    # Common practice: the MOSFET's Vds rating must exceed the supply; 60 V is ample for 12 V.
    ok = review_file(write_design(tmp_path, {"mos": PMOS + "vds_max_v = 60.0\n"})).candidates[0]
    check = {c.name: c for c in ok.checks}["blocking voltage"]
    assert check.ok and ok.blocking_headroom_v == pytest.approx(60.0 - 16.0)
    low = review_file(write_design(tmp_path, {"mos": PMOS + "vds_max_v = 12.0\n"})).candidates[0]
    assert {c.name: c for c in low.checks}["blocking voltage"].ok is False


def test_schottky_leakage_under_100_ua(tmp_path):
    # Common practice: a Schottky for this duty wants reverse leakage under about 100 µA.
    low = SCHOTTKY + "ir_max_a = 50e-6\nir_at_v = 40.0\nvr_max_v = 40.0\n"
    high = SCHOTTKY + "ir_max_a = 500e-6\nir_at_v = 40.0\nvr_max_v = 40.0\n"
    good = review_file(write_design(tmp_path, {"sch": low})).candidates[0]
    bad = review_file(write_design(tmp_path, {"sch": high})).candidates[0]
    assert {c.name: c.ok for c in good.checks}["reverse leakage"] is True
    assert {c.name: c.ok for c in bad.checks}["reverse leakage"] is False
    assert good.leakage_a == pytest.approx(50e-6, rel=1e-3)  # no Rθ: Tj = ambient 25 °C


def test_gate_rating_with_and_without_clamp(tmp_path):
    mos = PMOS + "vgs_max_v = 20.0\nvgs_th_max_v = 2.5\n"
    bare = review_file(write_design(tmp_path, {"mos": mos}, vin=(12.0, 6.0, 36.0))).candidates[0]
    gate = {c.name: c for c in bare.checks}["gate voltage"]
    assert gate.ok is False and "needs a gate clamp" in gate.detail and bare.vgs_unclamped_v > 30
    clamped = review_file(write_design(tmp_path, {"mos": mos}, vin=(12.0, 6.0, 36.0),
                                       clamp="[clamp]\nzener_v = 12.0\nresistor_ohm = 4700.0\n"))
    c = clamped.candidates[0]
    assert c.vgs_clamped_v == pytest.approx(12.0) and {x.name: x.ok for x in c.checks}["gate voltage"]
    assert clamped.clamp.zener_current_a == pytest.approx(24 / 4700)
    # Threshold margin at the 6 V cold-crank input: |Vgs| = 6 − drop against the 2.5 V maximum threshold.
    assert c.threshold_margin_v == pytest.approx(6.0 - c.worst.limit.drop_v - 2.5, abs=1e-9)


@pytest.mark.parametrize("application, words", [("automotive", "ISO 7637-2"), ("mains", "local electrical codes")])
def test_reminders_for_regulated_applications(tmp_path, application, words):
    r = review_file(write_design(tmp_path, {"rect": RECT}, application=application))
    assert any(words in m for m in r.reminders)
    bench = review_file(write_design(tmp_path, {"rect": RECT}, application="bench"))
    assert not any("govern" in m for m in bench.reminders)


def test_no_acceptable_candidate_is_said_plainly(tmp_path):
    hot = RECT + "rth_ja_k_per_w = 80.0\ntj_max_c = 150.0\n"
    r = review_file(write_design(tmp_path, {"rect": hot}, ambient=85.0, load=(2.0, 3.0)))
    assert r.recommended is None and r.recommendation == "no candidate meets every check"
    assert "junction temperature" in r.reasons[0]


def test_demo_design_and_specs():
    # The demo scenario (invented product and parts) loads and its review picks the lower-loss MOSFET,
    # the N-channel part in the return, and names the switched ground it brings.
    for path in sorted((DEMO / "specs").glob("*.toml")):
        assert load_spec(path).name.startswith("DEMO-")
    r = review(load_design(DEMO / "design.toml"))
    assert [c.kind for c in r.candidates] == ["rectifier", "schottky", "pmos", "nmos"]
    assert r.recommended.startswith("D") and r.clamp.resistor_ohm == 5100.0
    assert [c.acceptable for c in r.candidates] == [False, False, True, True]
    assert any("switches the board's ground" in m and m.startswith("D:") for m in r.reminders)
    assert any("automotive" in m for m in r.reminders)


@pytest.mark.parametrize(
    "edit, where",
    [
        (lambda t: t.replace("[input]", "[inputs]"), "inputs"),
        (lambda t: t.replace("nominal_v = 12.0", "nominal_v = 40.0"), "[input].nominal_v"),
        (lambda t: t.replace('spec = "rect.toml"', 'spec = "nope.toml"'), "[candidate[0]].spec"),
        (lambda t: t.replace("max_c = 25.0", "max_c = 'hot'"), "[ambient].max_c"),
    ],
)
def test_design_faults_name_the_key(tmp_path, edit, where):
    path = write_design(tmp_path, {"rect": RECT})
    path.write_text(edit(path.read_text()))
    with pytest.raises(BadInput) as err:
        load_design(path)
    assert err.value.where == where and str(path) in err.value.line()


def test_fault_in_a_candidate_spec_names_that_file(tmp_path):
    path = write_design(tmp_path, {"rect": RECT + "vf_typo = 1\n"})
    with pytest.raises(BadInput) as err:
        load_design(path)
    assert err.value.source.endswith("rect.toml") and err.value.where == "vf_typo"
