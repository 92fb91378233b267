"""`benchlog estimate / check / lot / design` end to end: runs recorded from the simulated bench over pyvisa-py."""

import io
import json
from contextlib import redirect_stderr, redirect_stdout
from pathlib import Path

import pytest

import benchlog
from benchlog.analysis.predict import predict
from benchlog.specfiles import load_spec
from benchlog.analysis.verdict import decide
from benchlog.cli import main
from benchlog.sweep.plan import load_plan
from benchlog.cli.simbench import sweep_on_builtin_bench
from benchlog.sweep.session import run_sweep

DEMO = Path(benchlog.__file__).parent / "demo"
PFET = DEMO / "specs" / "demo-pfet-10m.toml"
RECT = DEMO / "specs" / "demo-rect-3a.toml"


def cli(*argv):
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        try:
            code = main([str(a) for a in argv])
        except SystemExit as stop:  # argparse leaves through SystemExit(2)
            code = stop.code
    return code, out.getvalue(), err.getvalue()


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """A P-MOSFET prototype sweep and three boards of the lot plan, each a different seeded part."""
    out = tmp_path_factory.mktemp("runs")
    proto = sweep_on_builtin_bench(load_plan(DEMO / "plans" / "pmos-prototype.toml"), out, seed=3)
    lot = [sweep_on_builtin_bench(load_plan(DEMO / "plans" / "lot-inspection.toml"), out / f"b{s}", seed=s)
           for s in (11, 12, 13)]
    like = [_sweep_at_input(DEMO / "plans" / "lot-inspection.toml", out / f"v{s}", s, LIKE_FOR_LIKE_INPUT_V)
            for s in (11, 12, 13)]
    assert proto.outcome == "complete" and all(r.outcome == "complete" for r in lot + like)
    return {"proto": proto.run_file, "lot": [r.run_file for r in lot], "like": [r.run_file for r in like]}


#: The input at which the gate-to-return P-MOSFET sees the spec's |Vgs| = 10 V at 2 A (10 V plus its ~20 mV drop).
LIKE_FOR_LIKE_INPUT_V = 10.02


def _sweep_at_input(plan_path, out, seed, input_v):
    """The plan on the built-in simulated bench with the supply holding `input_v` (load wiring)."""
    from benchlog.sweep.bench_file import Wiring
    from benchlog.cli.simbench import builtin_bench

    plan = load_plan(plan_path)
    setup, running = builtin_bench(plan.element, seed,
                                   wiring=Wiring(force="load", current_from="load", input_v=input_v))
    try:
        return run_sweep(plan, setup, out)
    finally:
        running.stop()


def test_estimate_json_one_entry_per_part():
    code, out, _ = cli("estimate", PFET, RECT, "--at", 2, "--ambient", 40, "--vin", 12, "--json")
    assert code == 0
    rows = json.loads(out)
    assert [r["part"] for r in rows] == ["DEMO-PFET-10M", "DEMO-RECT-3A"]
    for row, path in zip(rows, (PFET, RECT)):
        p = predict(load_spec(path), 2.0, 40.0, vin_v=12.0)
        assert row["loss_w"] == pytest.approx(p.loss_w) and row["tj_c"] == pytest.approx(p.tj_c)
        assert row["iterations"] == p.iterations and row["converged"] is True
        assert row["max"]["loss_w"] == pytest.approx(p.maximum.loss_w)
        assert row["tj_c"] == pytest.approx(40.0 + row["loss_w"] * load_spec(path).thermal.rth_ja_k_per_w, abs=1e-5)


