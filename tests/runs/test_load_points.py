"""The light loader `load_points` against `load`: the same numbers bit for bit, the same BadInput line."""

from __future__ import annotations

import math
import tempfile
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from benchlog.badinput import BadInput
from benchlog.runs import PointArrays, RunWriter, load, load_points, read_events
from benchlog.runs import loader
from benchlog.runs.events import Point
from benchlog.runs.format import POINT_COLUMNS, POINT_FLOAT_COLUMNS, POINT_INTEGER_COLUMNS

from .samples import every_kind
from .test_corrupt import CASES, good_lines, p_line  # noqa: F401  (good_lines is a fixture)
from .test_fuzz import TOKENS, mutated

REPO = Path(__file__).resolve().parents[2]
SAMPLE_RUNS = sorted((REPO / "sample_runs").rglob("*.run"))


def assert_same(points: PointArrays, frame, meta_light, meta) -> None:
    """Every point column of `points` equals the frame's, and the metadata is the same."""
    assert len(points) == len(frame)
    for name in POINT_INTEGER_COLUMNS:
        got = getattr(points, name)
        assert got.dtype == np.int64 and np.array_equal(got, frame[name].to_numpy()), name
    for name in POINT_FLOAT_COLUMNS:
        got, want = getattr(points, name), frame[name].to_numpy()
        assert got.dtype == np.float64 and want.dtype == np.float64, name
        # Bit for bit: equal values, NaN in the same places (array_equal with equal_nan).
        assert np.array_equal(got, want, equal_nan=True), name
    assert np.array_equal(points.power_w, frame["power_w"].to_numpy(), equal_nan=True)
    modes = [None if not isinstance(v, str) else v for v in frame["supply_mode"].astype(object)]
    assert list(points.supply_mode) == modes
    assert list(points.direction) == list(frame["direction"].astype(object))
    assert list(points.flags) == list(frame["flags"].astype(object))
    assert meta_light == meta  # RunMeta is a frozen dataclass: every field compared


@pytest.mark.parametrize("path", SAMPLE_RUNS, ids=[str(p.relative_to(REPO / "sample_runs")) for p in SAMPLE_RUNS])
def test_sample_runs_load_to_the_same_numbers(path):
    points, meta_light = load_points(path)
    frame, meta = load(path)
    assert_same(points, frame, meta_light, meta)


def test_sample_runs_are_many_and_take_the_quick_path(monkeypatch):
    # The check above is only worth its name if it covers the folder and the quick path itself
    # (not the line-reader fallback, which would be right but slow): with the line reader
    # taken away from the parser, every sample still loads.
    assert len(SAMPLE_RUNS) >= 25
    lengths = {path: len(load(path)[0]) for path in SAMPLE_RUNS}

    def no_line_reader(path):
        raise AssertionError(f"{path} fell back to the line reader")

    monkeypatch.setattr(loader, "read_records", no_line_reader)
    for path in SAMPLE_RUNS:
        points, _ = load_points(path)
        assert len(points) == lengths[path]
        frame, _ = load(path)
        assert len(frame) == lengths[path]


def test_every_kind_of_point_and_record(tmp_path):
    # Overload point (NaN drop), unread supply and temperature, two flags, a note with a tab.
    path = tmp_path / "all.run"
    with RunWriter(path, fsync=False) as writer:
        for event in every_kind():
            writer.write(event)
    points, meta_light = load_points(path)
    frame, meta = load(path)
    assert_same(points, frame, meta_light, meta)
    assert math.isnan(points.drop_v[3]) and points.supply_mode[1] is None
    assert list(points.has_flag("overload")) == [False, False, False, True]
    assert list(points.has_flag("unsettled")) == [False, True, True, False]
    # The line reader's own values, as a third opinion.
    read = [e for e in read_events(path) if isinstance(e, Point)]
    assert points.drop_v[0] == read[0].drop_v == 0.5812345678901234


@pytest.mark.parametrize("name,build,line,words", CASES, ids=[c[0] for c in CASES])
def test_corrupt_file_gives_the_same_bad_input_line(tmp_path, good_lines, name, build, line, words):
    content = build(good_lines)
    path = tmp_path / "bad.run"
    if isinstance(content, bytes):
        path.write_bytes(content)
    else:
        path.write_text(content, encoding="utf-8")
    with pytest.raises(BadInput) as light:
        load_points(path)
    with pytest.raises(BadInput) as full:
        load(path)
    assert light.value.line() == full.value.line()
    assert light.value.where == f"line {line}" and words in light.value.line()


def test_missing_file_is_the_same_bad_input(tmp_path):
    errors = []
    for reader in (load_points, load):
        with pytest.raises(BadInput) as caught:
            reader(tmp_path / "nope.run")
        errors.append(caught.value.line())
    assert errors[0] == errors[1] and "file not found" in errors[0]


@pytest.mark.parametrize("cut", [1, 5, 20])
def test_torn_last_line(tmp_path, good_lines, cut):
    path = tmp_path / "torn.run"
    path.write_text("\n".join(good_lines[:-1]) + "\n" + p_line()[:cut], encoding="utf-8")
    points, meta_light = load_points(path)
    assert meta_light.torn and meta_light.outcome == "incomplete"
    assert_same(points, *load(path)[:1], meta_light, load(path)[1])


