"""Every event kind written by RunWriter reads back as the same event; the writer refuses what it cannot store."""

from __future__ import annotations

import dataclasses
import math
import os
import subprocess
import sys
import textwrap
import threading

import numpy as np
import pytest

from benchlog.runs import (
    FRAME_COLUMNS,
    Point,
    RunFinished,
    RunStarted,
    RunWriteError,
    RunWriter,
    load,
    new_run_path,
    read_events,
)
from benchlog.runs.format import FORMAT_NAME, POINT_COLUMNS
from benchlog.runs.record import RunHeader

from .samples import every_kind, header


def _key(event):
    """Event as a comparable tuple, NaN made comparable (NaN marks an overload reading)."""
    values = dataclasses.astuple(event) if not isinstance(event, RunStarted) else (event.header,)
    return (type(event).__name__,) + tuple("NaN" if isinstance(v, float) and math.isnan(v) else v
                                           for v in values)


def same_events(a, b) -> bool:
    return [_key(e) for e in a] == [_key(e) for e in b]


def write_all(path, events, **kwargs) -> RunWriter:
    with RunWriter(path, **kwargs) as writer:
        for event in events:
            writer.write(event)
    return writer


def test_every_event_kind_reads_back_identically(tmp_path):
    events = every_kind()
    path = tmp_path / "r.run"
    writer = write_all(path, events)
    assert writer.durable_count == len(events)
    assert writer.durable_points == 4
    back = list(read_events(path))
    assert same_events(back, events)
    # floats round-trip bit for bit: repr gives the shortest text that reads back to the same
    # binary64 (Python float repr, IEEE 754 shortest round trip)
    assert back[2].drop_v == 0.5812345678901234


def test_file_layout_is_header_then_p_lines_and_json(tmp_path):
    path = tmp_path / "r.run"
    write_all(path, every_kind())
    lines = path.read_text(encoding="utf-8").split("\n")
    assert lines[-1] == ""  # every record ends in a newline
    assert lines[0].startswith('{"record":"header"') and f'"format":"{FORMAT_NAME}"' in lines[0]
    assert lines[2].split("\t") == ["P", "0", "0.5", "0.1", "0.1000012", "0.5812345678901234",
                                    "1.25", "CC", "24.1", "3", "up", ""]
    assert lines[3].split("\t")[6:] == ["", "", "", "12", "up", "unsettled"]
    assert lines[5].endswith("\tdown\tcompliance|unsettled")
    assert [ln[:1] for ln in lines[:-1]] == ["{", "{", "P", "P", "{", "P", "P", "{", "{"]


def test_load_gives_the_points_as_columns(tmp_path):
    path = tmp_path / "r.run"
    events = every_kind()
    write_all(path, events)
    frame, meta = load(path)
    points = [e for e in events if isinstance(e, Point)]
    assert list(frame.columns) == list(FRAME_COLUMNS)
    assert frame["index"].tolist() == [0, 1, 5, 6]
    assert frame["settle_reads"].dtype == np.int64
    np.testing.assert_array_equal(frame["current_a"], [p.current_a for p in points])
    np.testing.assert_array_equal(frame["drop_v"], [p.drop_v for p in points])  # NaN == NaN here
    np.testing.assert_array_equal(frame["power_w"], [p.power_w for p in points])
    assert frame["supply_v"].isna().tolist() == [False, True, False, True]
    assert [None if isinstance(m, float) else m for m in frame["supply_mode"]] == ["CC", None, "CV", "OFF"]
    assert frame["direction"].tolist() == ["up", "up", "down", "down"]
    assert frame["flags"].tolist() == ["", "unsettled", "compliance|unsettled", "overload"]
    assert meta.complete and meta.outcome == "complete" and not meta.torn
    assert meta.offset_v == -1.25e-6 and meta.points == 4
    assert meta.element.id == "D1" and meta.header == events[0].header
    assert [n.kind for n in meta.notes] == ["warning"]
    assert meta.reverse is not None and meta.reverse.passed
    assert meta.finished == events[-1]


def test_fast_and_line_by_line_loaders_agree(tmp_path, monkeypatch):
    from benchlog.runs import loader

    path = tmp_path / "r.run"
    write_all(path, every_kind())
    fast, fast_meta = load(path)

    def refuse(*args):
        raise ValueError("splitter unsure")

    monkeypatch.setattr(loader, "_pandas_split", refuse)  # any doubt: the line reader reads the file
    slow, slow_meta = load(path)
    assert slow_meta == fast_meta
    for name in FRAME_COLUMNS:
        assert fast[name].astype(str).tolist() == slow[name].astype(str).tolist(), name


def test_an_empty_run_loads_with_no_points(tmp_path):
    path = tmp_path / "r.run"
    write_all(path, [RunStarted(header())])
    frame, meta = load(path)
    assert len(frame) == 0 and list(frame.columns) == list(FRAME_COLUMNS)
    assert not meta.complete and meta.outcome == "incomplete"


def test_on_durable_reports_every_record_reaching_the_disk(tmp_path):
    seen: list[int] = []
    path = tmp_path / "r.run"
    events = [RunStarted(header())] + [
        Point(index=i, t_s=i * 0.01, setpoint_a=0.1, current_a=0.1, drop_v=0.6) for i in range(500)
    ] + [RunFinished(t_s=6.0, outcome="complete", points=500)]
    writer = write_all(path, events, on_durable=seen.append)
    assert seen == sorted(seen) and seen[-1] == len(events) == writer.durable_count
    assert len(load(path)[0]) == 500