def test_check_json_and_exit_code(runs):
    code, out, _ = cli("check", runs["proto"], "--spec", PFET, "--json")
    c = json.loads(out)
    assert code == {"pass": 0, "fail": 1, "conditional": 3}[c["verdict"]]
    assert c["current_a"] == 2.0  # the plan's operating_a
    assert c["measured_loss_w"] == pytest.approx(c["measured_drop_v"] * 2.0)
    assert c["std_u"]["measured_loss_w"] == pytest.approx(c["std_u"]["measured_drop_v"] * 2.0)
    # The verdict is the guard-band rule applied to the printed numbers (ILAC-G8:09/2019).
    again = decide(c["measured_loss_w"], c["expanded_u"]["measured_loss_w"], c["limit_loss_w"])
    assert again.outcome == c["verdict"] or (c["bars"] and again.outcome == "pass")
    assert "ILAC-G8" in c["rule"] and c["limit_source"]
    for key in ("predicted_loss_w", "predicted_max_loss_w", "typical_comparison", "iterations", "conduction"):
        assert key in c
    assert c["measured_loss_w"] == pytest.approx(c["predicted_loss_w"], rel=0.15)
    # The conditions of the judgement: Tj with its u and source, |Vgs|, the limit's conditions, no reverse yet.
    assert c["tj_source"] in ("measured", "inferred", "assumed") and c["tj_u_c"] >= 0
    assert abs(c["tj_c"] - 25.0) < 2.0 and "Tj" in c["limit_at"] and "|Vgs| 10 V" in c["limit_at"]
    assert c["reverse"] is None
    # The demo bench holds 12 V: |Vgs| ≈ 11.98 V, outside the spec's R_DS(on)(Vgs) points (4.5 and 10 V), so the
    # limit cannot be taken to the test's drive and the verdict cannot pass; it says which input would do.
    assert c["vgs_v"] == pytest.approx(12.0 - c["measured_drop_v"], abs=0.05)
    assert c["verdict"] == "conditional" and c["gate"]["bars_pass"] and "outside" in c["gate"]["why"]
    assert c["gate"]["input_for_spec_vgs_v"] == pytest.approx(10.0 + c["measured_drop_v"])
    assert decide(c["measured_loss_w"], c["expanded_u"]["measured_loss_w"], c["limit_loss_w"]).outcome == "pass"
    code, text, _ = cli("check", runs["proto"], "--spec", PFET)
    assert code == 3 and "judged at Tj" in text and "gate drive: |Vgs| 11.9" in text
    assert "would test at the spec's |Vgs| 10 V" in text


def test_check_at_the_specs_gate_drive_passes_and_agrees_with_lot(runs):
    # At 10.02 V input the channel sees |Vgs| ≈ 10 V, within 2 % of the spec's point: judged like for like.
    # The same runs through `check` and through `lot` give the same verdict and the same U (one judging path).
    code, out, _ = cli("lot", *runs["like"], "--spec", PFET, "--json")
    s = json.loads(out)
    for path, part in zip(runs["like"], s["parts"]):
        code_c, out_c, _ = cli("check", path, "--spec", PFET, "--json")
        c = json.loads(out_c)
        assert c["vgs_v"] == pytest.approx(10.0, abs=0.2) and not c["gate"]["bars_pass"]
        assert c["verdict"] == part["verdict"] == "pass" and code_c == 0
        assert c["judged"]["r_on_ohm"] == pytest.approx(part["r_on_ohm"], rel=1e-12)
        assert c["judged"]["decision_expanded_u"] == pytest.approx(part["expanded_u"]["r_on_ohm"], rel=1e-12)
        # loss = R·I² and drop = R·I with the same verdict (the offset subtracted, no free intercept)
        assert c["measured_drop_v"] == pytest.approx(c["judged"]["r_on_ohm"] * 2.0, rel=1e-12)
        assert c["limit_loss_w"] == pytest.approx(c["judged"]["limit_ohm"] * 4.0, rel=1e-12)
        assert any("temperature" in term["name"] for term in c["judged"]["budget"])
    assert s["verdict"] in ("pass", "conditional")  # three parts cannot demonstrate a capability index


