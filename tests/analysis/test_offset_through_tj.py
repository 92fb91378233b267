"""A current offset reaches a diode's judged error by two paths: the fitted drop and the inferred Tj.

The judged claim is "Vf at the stated Tj is value ± U"; an offset o of the current reading moves
the value and also the rise Tj is inferred from (the fit's weights, the recorded power), and the
truth at that Tj moves by dVf/dT·ΔTj. The offset's term is the sum's shift (GUM 5.1.3, one input
by two paths). Reference: the same public judgement of the run with its current column shifted
by u(o), differenced here.
"""

from dataclasses import replace
from pathlib import Path

import pytest

from benchlog.analysis.fits import fit_run
from benchlog.analysis.judging import judge_run, vf_tempco
from benchlog.runs import load
from benchlog.specfiles import load_spec

REPO = Path(__file__).resolve().parents[2]
RUN = REPO / "sample_runs" / "rectifier-prototype.run"
SPEC = REPO / "benchlog" / "demo" / "specs" / "demo-rect-3a.toml"
TERM = "supply read-back offset"


def test_the_offset_term_is_the_judged_errors_shift_by_both_paths():
    frame, meta = load(RUN)
    spec = load_spec(SPEC)
    j = judge_run(frame, meta, spec)
    assert j.tj.source == "inferred"
    h = meta.header.accuracy.current.offset_u
    moved = judge_run(frame.assign(current_a=frame["current_a"] + h), meta, spec)
    tempco, _ = vf_tempco(spec, body_diode=False)
    drop_path = moved.value - j.value
    tj_path = -tempco * (moved.tj.value_c - j.tj.value_c)
    assert abs(tj_path) > 0.01 * abs(drop_path)  # the second path matters on this run
    assert j.budget.component(TERM).u == pytest.approx(abs(drop_path + tj_path), rel=1e-6)


def test_without_a_zth_rise_the_term_is_the_fits_own():
    # no transient thermal impedance: Tj is not inferred from the pulses' power, only the drop moves
    frame, meta = load(RUN)
    spec = load_spec(SPEC)
    no_zth = replace(spec, thermal=replace(spec.thermal, zth_t_s=None, zth_k_per_w=None))
    j = judge_run(frame, meta, no_zth)
    fit = fit_run(frame, meta, "diode")
    assert j.budget.component(TERM).u == pytest.approx(fit.drop_budget_at(j.current_a).component(TERM).u, rel=1e-9)
    # and with the Zth the two paths give a different (smaller, on this run) term
    assert judge_run(frame, meta, spec).budget.component(TERM).u < 0.99 * j.budget.component(TERM).u
