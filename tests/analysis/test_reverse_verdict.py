"""The reverse-polarity result as a verdict: the limit at the test's temperature, the rule, the worse-of."""

import json
import math
from pathlib import Path

import pandas as pd
import pytest

import benchlog
from benchlog.accuracy import Accuracy, MeasurementAccuracy
from benchlog.analysis.reverse import U_ASSUMED_K, judge_reverse, worse
from benchlog.runs.loader import RunMeta
from benchlog.runs.record import ElementRecord, RunHeader, new_run_id
from benchlog.specfiles import load_spec
from benchlog.runs.events import ReverseResult

from .test_verdict_cli import DEMO, RECT, cli

SCHOTTKY = load_spec(DEMO / "specs" / "demo-schottky-2a.toml")  # IR max 50 µA at 40 V, 25 °C, doubling 10 K
SAMPLE = Path(benchlog.__file__).parents[1] / "sample_runs" / "rectifier-reverse.run"


def record(current_a, voltage_v=12.0, limit_a=0.01, passed=None):
    passed = current_a <= limit_a if passed is None else passed
    return ReverseResult(3.0, voltage_v, 2.0, current_a, limit_a, passed)


def meta(ambient_c=25.0, accuracy=None):
    """A loaded run's meta with the typed header fields the reverse verdict reads (invented values)."""
    header = RunHeader(tool_version="test", started_utc="2025-01-01T00:00:00.000Z", run_id=new_run_id(),
                       element=ElementRecord(id="R1", ambient_c=ambient_c),
                       accuracy=MeasurementAccuracy(reverse_current=accuracy))
    return RunMeta(Path("test.run"), header, None, (), None, None, "complete", True)


def test_limit_follows_the_doubling_model_at_the_test_temperature():
    # Exponential leakage model I(T) = I0·2^((T − T0)/ΔT), ΔT = 10 K (common practice for Schottky
    # leakage; the spec states 10 K): at 75 °C the 50 µA limit is 50 µA·2^5 = 1.6 mA.
    r = judge_reverse(record(1e-4), SCHOTTKY, None, meta(75.0))
    assert r.limit_a == pytest.approx(50e-6 * 2 ** 5, rel=1e-12)
    assert r.tj_c == 75.0 and r.tj_source == "assumed" and r.tj_u_c == U_ASSUMED_K
    assert "doubling every 10 K" in r.limit_at and r.outcome == "pass"
    # The same 100 µA at 25 °C is twice the limit: fail.
    assert judge_reverse(record(1e-4), SCHOTTKY, None, meta(25.0)).outcome == "fail"


def test_temperature_uncertainty_is_a_guard_band_on_the_limit():
    # u(T) = 2 K, k = 2: pass needs I ≤ I_lim(T − 4 K), fail needs I > I_lim(T + 4 K).
    cool, warm = 50e-6 * 2 ** (-0.4), 50e-6 * 2 ** 0.4
    assert judge_reverse(record(cool * 0.999), SCHOTTKY, None, meta()).outcome == "pass"
    assert judge_reverse(record(50e-6), SCHOTTKY, None, meta()).outcome == "conditional"
    assert judge_reverse(record(warm * 1.001), SCHOTTKY, None, meta()).outcome == "fail"


def test_measured_case_temperature_is_used_when_recorded():
    points = pd.DataFrame({"temperature_c": [30.0, 40.0, math.nan, 45.0]})
    r = judge_reverse(record(1e-4), SCHOTTKY, points, meta(25.0))
    assert r.tj_c == 45.0 and r.tj_source == "measured"
    assert r.limit_a == pytest.approx(50e-6 * 2 ** 2)


def test_voltage_not_held_fails_and_above_the_stated_voltage_cannot_pass():
    held_not = judge_reverse(record(1e-6, passed=False), SCHOTTKY, None, meta())
    assert held_not.outcome == "fail" and "conducts in reverse" in held_not.reason
    above = judge_reverse(record(1e-6, voltage_v=48.0), SCHOTTKY, None, meta())
    assert above.outcome == "conditional" and "above the stated 40 V" in above.limit_at


