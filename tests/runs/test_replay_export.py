"""Replay yields exactly the recorded events at the chosen speed; CSV export reads back to the loaded frame."""

from __future__ import annotations

import csv
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from benchlog.badinput import BadInput
from benchlog.cli import main
from benchlog.runs import RunFinished, RunWriter, export_csv, load, replay
from benchlog.runs.events import Point

from .samples import every_kind
from .test_roundtrip import same_events

ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture()
def run_file(tmp_path) -> Path:
    path = tmp_path / "r.run"
    with RunWriter(path, fsync=False) as writer:
        for event in every_kind():
            writer.write(event)
    return path


def test_replay_yields_exactly_the_recorded_events(run_file):
    slept: list[float] = []
    events = list(replay(run_file, sleep=slept.append))
    assert same_events(events, every_kind())
    assert slept == []  # speed None: as fast as possible


def test_replay_sleeps_the_recorded_gaps_scaled_by_speed(run_file):
    slept: list[float] = []
    list(replay(run_file, speed=2.0, sleep=slept.append))
    times = [0.0] + [e.t_s for e in every_kind()[1:]]  # the header is t = 0
    expected = [(b - a) / 2.0 for a, b in zip(times, times[1:]) if b > a]
    assert slept == pytest.approx(expected)
    assert sum(slept) == pytest.approx(every_kind()[-1].t_s / 2.0)


def test_replay_sleeps_between_events_not_after(run_file):
    # each sleep happens before its event is yielded, so a consumer sees the gap in real time
    log: list[object] = []
    for event in replay(run_file, speed=1.0, sleep=lambda s: log.append(("sleep", s))):
        log.append(type(event).__name__)
    assert log[0] == "RunStarted" and log[1][0] == "sleep" and log[-1] == "RunFinished"


@pytest.mark.parametrize("speed", [0, -1.0, math.nan, math.inf])
def test_replay_refuses_a_nonsense_speed(run_file, speed):
    with pytest.raises(BadInput, match="speed"):
        next(replay(run_file, speed=speed))


def test_killed_run_replays_without_a_finish(run_file):
    # The documented choice: a killed run's stream ends after its last point, with no
    # RunFinished, exactly as the live stream ended.
    lines = run_file.read_bytes().split(b"\n")
    killed = run_file.with_name("killed.run")
    killed.write_bytes(b"\n".join(lines[:-2]) + b"\n" + b"P\t7\t2.5\t1.0")  # torn last point
    events = list(replay(killed))
    assert same_events(events, every_kind()[:-1])
    assert not any(isinstance(e, RunFinished) for e in events)


def _read_csv_stdlib(path: Path) -> tuple[list[str], list[list[str]]]:
    # the stdlib csv reader is the outside reference for "plain CSV" (RFC 4180 dialect)
    with open(path, newline="", encoding="utf-8") as f:
        rows = list(csv.reader(f))
    return rows[0], rows[1:]


def test_csv_export_round_trip(run_file, tmp_path):
    out = tmp_path / "points.csv"
    export_csv(run_file, out)
    frame, _ = load(run_file)
    names, rows = _read_csv_stdlib(out)
    assert names == ["index", "t_s", "setpoint_a", "current_a", "drop_v", "supply_v", "supply_mode",
                     "temperature_c", "settle_reads", "direction", "flags", "power_w"]
    assert len(rows) == len(frame)
    for name in ("t_s", "setpoint_a", "current_a", "drop_v", "supply_v", "temperature_c", "power_w"):
        column = np.array([float(r[names.index(name)]) if r[names.index(name)] else np.nan for r in rows])
        assert np.allclose(column, frame[name].to_numpy(), rtol=0, atol=0, equal_nan=True), name
    assert [r[names.index("flags")] for r in rows] == ["", "unsettled", "compliance|unsettled", "overload"]
    assert [r[names.index("supply_mode")] for r in rows] == ["CC", "", "CV", "OFF"]
    assert [int(r[0]) for r in rows] == frame["index"].tolist()


def test_export_command_exit_codes(run_file, tmp_path, capsys):
    out = tmp_path / "cli.csv"
    assert main(["export", str(run_file), "--csv", str(out)]) == 0
    assert "4 points" in capsys.readouterr().out and out.exists()

    bad = tmp_path / "bad.run"
    bad.write_text("not a run\n")
    assert main(["export", str(bad), "--csv", str(tmp_path / "x.csv")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and f"{bad}: line 1:" in err and "Traceback" not in err
    assert not (tmp_path / "x.csv").exists()


def test_export_command_in_a_real_process(tmp_path):
    missing = tmp_path / "missing.run"
    done = subprocess.run([sys.executable, "-m", "benchlog", "export", str(missing), "--csv",
                           str(tmp_path / "y.csv")], cwd=ROOT, capture_output=True, text=True, timeout=60)
    assert done.returncode == 2 and done.stderr.count("\n") == 1 and "file not found" in done.stderr
    assert "Traceback" not in done.stderr


def test_points_in_replay_match_the_loaded_frame(run_file):
    points = [e for e in replay(run_file) if isinstance(e, Point)]
    frame, _ = load(run_file)
    assert [p.index for p in points] == frame["index"].tolist()
    np.testing.assert_array_equal([p.current_a for p in points], frame["current_a"].to_numpy())
