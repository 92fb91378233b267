"""The ILAC-G8 guard-band decision rule, and a run judged against its spec."""

from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest

from benchlog.analysis.judging import check_run
from benchlog.analysis.verdict import decide, decide_many
from benchlog.badinput import BadInput
from benchlog.runs.record import RunHeader, new_run_id

from .spec_texts import PMOS, RECT, spec

# ILAC-G8:09/2019 §4.2.2, guard band w = U, upper limit 1.0 and U = 0.25 (binary-exact numbers,
# so the boundaries are tested exactly): acceptance limit 0.75, rejection limit 1.25.
UPPER_TABLE = [
    (0.50, "pass"),
    (0.75, "pass"),  # x + U = limit: within, accepted
    (0.76, "conditional"),
    (1.00, "conditional"),  # on the limit itself: neither provable
    (1.25, "conditional"),  # x − U = limit: not outside
    (1.26, "fail"),
    (2.00, "fail"),
]


@pytest.mark.parametrize("x, outcome", UPPER_TABLE)
def test_upper_limit_rule_table(x, outcome):
    v = decide(x, 0.25, 1.0, quantity="loss_w", limit_source="test")
    assert v.outcome == outcome
    assert "ILAC-G8:09/2019" in v.rule and "k = 2" in v.rule
    assert (v.measured, v.expanded_u, v.limit, v.k, v.side) == (x, 0.25, 1.0, 2.0, "upper")
    assert "test" in v.explain()


@pytest.mark.parametrize("x, outcome", [(1.5, "pass"), (1.25, "pass"), (1.0, "conditional"),
                                         (0.75, "conditional"), (0.74, "fail")])
def test_lower_limit_mirrors_upper(x, outcome):
    # Same rule with the inequalities reversed (ILAC-G8:09/2019 §4.2.2 applies to either limit).
    assert decide(x, 0.25, 1.0, side="lower").outcome == outcome


def test_zero_uncertainty_is_simple_acceptance():
    # With U = 0 the guard band vanishes (ILAC-G8:09/2019 §4.2.1, simple acceptance).
    assert decide(1.0, 0.0, 1.0).outcome == "pass"
    assert decide(1.0000001, 0.0, 1.0).outcome == "fail"


def test_vectorised_rule_equals_scalar_rule():
    x = np.array([x for x, _ in UPPER_TABLE])
    assert list(decide_many(x, np.full(x.size, 0.25), 1.0)) == [o for _, o in UPPER_TABLE]


@pytest.mark.parametrize("args", [(float("nan"), 0.1, 1.0), (1.0, -0.1, 1.0), (1.0, 0.1, float("inf"))])
def test_nonsense_is_bad_input(args):
    with pytest.raises(BadInput):
        decide(*args)


# --------------------------------------------------------------------------- check_run
def sweep(r_ohm, noise_v=20e-6, n=21, seed=1, operating_a=None, kind="pmos", top_a=3.0, complete=True,
          outcome="complete", gate_v=10.0):
    """Invented demo data: a resistive drop with meter noise (dependency injection of a loaded run)."""
    rng = np.random.default_rng(seed)
    current = np.linspace(0.1, top_a, n)
    drop = r_ohm * current + rng.normal(0.0, noise_v, n)
    frame = pd.DataFrame({"index": np.arange(n), "t_s": np.arange(n, dtype=float), "setpoint_a": current,
                          "current_a": current, "drop_v": drop, "supply_v": np.nan, "supply_mode": "CC",
                          "temperature_c": np.nan, "settle_reads": 1, "direction": "up", "flags": "",
                          "power_w": current * drop})
    element = {"id": "U1", "kind": kind, "serial": "S1", "lot": "L1", "ambient_c": 25.0}
    plan = {"element": dict(element, operating_a=operating_a, gate="driven", gate_v=gate_v)}
    header = RunHeader.from_table({"tool_version": "test", "started_utc": "2025-01-01T00:00:00Z",
                                   "run_id": new_run_id(), "plan": plan, "element": element})
    meta = SimpleNamespace(path="demo.run", header=header, offset_v=None, outcome=outcome, complete=complete,
                           finished=None, reverse=None)
    return frame, meta


MOS = spec(PMOS + "rds_on_max_ohm = 0.032\n", "pmos.toml")


