"""`lot_from_runs` on run files: the light loader and the spec kind's model give what `fit_run` gives.

The lot path replaces, per run, `load` + `fit_run(frame, meta, model)` by `load_points` +
`fit_points`; the reference below is the replaced path itself, run file by run file.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

from benchlog.analysis.fits import fit_run
from benchlog.analysis.judging import judge_run
from benchlog.analysis.lot import fit_points, lot_model
from benchlog.report.lot_runs import lot_from_runs
from benchlog.specfiles import load_spec
from benchlog.analysis.verdict import run_conditions
from benchlog.badinput import BadInput
from benchlog.runs import RunWriter, load, load_points
from benchlog.runs.events import FLAG_OVERLOAD, FLAG_UNSETTLED, Offset, Point, RunFinished, RunStarted
from tests.runs.samples import header

REPO = Path(__file__).resolve().parents[2]
SPECS = REPO / "benchlog" / "demo" / "specs"
LOT = sorted((REPO / "sample_runs" / "lot-demo-07").glob("*.run"))
PFET = SPECS / "demo-pfet-10m.toml"


def reference(paths, spec, model):
    """Per-part (value, std_u, U) by the path `check` takes: load + fit_run, judged by `judging.judge_run`
    (U the one the verdict used: k_p·u of the comparison's budget)."""
    out, vf_at = [], None
    for path in paths:
        frame, meta = load(path)
        vf_at = vf_at or run_conditions(frame["current_a"].to_numpy(), frame["supply_v"].to_numpy(), meta, spec).current_a  # the first run's current
        j = judge_run(frame, meta, spec, at_a=vf_at)
        assert fit_run(frame, meta, model).model == model
        out.append((j.value, j.std_u, j.decision_u))
    return out


def assert_parts_match(summary, expected, paths):
    assert [p.run for p in summary.parts] == [str(p) for p in paths]  # the order given
    for part, (value, u, big_u) in zip(summary.parts, expected):
        assert part.value == pytest.approx(value, rel=1e-12, abs=0)
        assert part.std_u == pytest.approx(u, rel=1e-12, abs=0)
        assert part.expanded_u == pytest.approx(big_u, rel=1e-12, abs=0)


def test_lot_demo_07_matches_fit_run_part_by_part():
    assert len(LOT) == 20
    spec = load_spec(PFET)
    summary = lot_from_runs(LOT, spec, workers=1)
    assert summary.quantity == "r_on_ohm" and summary.n == 20
    assert_parts_match(summary, reference(LOT, spec, "resistive"), LOT)
    values = np.array([v for v, _, _ in reference(LOT, spec, "resistive")])
    # numpy reference for the statistics of the same values (sample σ, ddof = 1)
    assert summary.mean == pytest.approx(values.mean(), rel=1e-12)
    assert summary.std == pytest.approx(values.std(ddof=1), rel=1e-12)
    assert [p.serial for p in summary.parts] == [f"L07-{i:04d}" for i in range(1, 21)]
    assert any("resistive model" in n and "not the automatic model choice" in n for n in summary.notes)


def test_process_pool_gives_the_same_summary_in_the_same_order():
    spec = load_spec(PFET)
    serial = lot_from_runs(LOT, spec, workers=1)
    pooled = lot_from_runs(LOT, spec, workers=2)
    assert pooled == serial  # frozen dataclasses: every field, every part, in order


@pytest.mark.parametrize("spec_name,runs", [
    ("demo-rect-3a.toml", ["rectifier-prototype", "rectifier-reverse", "rectifier-self-heating"]),
    ("demo-schottky-2a.toml", ["schottky-prototype"]),
])
def test_diode_lots_take_vf_at_the_current_from_the_diode_law(spec_name, runs):
    spec = load_spec(SPECS / spec_name)
    paths = [REPO / "sample_runs" / f"{r}.run" for r in runs]
    assert lot_model(spec) == "diode"
    summary = lot_from_runs(paths, spec, workers=1)
    assert summary.quantity == "drop_v"
    assert_parts_match(summary, reference(paths, spec, "diode"), paths)
    assert any("diode-law fit" in n for n in summary.notes)


def _write(path: Path, points, offset_v=2.0e-6, **element) -> Path:
    with RunWriter(path, fsync=False) as writer:
        writer.write(RunStarted(header(kind="pmos", **element)))
        if offset_v is not None:
            writer.write(Offset(t_s=0.01, drop_v=offset_v))
        for p in points:
            writer.write(p)
        writer.write(RunFinished(t_s=9.0, outcome="complete", points=len(points), message=""))
    return path


def _points(r_ohm: float, rng, *, overload_at=(), unread_at=(), unsettled_at=()):
    out = []
    for i, setpoint in enumerate(np.linspace(0.2, 3.0, 12)):
        setpoint = float(setpoint)
        current = setpoint + float(rng.normal(0, 1e-4))
        drop = 3e-5 + r_ohm * current + float(rng.normal(0, 2e-7))
        flags = ()
        if i in overload_at:
            flags, drop = (FLAG_OVERLOAD,), (math.nan if i % 2 else drop)  # a flagged point, read or not
        if i in unsettled_at:
            flags = flags + (FLAG_UNSETTLED,)
        if i in unread_at:
            current = math.nan  # the current meter had no reading
            flags = flags + (FLAG_OVERLOAD,)
        out.append(Point(index=i, t_s=0.1 * (i + 1), setpoint_a=setpoint, current_a=current, drop_v=drop,
                         supply_v=12.0, supply_mode="CC", temperature_c=30.0 + i, settle_reads=2,
                         direction="up", flags=flags))
    return out


def test_left_out_points_offset_and_temperature_as_fit_run(tmp_path):
    # Overload points (with and without a reading), an unread current, unsettled points kept,
    # a zero-current offset and recorded temperatures: each must be treated as fit_run treats it.
    rng = np.random.default_rng(4)
    paths = [
        _write(tmp_path / "a.run", _points(0.010, rng, overload_at=(3, 4), unsettled_at=(7,))),
        _write(tmp_path / "b.run", _points(0.011, rng, unread_at=(5,)), offset_v=None),
        _write(tmp_path / "c.run", _points(0.0105, rng)),
    ]
    for model in ("resistive", "diode"):
        for path in paths:
            frame, meta = load(path)
            points, meta_light = load_points(path)
            try:
                want = fit_run(frame, meta, model)
            except BadInput as exc:
                with pytest.raises(BadInput) as caught:
                    fit_points(points, meta_light, model)
                assert caught.value.line() == exc.line()
                continue
            got = fit_points(points, meta_light, model)
            assert got.model == want.model and set(got.params) == set(want.params)
            for name in want.params:
                assert got.params[name] == pytest.approx(want.params[name], rel=1e-12, abs=0)
                assert got.std_u[name] == pytest.approx(want.std_u[name], rel=1e-12, abs=0)
            assert np.array_equal(got.point_index, want.point_index)
            assert got.temperature_c == want.temperature_c
    spec = load_spec(PFET)
    assert_parts_match(lot_from_runs(paths, spec, workers=1), reference(paths, spec, "resistive"), paths)


def test_bad_file_gives_the_bad_input_of_the_first_bad_file_in_order(tmp_path):
    spec = load_spec(PFET)
    rng = np.random.default_rng(9)
    good = [_write(tmp_path / f"g{i}.run", _points(0.010, rng)) for i in range(6)]
    broken = tmp_path / "broken.run"
    lines = good[0].read_text(encoding="utf-8").split("\n")
    lines[3] = lines[3].replace("\tup\t", "\tleft\t")
    broken.write_text("\n".join(lines), encoding="utf-8")
    too_few = _write(tmp_path / "few.run", _points(0.010, rng)[:2])
    with pytest.raises(BadInput) as expected:
        load(broken)
    assert expected.value.where == "line 4"
    order = good[:2] + [broken] + good[2:4] + [too_few] + good[4:]
    for workers in (1, 2):
        with pytest.raises(BadInput) as caught:
            lot_from_runs(order, spec, workers=workers)
        assert caught.value.line() == expected.value.line()
    # A run that cannot be fitted: the BadInput fit_run gives, naming the run file.
    with pytest.raises(BadInput) as fit_error:
        fit_run(*load(too_few), "resistive")
    for workers in (1, 2):
        with pytest.raises(BadInput) as caught:
            lot_from_runs(good[:3] + [too_few] + good[3:], spec, workers=workers)
        assert caught.value.line() == fit_error.value.line() and str(too_few) in caught.value.line()


def test_no_runs_and_wrong_kind_are_bad_input(tmp_path):
    spec = load_spec(PFET)
    with pytest.raises(BadInput, match="no run files"):
        lot_from_runs([], spec)
    rect = load_spec(SPECS / "demo-rect-3a.toml")
    with pytest.raises(BadInput, match="kind"):
        lot_from_runs(LOT[:3], rect)


def test_body_diode_measured_on_purpose_is_a_diode_lot(tmp_path):
    spec = load_spec(PFET)
    path = _write(tmp_path / "body.run", _points(0.010, np.random.default_rng(2)), measure="body_diode")
    assert json.loads(path.read_text(encoding="utf-8").split("\n")[0])["element"]["measure"] == "body_diode"
    points, meta = load_points(path)
    cond = run_conditions(points.current_a, points.supply_v, meta, spec)
    assert cond.body_diode and lot_model(spec, cond.body_diode) == "diode"