def test_spellings_the_quick_path_refuses_are_read_by_the_line_reader(tmp_path, good_lines, monkeypatch):
    # Blanks around a number and a mode, fewer trailing fields: the line reader takes them
    # (as `load` does); the quick path hands them over instead of guessing.
    odd = "\t".join(["P", "7", " 4.0 ", "1.0", "1.0", "0.8", "5.0", " CC", "", "2", "up"])
    path = tmp_path / "odd.run"
    path.write_text("\n".join(good_lines[:-1] + [odd, good_lines[-1]]) + "\n", encoding="utf-8")
    used = []
    line_reader = loader.read_records
    monkeypatch.setattr(loader, "read_records", lambda p: used.append(p) or line_reader(p))
    points, meta = load_points(path)
    assert used == [path]  # the quick split refused and the line reader read the file
    frame, meta_full = load(path)
    assert_same(points, frame, meta, meta_full)
    assert points.t_s[-1] == 4.0 and points.supply_mode[-1] == "CC" and points.flags[-1] == ""


def test_large_file_goes_through_load(tmp_path, monkeypatch):
    path = tmp_path / "all.run"
    with RunWriter(path, fsync=False) as writer:
        for event in every_kind():
            writer.write(event)
    quick = load_points(path)
    monkeypatch.setattr(loader, "SMALL_FILE_B", 100)  # every file is "large" now
    big = load_points(path)
    frame, meta = load(path)
    assert_same(big[0], frame, big[1], meta)
    assert_same(quick[0], frame, quick[1], meta)


def test_no_points(tmp_path, good_lines):
    path = tmp_path / "header.run"
    path.write_text(good_lines[0] + "\n", encoding="utf-8")
    points, meta = load_points(path)
    assert len(points) == 0 and meta.points == 0 and not meta.complete
    assert all(len(getattr(points, c)) == 0 for c in POINT_COLUMNS)
    assert_same(points, *load(path)[:1], meta, load(path)[1])


# --- fuzzing: whatever load says, load_points says ------------------------------------------------

_DIR = Path(tempfile.mkdtemp(prefix="benchlog-points-fuzz-"))
FUZZ = settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def _agree(content: bytes) -> None:
    path = _DIR / "fuzz.run"
    path.write_bytes(content)
    try:
        frame, meta = load(path)
    except BadInput as exc:
        with pytest.raises(BadInput) as light:
            load_points(path)
        assert light.value.line() == exc.line()
        return
    points, meta_light = load_points(path)
    assert_same(points, frame, meta_light, meta)


@FUZZ
@given(mutated())
def test_mutated_run_files_agree_with_load(content):
    _agree(content)


@FUZZ
@given(st.lists(st.lists(st.sampled_from(TOKENS + ["+.5", "5.", "1E+05", "\u0661", "1_0", "Infinity"]),
                         min_size=9, max_size=13), min_size=1, max_size=4))
def test_fuzzed_point_lines_agree_with_load(rows):
    header = every_kind_header()
    body = b"".join(("P\t" + "\t".join(r) + "\n").encode() for r in rows)
    _agree(header + body)


def every_kind_header() -> bytes:
    path = _DIR / "good.run"
    if not path.exists():
        with RunWriter(path, fsync=False) as writer:
            for event in every_kind():
                writer.write(event)
    return path.read_bytes().split(b"\n", 1)[0] + b"\n"


def _columns(**change):
    """Three valid points as float columns, with `change` = {column: (row, value)} applied (invented)."""
    base = {"index": [0.0, 1.0, 2.0], "settle_reads": [1.0, 2.0, 3.0], "t_s": [0.1, 0.2, 0.3],
            "setpoint_a": [0.1, 0.2, 0.3], "current_a": [0.1, 0.2, 0.3], "drop_v": [0.5, 0.6, 0.7],
            "supply_v": [12.0, math.nan, 12.0], "temperature_c": [25.0, math.nan, 26.0]}
    for name, (row, value) in change.items():
        base[name][row] = value
    return {k: np.array(v) for k, v in base.items()}


@pytest.mark.parametrize("change, overload_row, ok", [
    ({}, None, True),
    ({"index": (1, -1.0)}, None, False),  # a negative index
    ({"index": (2, 1.0)}, None, False),  # not increasing
    ({"settle_reads": (0, 1.5)}, None, False),  # not a whole number
    ({"t_s": (0, math.nan)}, None, False),  # t_s may never be empty
    ({"drop_v": (1, math.nan)}, None, False),  # an empty reading without the overload flag
    ({"drop_v": (1, math.nan)}, 1, True),  # ... with it
    ({"current_a": (2, math.nan)}, 1, False),  # the flag on another point
    ({"supply_v": (0, 2e9)}, None, False),  # beyond MAX_MAGNITUDE
    ({"temperature_c": (2, -300.0)}, None, False),  # below absolute zero
])
def test_block_and_column_checks_are_the_same_rule(monkeypatch, change, overload_row, ok):
    # The short-column block check and the per-column check must accept and refuse the same
    # columns (the line reader is the reference for both; here they meet on crafted cases).
    from benchlog.runs import point_rules

    numbers = _columns(**change)
    overload = np.zeros(3, dtype=bool)
    if overload_row is not None:
        overload[overload_row] = True
    answers = []
    for limit in (point_rules.BLOCK_MAX_POINTS, -1):
        monkeypatch.setattr(point_rules, "BLOCK_MAX_POINTS", limit)
        answers.append(point_rules.numbers_ok(numbers, overload))
    assert answers == [ok, ok]
