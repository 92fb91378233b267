"""`fit_run` over loaded runs and the `benchlog fit` command, on run files written by the real writer."""

import json
import math

import numpy as np
import pytest

from benchlog.analysis.fits import fit_resistive, fit_run, shockley_drop_v
from benchlog.analysis.uncertainty import Accuracy, MeasurementAccuracy
from benchlog.badinput import BadInput
from benchlog.cli import main
from benchlog.runs import Offset, Point, RunFinished, RunStarted, RunWriter, load
from benchlog.runs.record import RunHeader, new_run_id


from .monte_carlo import monte_carlo_k

ACCURACY = {"drop": {"reading_pct": 0.0040, "range_pct": 0.0007, "range_v": 1.0},
            "current": {"reading_pct": 0.05, "range_pct": 0.05, "range_a": 10.0}}


def write_run(path, currents, drops, *, offset_v=None, directions=None, flags=None, temperature_c=None,
              accuracy=ACCURACY, ambient_c=23.0, kind="pmos"):
    header = {"tool_version": "test", "started_utc": "2025-01-01T00:00:00Z", "run_id": new_run_id(),
              "element": {"id": "DEMO-PART-1", "kind": kind, "ambient_c": ambient_c}}
    if accuracy is not None:
        header["accuracy"] = accuracy
    with RunWriter(path, fsync=False) as writer:
        writer.write(RunStarted(RunHeader.from_table(header)))
        if offset_v is not None:
            writer.write(Offset(0.0, offset_v))
        for k, (i, v) in enumerate(zip(currents, drops)):
            writer.write(Point(index=k, t_s=0.1 * (k + 1), setpoint_a=float(round(i, 3)), current_a=float(i),
                               drop_v=float(v), temperature_c=temperature_c,
                               direction=directions[k] if directions else "up",
                               flags=tuple(flags.get(k, ())) if flags else ()))
        writer.write(RunFinished(10.0, "complete", len(currents)))
    return path


def resistive_data(seed=0, n=25):
    rng = np.random.default_rng(seed)
    i = np.linspace(0.2, 5.0, n)
    return i, 0.026 * i + rng.normal(0, 2e-5, n)


def test_fit_run_uses_header_accuracy_and_subtracts_the_offset(tmp_path):
    i, v = resistive_data()
    offset = 1.5e-4
    path = write_run(tmp_path / "a.run", i, v + offset, offset_v=offset)
    frame, meta = load(path)
    fit = fit_run(frame, meta)
    assert fit.model == "resistive" and "AICc" in fit.reason
    # same numbers as the array fit on the offset-free data with the header's spec
    ref = fit_resistive(i, v, MeasurementAccuracy(Accuracy(0.0040, 0.0007, 1.0), Accuracy(0.05, 0.05, 10.0)),
                        offset_removed=True)
    assert fit.params["r_on_ohm"] == pytest.approx(ref.params["r_on_ohm"], rel=1e-12)
    assert fit.params["v0_v"] == pytest.approx(ref.params["v0_v"], abs=1e-12)
    # every term of the array fit is there unchanged; fit_run adds the junction temperature term, whose
    # sensitivity is |R·α| (GUM 5.1.3, α = 0.5 %/K common practice for R_DS(on)) times the stated u(Tj)
    got = fit.budgets["r_on_ohm"]
    for c in ref.budgets["r_on_ohm"].components:
        assert got.component(c.name).u == pytest.approx(c.u, rel=1e-12)
    t = got.component("junction temperature")
    assert t.u == pytest.approx(abs(fit.params["r_on_ohm"]) * 5.0e-3 * fit.tj.u_c, rel=1e-12)
    assert fit.std_u["r_on_ohm"] == pytest.approx(math.hypot(ref.std_u["r_on_ohm"], t.u), rel=1e-9)
    assert fit.std_u["v0_v"] == pytest.approx(ref.std_u["v0_v"], rel=1e-12)
    assert fit.offset_removed
    assert any("offset" in note for note in fit.notes)


def test_fit_run_leaves_out_overloads_and_keeps_indices(tmp_path):
    i, v = resistive_data(seed=1)
    v = v.copy()
    v[5] = math.nan
    v[11] += 0.002
    path = write_run(tmp_path / "b.run", i, v, flags={5: ("overload",)})
    frame, meta = load(path)
    fit = fit_run(frame, meta, "resistive")
    assert fit.points == i.size - 1
    assert fit.point_index[fit.outliers].tolist() == [11]
    assert any("overload" in note for note in fit.notes)


def test_fit_run_diode_uses_the_recorded_temperature(tmp_path):
    i = np.linspace(0.05, 3.0, 25)
    v = shockley_drop_v(i, 1.6, 2e-9, 0.03, 40.0) + np.random.default_rng(2).normal(0, 2e-4, i.size)
    path = write_run(tmp_path / "d.run", i, v, temperature_c=40.0, ambient_c=20.0)
    frame, meta = load(path)
    fit = fit_run(frame, meta)
    assert fit.model == "diode" and fit.temperature_c == pytest.approx(40.0)
    assert fit.params["ideality"] == pytest.approx(1.6, rel=0.05)
    # without point temperatures the element's ambient is used
    path2 = write_run(tmp_path / "d2.run", i, v, ambient_c=40.0)
    fit2 = fit_run(*load(path2), "diode")
    assert fit2.temperature_c == pytest.approx(40.0)
    assert fit2.params["ideality"] == pytest.approx(fit.params["ideality"], rel=1e-9)