def test_check_pass_fail_conditional_against_max():
    # Limit: 2 A through 32 mΩ max = 0.128 W (no thermal data, Tj = ambient): hand arithmetic.
    ok = check_run(*sweep(0.026, operating_a=2.0), MOS)
    assert ok.current_a == 2.0 and "operating_a" in ok.current_source
    assert ok.verdict.limit == pytest.approx(0.128, rel=1e-6)
    assert ok.measured_loss_w == pytest.approx(0.104, rel=2e-3)
    assert ok.outcome == "pass" and ok.drop_verdict.outcome == "pass"
    assert "typical" in ok.typical_comparison
    bad = check_run(*sweep(0.045, operating_a=2.0), MOS)
    assert bad.outcome == "fail"
    # Right on the limit with noise large enough that U straddles it: conditional.
    edge = check_run(*sweep(0.032, noise_v=2e-3, operating_a=2.0), MOS)
    assert abs(edge.measured_loss_w - 0.128) < edge.verdict.expanded_u
    assert edge.outcome == "conditional"


def test_check_default_current_is_largest_measured():
    c = check_run(*sweep(0.026), MOS)
    assert c.current_a == pytest.approx(3.0) and "largest measured" in c.current_source
    c = check_run(*sweep(0.026), MOS, at_a=1.5)
    assert c.current_a == 1.5


def test_check_refuses_a_spec_of_another_kind():
    with pytest.raises(BadInput, match="kind"):
        check_run(*sweep(0.026), spec(RECT, "rect.toml"))


# --------------------------------------------------------------------------- extrapolation and unfinished runs
def test_an_operating_current_far_above_the_sweep_is_at_best_conditional():
    # Sweep to 1.2 A, judged at 2 A: 67 % beyond the largest fitted current. The guard band alone would
    # pass it (the same part passes at 2 A from a sweep to 3 A, above); the extrapolation rule bars that.
    full = check_run(*sweep(0.026, operating_a=2.0), MOS)
    short = check_run(*sweep(0.026, operating_a=2.0, top_a=1.2), MOS)
    assert full.outcome == "pass" and not full.extrapolation.side
    assert short.measured_loss_w == pytest.approx(full.measured_loss_w, rel=5e-3)
    assert decide(short.measured_loss_w, short.verdict.expanded_u, short.verdict.limit).outcome == "pass"
    assert short.outcome == "conditional" and short.drop_verdict.outcome == "conditional"
    ext = short.extrapolation
    assert ext.side == "above" and ext.fitted_max_a == pytest.approx(1.2)
    assert ext.beyond == pytest.approx(2.0 / 1.2 - 1.0) and ext.bars_pass
    assert "extrapolated" in short.verdict.explain() and "at best conditional" in short.verdict.caveat
    assert any("extrapolated" in note for note in short.notes)


def test_a_small_extrapolation_keeps_the_outcome_and_says_so():
    # 1.3 A on a sweep to 1.2 A is 8.3 % beyond: within the 10 % margin
    c = check_run(*sweep(0.026, top_a=1.2), MOS, at_a=1.3)
    assert c.extrapolation.side == "above" and not c.extrapolation.bars_pass
    assert c.outcome == "pass" and "extrapolated" in c.verdict.caveat
    inside = check_run(*sweep(0.026, top_a=1.2), MOS, at_a=1.0)
    assert inside.extrapolation.side == "" and inside.verdict.caveat == ""
    assert not any("extrapolated" in note for note in inside.notes)


def test_an_extrapolated_fail_stays_a_fail():
    c = check_run(*sweep(0.045, top_a=1.2), MOS, at_a=2.0)
    assert c.outcome == "fail" and "extrapolated" in c.verdict.caveat


def test_below_the_smallest_fitted_current_is_an_extrapolation_too():
    c = check_run(*sweep(0.026), MOS, at_a=0.05)  # the sweep starts at 0.1 A: 50 % below
    assert c.extrapolation.side == "below" and c.extrapolation.bars_pass
    assert c.outcome != "pass"


def test_an_unfinished_run_is_named():
    killed = check_run(*sweep(0.026, operating_a=2.0, complete=False, outcome="incomplete"), MOS)
    assert killed.run_complete is False and killed.run_outcome == "incomplete"
    assert any("incomplete" in note for note in killed.notes)
    cancelled = check_run(*sweep(0.026, operating_a=2.0, outcome="cancelled"), MOS)
    assert cancelled.run_complete is False and any("'cancelled'" in note for note in cancelled.notes)
    whole = check_run(*sweep(0.026, operating_a=2.0), MOS)
    assert whole.run_complete is True and not any("incomplete" in note for note in whole.notes)