def test_check_at_a_tight_current_can_fail(runs, tmp_path):
    # The same run against a spec whose maximum is half the part's R_DS(on): must fail.
    tight = tmp_path / "tight.toml"
    tight.write_text(PFET.read_text().replace("rds_on_max_ohm = 0.0125", "rds_on_max_ohm = 0.005")
                     .replace("rds_on_ohm = 0.010", "rds_on_ohm = 0.005").replace("rds_on_2_ohm = 0.0165", "rds_on_2_ohm = 0.0083"))
    code, out, _ = cli("check", runs["proto"], "--spec", tight, "--at", 2.5)
    assert code == 1 and out.startswith("FAIL")


def test_lot_json(runs):
    code, out, _ = cli("lot", *runs["lot"], "--spec", PFET, "--json")
    s = json.loads(out)
    assert code == {"pass": 0, "fail": 1, "conditional": 3}[s["verdict"]]
    assert s["n"] == 3 and s["quantity"] == "r_on_ohm" and len(s["parts"]) == 3
    values = [p["r_on_ohm"] for p in s["parts"]]
    assert s["mean_ohm"] == pytest.approx(sum(values) / 3)
    # the maximum at the parts' own Tj: the short lot sweep barely warms them (0.5 %/K near 25 °C)
    assert s["capability_name"] == "Cpu" and s["usl_ohm"] == pytest.approx(0.0125, rel=0.01)
    # at 12 V input the parts' |Vgs| is outside the spec's points: none can pass, and the lot says why
    assert all(p["verdict"] == "conditional" for p in s["parts"])
    assert any("outside the spec's R_DS(on)(Vgs) points" in n for n in s["notes"])


def test_design_cli_demo():
    code, out, _ = cli("design", DEMO / "design.toml", "--json")
    r = json.loads(out)
    # D is recommended, but A and B settle above their Tj max at the worst case: exit 5.
    assert code == 5 and r["recommended"].startswith("D")
    assert [c["label"][0] for c in r["candidates"] if c["thermal_fault"]] == ["A", "B"]
    assert r["clamp"]["resistor_ohm"] == 5100.0
    code, text, _ = cli("design", DEMO / "design.toml")
    assert code == 5 and "recommended: D" in text and "ISO 7637-2" in text


@pytest.mark.parametrize(
    "argv",
    [
        ("estimate", PFET, "--at", "nan"),
        ("estimate", PFET, "--at", "two"),
        ("estimate", DEMO / "missing.toml", "--at", 1),
        ("check", "missing.run", "--spec", PFET),
        ("design", PFET),
    ],
)
def test_bad_input_is_one_line_and_exit_2(argv):
    code, out, err = cli(*argv)
    assert code == 2 and out == "" and err.count("\n") == 1 and "Traceback" not in err


def test_wrong_kind_spec_is_bad_input(runs):
    code, _, err = cli("check", runs["proto"], "--spec", RECT)
    assert code == 2 and err.count("\n") == 1 and "kind" in err


def test_check_of_the_killed_sample_run_at_2_a_is_extrapolated_and_incomplete():
    # sample_runs/pmos-killed.run: SIGKILLed after 12 of 30 points, the last at 1.22 A; 2 A is 63 % beyond
    run = Path(benchlog.__file__).parents[1] / "sample_runs" / "pmos-killed.run"
    code, out, _ = cli("check", run, "--spec", PFET, "--at", 2, "--json")
    c = json.loads(out)
    assert c["verdict"] == "conditional" and code == 3
    assert c["run_complete"] is False and c["run_outcome"] == "incomplete"
    assert c["extrapolation"]["extrapolated"] is True and c["extrapolation"]["side"] == "above"
    assert c["extrapolation"]["fitted_max_a"] == pytest.approx(1.2233, abs=1e-3)
    assert c["extrapolation"]["bars_pass"] is True and "extrapolated" in c["caveat"]
    # the guard band alone would have passed it: the rule, not the numbers, made it conditional
    assert decide(c["measured_loss_w"], c["expanded_u"]["measured_loss_w"], c["limit_loss_w"]).outcome == "pass"
    code, text, _ = cli("check", run, "--spec", PFET, "--at", 2)
    assert code == 3 and text.startswith("CONDITIONAL")
    assert "extrapolated" in text and "incomplete" in text