def test_fit_run_breaks_an_aicc_tie_by_the_recorded_kind(tmp_path):
    # the straight upper part of a rectifier curve: |ΔAICc| < 2 (see test_fit_model_choice). No accuracy
    # block, so both models weigh the points alike as there; with a current spec the diode carries its own
    # effective-variance weights (slope·u(I) varies along the curve) and ΔAICc on these data moves to 3.9.
    i = np.linspace(1.5, 3.0, 15)
    v = shockley_drop_v(i, 1.8, 5e-9, 0.03, 25.0) + np.random.default_rng(6).normal(0, 2e-3, i.size)
    as_rectifier = fit_run(*load(write_run(tmp_path / "r.run", i, v, ambient_c=25.0, kind="rectifier",
                                           accuracy=None)))
    as_pmos = fit_run(*load(write_run(tmp_path / "p.run", i, v, ambient_c=25.0, kind="pmos", accuracy=None)))
    assert as_rectifier.model == "diode" and "rectifier" in as_rectifier.reason
    assert as_pmos.model == "resistive"


def test_fit_run_refuses_with_the_file_named(tmp_path):
    path = write_run(tmp_path / "short.run", [0.5, 1.0], [0.01, 0.02])
    frame, meta = load(path)
    with pytest.raises(BadInput) as info:
        fit_run(frame, meta)
    assert "short.run" in info.value.line() and info.value.where == "points"
    with pytest.raises(BadInput):
        fit_run(frame, meta, "cubic")


def test_cli_json_output(tmp_path, capsys):
    i, v = resistive_data(seed=3)
    directions = ["up"] * i.size
    path = write_run(tmp_path / "c.run", i, v, offset_v=0.0, directions=directions)
    assert main(["fit", str(path), "--json", "--at", "2.0"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["model"] == "resistive" and out["coverage_probability"] == 0.9545
    assert set(out["params"]) == {"r_on_ohm", "v0_v"} == set(out["std_u"]) == set(out["expanded_u"]) == set(out["k_p"])
    assert out["params"]["r_on_ohm"] == pytest.approx(np.polyfit(i, v, 1)[0], rel=1e-9)  # numpy.polyfit reference
    # U = k_p·u, k_p of the budget's terms as listed (GUM 6.3), against a JCGM 101 Monte Carlo with numpy
    for key in ("r_on_ohm", "v0_v"):
        terms = [(c["distribution"], c["u"], c["dof"]) for c in out["budget"][key]]
        assert out["k_p"][key] == pytest.approx(monte_carlo_k(terms), abs=4e-3)
        assert out["expanded_u"][key] == pytest.approx(out["k_p"][key] * out["std_u"][key])
        assert f"(k = {out['k_p'][key]:.2f}, 95.45 % coverage)" in out["text"][key]
    assert out["k"] == out["k_p"]["r_on_ohm"]
    assert out["points"] == i.size and out["outliers"] == []
    assert isinstance(out["self_heating"]["detected"], bool)
    assert "AICc" in out["reason"]
    assert out["drop_at"][0]["current_a"] == 2.0
    assert out["drop_at"][0]["loss_w"] == pytest.approx(2.0 * out["drop_at"][0]["drop_v"])


def test_cli_diode_model_and_human_output(tmp_path, capsys):
    i = np.linspace(0.05, 3.0, 25)
    v = shockley_drop_v(i, 1.6, 2e-9, 0.03, 25.0) + np.random.default_rng(4).normal(0, 2e-4, i.size)
    path = write_run(tmp_path / "e.run", i, v, ambient_c=25.0)
    assert main(["fit", str(path), "--model", "diode", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert set(out["params"]) == {"ideality", "i_s_a", "r_s_ohm"}
    assert set(out["knee"]["params"]) == {"v_knee_v", "r_d_ohm"}
    assert main(["fit", str(path)]) == 0
    text = capsys.readouterr().out
    assert "diode fit of 25 points" in text and "Is" in text and "knee line" in text
    knee = text[text.index("knee line"):]
    assert knee.index("V_knee") < knee.index("r_d")  # V = V_knee + r_d·I, in the order of the formula


@pytest.mark.parametrize("content", ["", "not a run file\n", '{"record": "header"}\n'])
def test_cli_bad_file_is_one_line_exit_2(tmp_path, capsys, content):
    path = tmp_path / "bad.run"
    path.write_text(content)
    assert main(["fit", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "bad.run" in err and "Traceback" not in err


def test_cli_bad_arguments_exit_2(tmp_path, capsys):
    i, v = resistive_data()
    path = write_run(tmp_path / "f.run", i, v)
    assert main(["fit", str(path), "--at", "nan"]) == 2
    assert "--at" in capsys.readouterr().err
    with pytest.raises(SystemExit) as info:
        main(["fit", str(path), "--model", "cubic"])
    assert info.value.code == 2
    assert main(["fit", str(tmp_path / "missing.run")]) == 2