def test_writer_refuses_events_a_reader_would_reject(tmp_path):
    with RunWriter(tmp_path / "r.run") as writer:
        with pytest.raises(ValueError, match="first record"):
            writer.write(Point(index=0, t_s=0.0, setpoint_a=0.1, current_a=0.1, drop_v=0.6))
        writer.write(RunStarted(header()))
        bad = [
            Point(index=0, t_s=math.inf, setpoint_a=0.1, current_a=0.1, drop_v=0.6),
            Point(index=0, t_s=0.0, setpoint_a=0.1, current_a=0.1, drop_v=math.nan),  # not overload
            Point(index=0, t_s=0.0, setpoint_a=0.1, current_a=0.1, drop_v=1e300),
            Point(index=0, t_s=0.0, setpoint_a=0.1, current_a=0.1, drop_v=0.6, supply_mode="cc"),
            Point(index=0, t_s=0.0, setpoint_a=0.1, current_a=0.1, drop_v=0.6, flags=("a|b",)),
            Point(index=0, t_s=0.0, setpoint_a=0.1, current_a=0.1, drop_v=0.6, direction="left"),
            Point(index=-1, t_s=0.0, setpoint_a=0.1, current_a=0.1, drop_v=0.6),
        ]
        for point in bad:
            with pytest.raises(ValueError):
                writer.write(point)
        writer.write(Point(index=3, t_s=0.0, setpoint_a=0.1, current_a=0.1, drop_v=0.6))
        with pytest.raises(ValueError, match="does not increase"):
            writer.write(Point(index=3, t_s=0.1, setpoint_a=0.1, current_a=0.1, drop_v=0.6))
        with pytest.raises(ValueError):
            writer.write(RunStarted(header()))
        writer.write(RunFinished(t_s=1.0, outcome="complete", points=1))
        with pytest.raises(ValueError, match="end record"):
            writer.write(Point(index=4, t_s=0.1, setpoint_a=0.1, current_a=0.1, drop_v=0.6))
    assert len(list(read_events(tmp_path / "r.run"))) == 3


def test_writer_never_overwrites_a_run(tmp_path):
    path = tmp_path / "r.run"
    path.write_text("precious\n")
    with pytest.raises(FileExistsError):
        RunWriter(path)
    assert path.read_text() == "precious\n"


def test_new_run_path_is_a_plain_unique_name(tmp_path):
    hdr = header(id="../../etc/pass wd", serial="S/N:7\\x\x00")
    first = new_run_path(tmp_path / "out", hdr)
    assert first.parent == tmp_path / "out" and first.parent.is_dir()
    assert first.name == "20250131T091502Z_etc-pass-wd_S-N-7-x.run"
    write_all(first, [RunStarted(hdr)])
    second = new_run_path(tmp_path / "out", hdr)
    assert second != first and second.name.endswith("-2.run")
    odd = new_run_path(tmp_path, RunHeader.from_table({"started_utc": "", "element": {"id": "..."}}))  # no usable id or time
    assert odd.name.endswith("_element.run") and not odd.name.startswith(".")


def test_disk_full_surfaces_on_the_next_write_or_close(tmp_path):
    # A file-size limit (RLIMIT_FSIZE) makes the kernel refuse the write with EFBIG, as a full
    # disk refuses with ENOSPC; it runs in a child so this process keeps its limits.
    script = textwrap.dedent(f"""
        import resource, signal, sys, time
        sys.path.insert(0, {os.getcwd()!r})
        from benchlog.runs import Point, RunStarted, RunWriter, RunWriteError
        from tests.runs.samples import header
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
        resource.setrlimit(resource.RLIMIT_FSIZE, (4096, 4096))
        w = RunWriter({str(tmp_path / "full.run")!r})
        w.write(RunStarted(header()))
        try:
            for i in range(100000):
                w.write(Point(index=i, t_s=i * 0.01, setpoint_a=0.1, current_a=0.1, drop_v=0.6))
                if i % 50 == 0:
                    time.sleep(0.002)
        except RunWriteError as exc:
            print("write raised", type(exc.__cause__).__name__, w.durable_points)
        try:
            w.close()
            print("close silent")
        except RunWriteError:
            print("close raised")
    """)
    out = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, timeout=60)
    assert out.returncode == 0, out.stderr
    words = out.stdout.split()
    assert words[:3] == ["write", "raised", "OSError"] and words[-2:] == ["close", "raised"]
    # what was acknowledged is on disk and readable
    frame, meta = load(tmp_path / "full.run")
    assert len(frame) >= int(words[3]) and not meta.complete


def test_write_does_not_wait_for_the_disk(tmp_path):
    # The caller's thread only encodes and queues: with the writer thread held up, write()
    # still returns and the records are written once it runs again.
    gate = threading.Event()
    path = tmp_path / "r.run"
    writer = RunWriter(path, on_durable=lambda n: gate.wait(10))
    writer.write(RunStarted(header()))
    for i in range(200):
        writer.write(Point(index=i, t_s=i * 0.01, setpoint_a=0.1, current_a=0.1, drop_v=0.6))
    assert writer.queued_count == 201 and writer.durable_count <= 1
    gate.set()
    assert writer.wait_durable(10)
    writer.close()
    assert writer.durable_points == 200 and len(load(path)[0]) == 200