def test_tighter_plan_limit_decides_and_no_spec_uses_the_plan():
    r = judge_reverse(record(2e-5, limit_a=1e-5), SCHOTTKY, None, meta())
    assert r.limit_a == 1e-5 and r.outcome == "fail" and "plan's" in r.limit_at
    plan_only = judge_reverse(record(2e-5, limit_a=1e-4), None, None, meta())
    assert plan_only.limit_a == 1e-4 and plan_only.spec_limit_a is None and plan_only.outcome == "pass"
    assert judge_reverse(None, SCHOTTKY) is None


def test_worse_of():
    assert worse("pass", "fail") == "fail" and worse("conditional", "pass") == "conditional"
    assert worse("pass", "pass") == "pass" and worse("fail", "conditional") == "fail"


def test_check_and_fit_carry_the_reverse_result():
    # The sample run leaks 10.3 µA at 12 V, read on the series meter's 100 mA range. U of that reading by
    # hand from the header's accuracy: k_p·(0.05 %·I + 0.01 %·0.1 A)/√3 (GUM 4.3.7), k_p = √3·0.9545 for one
    # rectangular term at 95.45 % coverage (GUM G.1.3), i.e. U = 0.9545·a.
    # The rectifier spec allows 5 µA at 200 V, 25 °C, doubling every 22 K; with u(T) = 2 K the
    # limit spans 5·2^(−4/22) … 5·2^(4/22) µA. I − U is below the warm end and I + U above the cool
    # end: the reading cannot decide, so the run is conditional on its reverse result (exit 3),
    # while the forward drop passes.
    header = json.loads(SAMPLE.read_text(encoding="utf-8").split("\n", 1)[0])
    acc = header["accuracy"]["reverse_current"]
    # the runner recorded the sim-meter profile's dc_current entry for the 0.1 A range it read on
    assert acc == {"reading_pct": 0.05, "range_pct": 0.01, "range_a": 0.1}
    # the reverse current as the file recorded it (the simulator's leakage moves when its physics does)
    i = next(json.loads(line)["current_a"] for line in SAMPLE.read_text(encoding="utf-8").splitlines()
             if line.startswith('{"record":"reverse"'))
    big_u = 0.9545 * (acc["reading_pct"] / 100 * i + acc["range_pct"] / 100 * acc["range_a"])
    lo, hi = 5e-6 * 2 ** (-4 / 22), 5e-6 * 2 ** (4 / 22)
    assert i - big_u <= hi and i + big_u > lo  # the by-hand reason for "conditional"
    code, out, _ = cli("check", SAMPLE, "--spec", RECT, "--json")
    c = json.loads(out)
    rev = c["reverse"]
    assert set(rev) >= {"voltage_v", "current_a", "limit_a", "verdict"}
    assert rev["voltage_v"] == 12.0 and rev["current_a"] == pytest.approx(i)
    assert rev["expanded_u_a"] == pytest.approx(big_u, rel=1e-12)
    assert rev["limit_a"] == pytest.approx(5e-6) and rev["verdict"] == "conditional"
    assert c["forward_verdict"] == "pass" and c["verdict"] == "conditional" and code == 3
    code, text, _ = cli("check", SAMPLE, "--spec", RECT)
    assert code == 3 and text.startswith("CONDITIONAL") and "reverse CONDITIONAL" in text
    code, out, _ = cli("fit", SAMPLE, "--json")
    f = json.loads(out)
    assert code == 0 and f["reverse"]["limit_a"] == 1e-4 and f["reverse"]["verdict"] == "pass"
    code, out, _ = cli("check", DEMO.parents[1] / "sample_runs" / "pmos-prototype.run", "--spec",
                       DEMO / "specs" / "demo-pfet-10m.toml", "--json")
    assert json.loads(out)["reverse"] is None


