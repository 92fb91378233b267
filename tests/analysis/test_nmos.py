"""The N-MOSFET in the return through the analysis: prediction, `estimate`, `check`, `lot` and `design`.

References: Kirchhoff's voltage law gives an N-MOSFET in the return with its gate on the input the
same |Vgs| = Vin − drop as a P-MOSFET in the supply line with its gate on the return (common
practice), so the same datasheet numbers must predict the same drop; the channel's loss is I²·R
with R from the datasheet's normalised R_DS(on)-vs-Tj curve (linear interpolation, numpy.interp)
and Tj = Ta + P·RθJA (the steady-state thermal resistance model, common practice).
"""

import io
import json
from contextlib import redirect_stderr, redirect_stdout
from pathlib import Path

import numpy as np
import pytest

from benchlog.analysis.verdict import decide

import benchlog
from benchlog.analysis.predict import predict
from benchlog.cli import main
from benchlog.specfiles import load_spec
from benchlog.sweep.plan import load_plan
from benchlog.cli.simbench import sweep_on_builtin_bench

from .spec_texts import PMOS, spec

DEMO = Path(benchlog.__file__).parent / "demo"
NFET = DEMO / "specs" / "demo-nfet-4m.toml"
PFET = DEMO / "specs" / "demo-pfet-10m.toml"


def cli(*argv):
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        try:
            code = main([str(a) for a in argv])
        except SystemExit as stop:
            code = stop.code
    return code, out.getvalue(), err.getvalue()


@pytest.fixture(scope="module")
def nmos_runs(tmp_path_factory):
    """Three N-MOSFET prototype sweeps on the built-in simulated bench, each a different seeded part."""
    out = tmp_path_factory.mktemp("nmos")
    runs = [sweep_on_builtin_bench(load_plan(DEMO / "plans" / "nmos-prototype.toml"), out / f"s{s}", seed=s)
            for s in (3, 4, 5)]
    assert all(r.outcome == "complete" for r in runs)
    return [r.run_file for r in runs]


@pytest.mark.parametrize("vin", [None, 3.0, 4.5, 12.0])
def test_same_numbers_predict_the_same_drop_for_both_channels(vin):
    p = predict(spec(PMOS), 2.0, 40.0, vin_v=vin)
    n = predict(spec(PMOS.replace('kind = "pmos"', 'kind = "nmos"')), 2.0, 40.0, vin_v=vin)
    assert n.kind == "nmos" and n.drop_v == p.drop_v and n.conduction == p.conduction and n.vgs_v == p.vgs_v


def test_estimate_is_i_squared_r_with_self_heating():
    code, out, _ = cli("estimate", NFET, "--at", 2, "--ambient", 40, "--vin", 12, "--json")
    assert code == 0
    row = json.loads(out)[0]
    assert row["part"] == "DEMO-NFET-4M" and row["kind"] == "nmos"
    s = load_spec(NFET)
    # Hand reference: at Vin = 12 V the gate is past the datasheet's 10 V point (no further credit), so
    # R = R25·f(Tj); iterate Tj = Ta + I²·R(Tj)·RθJA to its fixed point.
    tj = 40.0
    for _ in range(100):
        r = s.part.rds_on_ohm * np.interp(tj, s.part.rds_on_tj_c, s.part.rds_on_factor)
        tj = 40.0 + 4.0 * r * s.thermal.rth_ja_k_per_w
    assert row["tj_c"] == pytest.approx(tj, abs=1e-3)
    # the body diode in parallel carries about 1e-6 of the current at a 9 mV drop
    assert row["loss_w"] == pytest.approx(4.0 * r, rel=1e-4)


def test_check_passes_the_simulated_part_and_refuses_a_pmos_spec(nmos_runs):
    code, out, _ = cli("check", nmos_runs[0], "--spec", NFET, "--json")
    c = json.loads(out)
    assert c["conduction"] == "channel"
    assert c["measured_loss_w"] == pytest.approx(c["predicted_loss_w"], rel=0.15)
    # at a 12 V input the gate sees |Vgs| ≈ 12 V, beyond the spec's 10 V point: the guard band alone passes
    # the part, but the limit cannot be taken to that drive, so the verdict cannot pass and says so
    assert c["vgs_v"] == pytest.approx(12.0 - c["measured_drop_v"], abs=0.05)
    assert code == 3 and c["verdict"] == "conditional" and c["gate"]["bars_pass"]
    assert decide(c["measured_loss_w"], c["expanded_u"]["measured_loss_w"], c["limit_loss_w"]).outcome == "pass"
    assert any("gate to the input" in n for n in c["notes"])
    code, _, err = cli("check", nmos_runs[0], "--spec", PFET)
    assert code == 2 and "is 'pmos' but the run measured a 'nmos'" in err and err.count("\n") == 1


def test_lot_judges_the_resistance(nmos_runs):
    code, out, _ = cli("lot", *nmos_runs, "--spec", NFET, "--json")
    s = json.loads(out)
    assert s["n"] == 3 and s["quantity"] == "r_on_ohm"
    assert all(0.0036 < p["r_on_ohm"] < 0.0046 for p in s["parts"])  # the sim's 4 mΩ ± 10 % spread
    assert code == {"pass": 0, "fail": 1, "conditional": 3}[s["verdict"]]


def test_design_recommends_the_nmos_and_reminds_of_the_switched_ground():
    code, out, _ = cli("design", DEMO / "design.toml", "--json")
    r = json.loads(out)
    # exit 5: candidates A and B exceed their Tj max (README CLI section), though D is recommended
    assert code == 5 and r["recommended"].startswith("D")
    d = next(c for c in r["candidates"] if c["label"].startswith("D"))
    assert not d["thermal_fault"]
    assert d["kind"] == "nmos" and all(k["ok"] is not False for k in d["checks"])
    assert any("switches the board's ground" in m for m in r["reminders"])
