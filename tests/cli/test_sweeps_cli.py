"""`fit` and `check` on an input-voltage sweep and a leakage sweep recorded from the demo plans on the simulated bench.

The figures are checked against the simulator's truth (its R_DS(on), its leakage law) and against the
hand calculations written beside them; the runs go through real pyvisa-py sockets.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

import benchlog
from benchlog.cli import main
from benchlog.sweep.plan import load_plan
from benchlog.cli.simbench import sim_wiring

from tests.sweep.simrig import record, setup_for

DEMO = Path(benchlog.__file__).parent / "demo"


@pytest.fixture(scope="module")
def input_run(tmp_path_factory):
    from benchlog.sim.config import SimConfig
    from benchlog.sim.server import serve_bench

    running = serve_bench(SimConfig(element="pmos", seed=2, port=0))
    try:
        rec = record(load_plan(DEMO / "plans" / "pmos-input-sweep.toml"), setup_for(running),
                     tmp_path_factory.mktemp("input"))
        return rec.path, running.truth()
    finally:
        running.stop()


@pytest.fixture(scope="module")
def leakage_run(tmp_path_factory):
    from benchlog.sim.config import SimConfig
    from benchlog.sim.server import serve_bench

    running = serve_bench(SimConfig(element="schottky", seed=2, port=0, current_meter=True))
    try:
        rec = record(load_plan(DEMO / "plans" / "schottky-leakage.toml"),
                     setup_for(running, sim_wiring("schottky", current_from="meter")), tmp_path_factory.mktemp("leak"))
        return rec.path, running.truth()
    finally:
        running.stop()


def _json(capsys, *args) -> tuple[int, dict]:
    code = main(list(args))
    return code, json.loads(capsys.readouterr().out)


def test_fit_json_gives_r_per_input_and_the_takeover(input_run, capsys):
    path, truth = input_run
    code, d = _json(capsys, "fit", "--json", str(path))
    assert code == 0
    inputs = [s["input_v"] for s in d["series"]]
    assert inputs == [12.0, 6.0, 4.0, 3.2, 2.6, 1.7]  # one entry per input voltage, in the plan's order
    top = d["series"][0]
    assert top["r_on_ohm"] == pytest.approx(truth["r_on_ohm"], rel=0.05)  # the simulator's R_DS(on)
    # the single fit is the 12 V series: the same R as its series entry
    assert d["params"]["r_on_ohm"] == pytest.approx(top["r_on_ohm"], rel=1e-9)
    assert d["series"][-1]["conduction"] == "body_diode" and d["series"][-1]["r_on_ohm"] is None
    # 2.6 V lies in the band where channel and body diode are both self-consistent (the circuit's history
    # decides), so the takeover is bracketed by 1.7–2.6 V or 2.6–3.2 V
    assert 1.7 < d["takeover_v"] < 3.2
    # loss = I·V at the operating current (1 A); the worst is the largest, on the body diode
    worst = max(d["series"], key=lambda x: x["loss_w"])
    assert d["worst_input_v"] == worst["input_v"] and worst["conduction"] == "body_diode"
    assert d["worst_loss_w"] == pytest.approx(worst["drop_v"] * 1.0)
    assert d["leakage"] == []


def test_check_compares_with_the_spec_and_the_predicted_takeover(input_run, capsys):
    path, _ = input_run
    code, d = _json(capsys, "check", "--json", str(path), "--spec", str(DEMO / "specs" / "demo-pfet-10m.toml"))
    assert code in (0, 1, 3) and d["series"] and d["takeover_v"] is not None
    # the spec's R_DS(on) at |Vgs| = 12 V is its 10 V figure (no credit above the table): 10 mΩ typical
    assert d["series"][0]["spec_r_on_ohm"] == pytest.approx(0.010, rel=0.02)
    # the predicted takeover is the design review's figure at 1 A and 25 °C: between Vth max and Vth max + Vf
    assert 2.5 < d["predicted_takeover_v"] < 2.5 + 0.8
    assert d["takeover_agrees"] in (True, False)


def test_fit_text_names_each_input_and_the_rule(input_run, capsys):
    path, _ = input_run
    assert main(["fit", str(path)]) == 0
    out = capsys.readouterr().out
    assert "input sweep at 1 A (6 inputs)" in out and "takeover" in out and "rule: body diode when" in out


def test_check_json_gives_the_leakage_list_with_limits(leakage_run, capsys):
    path, truth = leakage_run
    code, d = _json(capsys, "check", "--json", str(path), "--spec", str(DEMO / "specs" / "demo-schottky-2a.toml"))
    volts = [x["voltage_v"] for x in d["leakage"]]
    assert volts == [5.0, 10.0, 15.0, 20.0, 25.0]
    assert all(set(x) >= {"voltage_v", "current_a", "limit_a"} for x in d["leakage"])
    # the spec's 50 µA at 40 V, tighter than the plan's 100 µA, applies as it stands below 40 V
    assert all(x["limit_a"] == pytest.approx(50e-6) for x in d["leakage"])
    sweep = d["leakage_sweep"]
    # doubling every 10 K (the spec's ir_doubling_k) from 25 °C to Tj max 125 °C: ×2^10 of the reading at the
    # highest voltage that passed
    ref = [x for x in d["leakage"] if x["passed"]][-1]
    assert sweep["hot_a"] == pytest.approx(ref["current_a"] * 2 ** 10)
    assert sweep["outcome"] == ("pass" if all(x["passed"] for x in d["leakage"]) else "fail")
    assert sweep["runaway"]["runaway"] is False and sweep["runaway"]["loop_gain"] < 1
    assert code == (1 if sweep["outcome"] == "fail" else code)


def test_fit_text_shows_the_leakage_sweep(leakage_run, capsys):
    path, _ = leakage_run
    assert main(["fit", str(path)]) == 0
    out = capsys.readouterr().out
    assert "leakage sweep" in out and "25 V" in out


def _sections(doc):
    return {sec.title: sec for s in doc.sections for sec in s.walk()}


def test_report_has_the_input_sweep_section_with_its_figure(input_run):
    from benchlog.report.build import build_report

    path, _ = input_run
    doc = build_report([path], spec_path=DEMO / "specs" / "demo-pfet-10m.toml")
    sec = _sections(doc)["Input-voltage sweep"]
    table = sec.blocks[0]
    assert [row[0] for row in table.rows] == ["12 V", "6 V", "4 V", "3.2 V", "2.6 V", "1.7 V"]
    assert any(getattr(b, "name", "") == "input" for b in sec.blocks)
    assert any("Takeover:" in getattr(b, "text", "") for b in sec.blocks)


def test_report_has_the_leakage_section_on_a_log_scale(leakage_run):
    from benchlog.report.build import build_report

    path, _ = leakage_run
    doc = build_report([path], spec_path=DEMO / "specs" / "demo-schottky-2a.toml")
    sec = _sections(doc)["Reverse-leakage sweep"]
    fig = next(b for b in sec.blocks if getattr(b, "name", "") == "leakage").figure
    assert fig.axes[0].get_yscale() == "log"
    assert len(sec.blocks[0].rows) == 5


def test_focus_and_sweeps_agree_on_arrays_and_frames(input_run):
    """`fit`/`check`/`report` read runs as arrays (`load_points`), the TUI as a frame (`load`): the series taken
    by the single fit and every per-input figure must be the same numbers either way (same file, two readers)."""
    from benchlog.report.sweeps_data import sweeps_payload
    from benchlog.runs import load, load_points
    from benchlog.runs.series import focus_frame

    path, _truth = input_run
    frame, meta = load(path)
    arrays, meta_a = load_points(path)
    f_frame, note_frame = focus_frame(frame, meta)
    f_arrays, note_arrays = focus_frame(arrays, meta_a)
    assert note_frame is not None and note_frame == note_arrays
    assert len(f_arrays) == len(f_frame) < len(arrays)
    assert list(f_arrays.current_a) == list(f_frame["current_a"])
    assert list(f_arrays.index) == list(f_frame["index"])
    assert json.dumps(sweeps_payload(arrays, meta_a), sort_keys=True, default=str) == \
        json.dumps(sweeps_payload(frame, meta), sort_keys=True, default=str)


def test_planned_points_count_every_input_series(input_run):
    """The header's plan asks for the steps once per input voltage (counted from the plan file itself)."""
    from benchlog.runs import load_points

    path, _truth = input_run
    plan = load_plan(DEMO / "plans" / "pmos-input-sweep.toml")
    _arrays, meta = load_points(path)
    steps = meta.header.plan.planned_points()
    per_series = len(plan.steps.currents_a) if plan.steps.mode == "list" else plan.steps.count
    assert steps == per_series * len(plan.input.voltages_v)