def test_reading_uncertainty_is_a_guard_band_on_the_current():
    # ILAC-G8:09/2019 §4.2.2 with U from the header. Accuracy 0 % of reading + 0.001 % of 0.1 A: a = 1 µA,
    # u = a/√3 (GUM 4.3.7), one rectangular term, so U = √3·0.9545·u = 0.9545 µA (GUM G.1.3, 95.45 %).
    acc = meta(25.0, Accuracy(reading_pct=0.0, range_pct=0.001, range=0.1))
    plan_only = judge_reverse(record(99.1e-6, limit_a=100e-6), None, None, acc)
    assert plan_only.expanded_u_a == pytest.approx(0.9545e-6, rel=2e-4)
    assert plan_only.outcome == "conditional"  # 99.1 + 0.95 > 100
    assert judge_reverse(record(99e-6, limit_a=100e-6), None, None, acc).outcome == "pass"  # 99 + 0.95 ≤ 100
    assert judge_reverse(record(100.9e-6, limit_a=100e-6), None, None, acc).outcome == "conditional"
    assert judge_reverse(record(101e-6, limit_a=100e-6), None, None, acc).outcome == "fail"  # 101 − 0.95 > 100
    # without the header's accuracy: U = 0, and the result says so
    bare = judge_reverse(record(99e-6, limit_a=100e-6), None, None, meta())
    assert bare.expanded_u_a is None and bare.outcome == "pass" and "U = 0" in bare.reason


def test_report_headline_names_the_reverse_result(tmp_path):
    from benchlog.report.build import build_report
    from benchlog.report.document import VerdictBlock

    doc = build_report([SAMPLE], spec_path=RECT)

    def blocks(sections):
        for s in sections:
            yield from s.blocks
            yield from blocks(s.subsections)

    verdict = next(b for b in blocks(doc.sections) if isinstance(b, VerdictBlock))
    assert verdict.outcome == "conditional" and "reverse CONDITIONAL" in verdict.headline


def test_a_lot_part_whose_reverse_leakage_fails_fails_the_lot(tmp_path):
    # One judging path: a part's verdict in `lot` is the worse of forward and reverse, as `check` gives it.
    # The sample's reverse reading, raised to 1 mA at 12 V: 200× the spec's 5 µA at 25 °C (the plan's own
    # limit of 0.1 mA is exceeded too), so the reverse verdict fails whatever the guard band.
    text = SAMPLE.read_text(encoding="utf-8")
    line = next(s for s in text.splitlines() if s.startswith('{"record":"reverse"'))
    leaky = json.loads(line)
    leaky.update(current_a=1e-3, passed=False)
    bad = tmp_path / "rectifier-leaky.run"
    bad.write_text(text.replace(line, json.dumps(leaky, separators=(",", ":"))), encoding="utf-8")
    good = SAMPLE.parent / "rectifier-prototype.run"
    code, out, _ = cli("check", bad, "--spec", RECT, "--json")
    c = json.loads(out)
    assert c["forward_verdict"] == "pass" and c["reverse"]["verdict"] == "fail" and c["verdict"] == "fail"
    code, out, _ = cli("lot", good, SAMPLE, bad, "--spec", RECT, "--json")
    lot = json.loads(out)
    by_run = {Path(p["run"]).name: p["verdict"] for p in lot["parts"]}
    # the same verdict as check gives each run: the leaky part fails, the sample's conditional reverse stays
    assert by_run == {good.name: "pass", SAMPLE.name: "conditional", bad.name: "fail"}
    assert lot["verdict"] == "fail" and code != 0
    assert any("worse of forward and reverse" in n and "reverse not passed" in n for n in lot["notes"])
    code, text_out, _ = cli("lot", good, bad, "--spec", RECT)
    assert text_out.startswith("FAIL")
