"""`benchlog lot / estimate / design` exit codes and JSON keys on the recorded sample lot and the demo specs."""

import json
import math
import shutil
from pathlib import Path

import pytest
from scipy import stats

import benchlog
from benchlog.specfiles import load_spec
from benchlog.analysis.predict import predict

from .test_verdict_cli import DEMO, PFET, RECT, cli

LOT = sorted((Path(benchlog.__file__).parents[1] / "sample_runs" / "lot-demo-07").glob("*.run"))
SCHOTTKY = DEMO / "specs" / "demo-schottky-2a.toml"


def test_lot_json_has_part_verdicts_and_the_capability_bound():
    code, out, _ = cli("lot", *LOT, "--spec", PFET, "--json")
    s = json.loads(out)
    assert s["capability_name"] == "Cpu" and len(s["parts"]) == len(LOT) == 20
    assert [p["verdict"] for p in s["parts"]].count("fail") == s["counts"]["fail"] >= 1
    assert code == 1 and s["verdict"] == "fail"
    # Bissell 1990 by hand, z from scipy.stats.norm: Cpu − z·√(1/(9n) + Cpu²/(2(n − 1))).
    cpu, n = s["capability"], s["n"]
    want = cpu - stats.norm.ppf(0.95) * math.sqrt(1 / (9 * n) + cpu * cpu / (2 * (n - 1)))
    assert s["cpu_lower"] == pytest.approx(want, rel=1e-12) and s["cpu_lower"] < cpu
    assert "cpk_lower" not in s and s["capability_confidence"] == 0.95


def test_lot_refuses_the_same_run_twice_and_flags_a_copy(tmp_path):
    code, out, err = cli("lot", LOT[0], LOT[1], LOT[0], "--spec", PFET)
    assert code == 2 and out == "" and err.count("\n") == 1 and "same file" in err
    copy = tmp_path / "copy.run"
    shutil.copyfile(LOT[0], copy)
    code, out, _ = cli("lot", LOT[0], LOT[1], copy, "--spec", PFET, "--json")
    notes = json.loads(out)["notes"]
    assert any("records the same run as" in n and "copy.run" in n for n in notes)


def test_estimate_exits_5_when_a_part_exceeds_tj_max():
    code, out, _ = cli("estimate", PFET, "--at", 2, "--ambient", 25, "--vin", 12)
    assert code == 0 and "exit 5" not in out
    # The rectifier's maximum values settle above its 150 °C Tj max at 2 A, 70 °C (predict says so).
    assert predict(load_spec(RECT), 2.0, 70.0).maximum.over_tj_max
    code, out, _ = cli("estimate", PFET, RECT, "--at", 2, "--ambient", 70, "--vin", 12)
    assert code == 5 and "exit 5" in out
    code, out, _ = cli("estimate", SCHOTTKY, "--at", 2, "--ambient", 70, "--json")
    e = json.loads(out)[0]
    assert code == 0 and e["tj_c"] < 125 and e["max"]["tj_c"] < 125 and not e["max"]["over_tj_max"]


def test_estimate_exits_5_on_thermal_runaway(tmp_path):
    # Rθ so large that no steady state exists: predict reports runaway, the exit says so.
    spec = tmp_path / "hot.toml"
    spec.write_text(SCHOTTKY.read_text(encoding="utf-8").replace("rth_ja_k_per_w = 50.0", "rth_ja_k_per_w = 5000.0"),
                    encoding="utf-8")
    p = predict(load_spec(spec), 2.0, 25.0)
    assert p.typical.runaway or p.typical.over_tj_max
    code, _, _ = cli("estimate", spec, "--at", 2)
    assert code == 5
