"""The typed run record: every header field and the end record's safe_state survive a write and a read,
schema 1 files load into the same record with a stable derived run_id, and what is not ours is refused."""

from __future__ import annotations

import hashlib
import json
import subprocess
import sys
import uuid
from dataclasses import fields, replace
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from benchlog.accuracy import Accuracy, MeasurementAccuracy
from benchlog.badinput import BadInput
from benchlog.runs import RunWriter, load, load_points, read_events
from benchlog.runs.events import Point, RunFinished, RunStarted
from benchlog.runs.reader import read_summary
from benchlog.runs.record import (
    DERIVED_ID_NAMESPACE,
    BenchRecord,
    ElementRecord,
    InstrumentRecord,
    MeterSettings,
    PlanRecord,
    RunHeader,
    freeze,
    is_run_id,
    new_run_id,
    thaw,
)

from .samples import header_table

REPO = Path(__file__).resolve().parents[2]
SCHEMA1 = sorted((Path(__file__).parent / "schema1").glob("*.run"))


def full_header() -> RunHeader:
    """A header with every field set to a value other than its default (invented demo bench)."""
    plan = {"element": {"id": "Q7", "kind": "pmos", "operating_a": 2.5, "gate": "return"},
            "steps": {"mode": "updown", "start_a": 0.1, "stop_a": 3.0, "count": 4, "currents_a": [0.5, 1.0]},
            "limits": {"max_current_a": 3.2, "compliance_v": 15.0}}
    return RunHeader(
        tool_version="9.8.7",
        started_utc="2026-01-02T03:04:05.678Z",
        run_id=new_run_id(),
        host="bench-pc-7",
        instruments=(InstrumentRecord("supply", "TCPIP0::127.0.0.1::29100::SOCKET", "DEMO,SUPPLY,1,2",
                                      "sim-supply", "1f" * 32),
                     InstrumentRecord("meter", "TCPIP0::127.0.0.1::29102::SOCKET", "DEMO,METER,3,4",
                                      "sim-meter", "2e" * 32)),
        bench=BenchRecord.from_table({"wiring": {"force": "load", "current_from": "shunt", "shunt_ohm": 0.01,
                                                 "input_v": 24.0}, "line_frequency_hz": 60.0,
                                      "simulated": True}),
        plan=PlanRecord(freeze(plan)),
        element=ElementRecord.from_table({"id": "Q7", "kind": "pmos", "label": "DEMO-PFET", "lot": "L9",
                                          "serial": "S-9", "ambient_c": 31.5, "note": "µ ✓ note",
                                          "operating_a": 2.5, "gate": "return", "zener_v": 12.0,
                                          "measure": "channel"}),
        accuracy=MeasurementAccuracy(Accuracy(0.006, 0.004, 0.1), Accuracy(0.1, 0.1, 30.0)),
        meter=MeterSettings(nplc=10.0, samples=3, range_v=0.1),
        line_frequency_hz=60.0,
    )


def write(path: Path, header: RunHeader, end: RunFinished | None = None) -> Path:
    with RunWriter(path, fsync=False) as writer:
        writer.write(RunStarted(header))
        writer.write(Point(index=0, t_s=0.5, setpoint_a=1.0, current_a=1.0, drop_v=0.01))
        if end is not None:
            writer.write(end)
    return path


def test_every_header_field_round_trips(tmp_path):
    header = full_header()
    for name in ("host", "bench", "plan", "meter", "line_frequency_hz"):  # nothing left at its default
        assert getattr(header, name) != RunHeader.__dataclass_fields__[name].default, name
    path = write(tmp_path / "r.run", header)
    readings = [load(path)[1].header, load_points(path)[1].header, next(read_events(path)).header]
    for back in readings:
        for f in fields(RunHeader):
            assert getattr(back, f.name) == getattr(header, f.name), f.name
        assert back.element.table == header.element.table and dict(back.extra) == {}
        assert back.to_table() == header.to_table()
    back = readings[0]
    # the derived values readers ask for, from the typed parts
    assert back.input_v == 24.0 and back.kind == "pmos" and back.serial == "S-9" and back.lot == "L9"
    assert back.bench.wiring.shunt_ohm == 0.01 and back.bench.simulated
    assert back.element.operating_a == 2.5 and back.element.zener_v == 12.0
    assert back.instrument("meter").profile_sha256 == "2e" * 32 and back.instrument("load") is None
    assert back.planned_points() == 2 * 4 - 1  # up-down: count up, count - 1 back down
    assert back.schema == 2 and not back.run_id_derived


def test_a_header_line_written_from_its_record_is_the_same_json(tmp_path):
    path = write(tmp_path / "r.run", full_header())
    line = path.read_text(encoding="utf-8").split("\n", 1)[0]
    back = load(path)[1].header
    assert json.loads(line) == {"record": "header", **back.to_table()}


def test_unknown_header_keys_are_kept_as_read(tmp_path):
    table = dict(header_table(), newer_key_s={"a": [1, 2]})
    path = write(tmp_path / "r.run", RunHeader.from_table(table))
    back = load(path)[1].header
    assert back.extra["newer_key_s"]["a"] == (1, 2)  # read-only: a tuple
    assert back.to_table()["newer_key_s"] == {"a": [1, 2]}


def test_the_typed_record_is_frozen():
    header = full_header()
    with pytest.raises(AttributeError):
        header.host = "other"  # type: ignore[misc]
    with pytest.raises(TypeError):
        header.plan.table["steps"] = {}  # type: ignore[index]


@pytest.mark.parametrize("state", ["verified", "unverified", "unknown", None])
def test_safe_state_round_trips_and_is_written_only_when_stated(tmp_path, state):
    end = RunFinished(t_s=2.0, outcome="complete", points=1, message="done", safe_state=state)
    path = write(tmp_path / "r.run", full_header(), end)
    last = path.read_text(encoding="utf-8").rstrip("\n").rsplit("\n", 1)[1]
    assert ('"safe_state"' in last) == (state is not None)
    for meta in (load(path)[1], load_points(path)[1]):
        assert meta.finished == end and meta.finished.safe_state == state
    assert list(read_events(path))[-1] == end


def test_a_safe_state_not_ours_is_refused_naming_the_line(tmp_path):
    path = write(tmp_path / "r.run", full_header(), RunFinished(2.0, "complete", 1, "done", "verified"))
    text = path.read_text(encoding="utf-8").replace('"safe_state":"verified"', '"safe_state":"off"')
    path.write_text(text, encoding="utf-8")
    for reader in (load, load_points, lambda p: list(read_events(p))):
        with pytest.raises(BadInput) as caught:
            reader(path)
        assert caught.value.where == "line 3" and "safe_state" in caught.value.line()


# --- schema 1 ---------------------------------------------------------------------------------


def test_schema1_copies_are_here():
    assert len(SCHEMA1) >= 3
    for path in SCHEMA1:
        assert json.loads(path.read_bytes().split(b"\n", 1)[0])["schema"] == 1, path


@pytest.mark.parametrize("path", SCHEMA1, ids=lambda p: p.name)
def test_schema1_files_load_into_the_same_record(path):
    frame, meta = load(path)
    points, light = load_points(path)
    first = next(read_events(path)).header
    assert meta.header.schema == 1 and meta.header.run_id_derived
    assert meta == light and first == meta.header
    # The derived id: a UUID5 (RFC 4122 section 4.3, name-based with SHA-1) of the header line in
    # our own namespace, recomputed here from the raw bytes by the RFC's own steps: SHA-1 of the
    # namespace's 16 bytes followed by the name, first 16 bytes, version and variant bits set.
    line = path.read_bytes().split(b"\n", 1)[0]
    digest = bytearray(hashlib.sha1(DERIVED_ID_NAMESPACE.bytes + line).digest()[:16])
    digest[6] = (digest[6] & 0x0F) | 0x50  # version 5
    digest[8] = (digest[8] & 0x3F) | 0x80  # RFC 4122 variant
    expected = str(uuid.UUID(bytes=bytes(digest)))
    assert expected == str(uuid.uuid5(DERIVED_ID_NAMESPACE, line.decode("utf-8")))  # Python's uuid module agrees
    assert meta.header.run_id == expected and uuid.UUID(expected).version == 5
    assert load(path)[1].header.run_id == expected  # stable: the same file, the same id
    # The same recording re-made under schema 2: every point line is the same, and the typed
    # record differs only in the schema, the id and the profiles' hashes (the simulated
    # instruments' profiles gained state queries and protection operations since), and for a run with a
    # reverse step the reverse range's accuracy.
    new = REPO / "sample_runs" / path.name

    def point_lines(p):
        return [line for line in p.read_bytes().split(b"\n") if line.startswith(b"P\t")]

    assert point_lines(new) == point_lines(path)
    new_frame, new_meta = load(new)
    pd.testing.assert_frame_equal(frame, new_frame, check_exact=True)
    same_profiles = tuple(replace(old, profile_sha256=now.profile_sha256)
                          for old, now in zip(meta.header.instruments, new_meta.header.instruments))
    # ... a reverse step's run now also records the reverse range's accuracy, which the old one lacks
    accuracy = replace(meta.header.accuracy, reverse_current=new_meta.header.accuracy.reverse_current)
    assert (meta.header.accuracy.reverse_current is None) or accuracy == meta.header.accuracy
    # ... and a plan also names its part spec (the top-level `spec` key): the plan differs by that key only.
    new_plan = thaw(new_meta.header.plan.source)
    assert new_plan.pop("spec").startswith("../specs/")
    assert PlanRecord(new_plan) == meta.header.plan
    assert replace(meta.header, schema=2, run_id=new_meta.header.run_id,
                   instruments=same_profiles, accuracy=accuracy, plan=new_meta.header.plan) == new_meta.header
    assert np.array_equal(points.drop_v, new_frame["drop_v"].to_numpy(), equal_nan=True)
    # rewriting an old header from its record gives back the same JSON (no run_id is invented)
    assert json.loads(line) == {"record": "header", **meta.header.to_table()}


def test_two_schema1_files_get_different_ids():
    ids = {load(p)[1].header.run_id for p in SCHEMA1}
    assert len(ids) == len(SCHEMA1)


def test_a_schema2_header_without_run_id_is_refused(tmp_path):
    path = write(tmp_path / "r.run", full_header())
    line, rest = path.read_text(encoding="utf-8").split("\n", 1)
    obj = json.loads(line)
    del obj["run_id"]
    path.write_text(json.dumps(obj) + "\n" + rest, encoding="utf-8")
    for reader in (load, load_points, lambda p: list(read_events(p))):
        with pytest.raises(BadInput) as caught:
            reader(path)
        assert caught.value.where == "line 1" and "no run_id" in caught.value.line()


@pytest.mark.parametrize("bad", ["not-a-uuid", "0F5F3C2A-7D1E-4B8A-9C6D-2E4F6A8B0C1D", 7, ""])
def test_a_run_id_not_in_uuid_form_is_refused(tmp_path, bad):
    path = write(tmp_path / "r.run", full_header())
    line, rest = path.read_text(encoding="utf-8").split("\n", 1)
    obj = json.loads(line)
    obj["run_id"] = bad
    path.write_text(json.dumps(obj) + "\n" + rest, encoding="utf-8")
    with pytest.raises(BadInput) as caught:
        load(path)
    assert caught.value.where == "line 1" and "run_id" in caught.value.line()


def test_a_newer_schema_is_one_line_and_exit_2(tmp_path):
    path = write(tmp_path / "r.run", full_header())
    text = path.read_text(encoding="utf-8").replace('"schema":2', '"schema":3', 1)
    path.write_text(text, encoding="utf-8")
    done = subprocess.run([sys.executable, "-m", "benchlog", "fit", str(path), "--json"],
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 2
    lines = done.stderr.strip().splitlines()
    assert len(lines) == 1 and "schema version 3 is newer" in lines[0] and "Traceback" not in done.stderr


def test_new_run_ids_are_uuid4_and_the_writer_will_not_write_a_derived_one(tmp_path):
    ids = {new_run_id() for _ in range(100)}
    assert len(ids) == 100 and all(is_run_id(i) and uuid.UUID(i).version == 4 for i in ids)
    old = RunHeader.from_table({"started_utc": "2025-01-01T00:00:00Z", "element": {"id": "D1"}}, "{}")
    assert old.run_id_derived
    with pytest.raises(ValueError, match="run_id"):
        write(tmp_path / "r.run", old)


def test_read_summary_gives_the_typed_header_and_the_outcome(tmp_path):
    path = write(tmp_path / "r.run", full_header(), RunFinished(2.0, "limit", 1, "stopped"))
    header, outcome = read_summary(path)
    assert header == load(path)[1].header and outcome == "limit"
    header, outcome = read_summary(SCHEMA1[0])
    assert header.run_id_derived and outcome in ("complete", "incomplete")
    (tmp_path / "junk.run").write_bytes(b"\xff\xfe not a run\n")
    assert read_summary(tmp_path / "junk.run") == (None, "unreadable")


def test_one_accuracy_type_from_profile_to_header():
    # The profile's own Accuracy object is what the header records and the budget reads.
    from benchlog.instruments.profile import load_profile

    meter = load_profile("sim-meter")
    spec = meter.accuracy_for("dc_voltage", 0.1)
    assert type(spec) is Accuracy
    assert MeasurementAccuracy.from_table(MeasurementAccuracy(drop=spec).to_table()) == MeasurementAccuracy(spec)
    # Through a shunt I = V/R (Ohm's law, common practice), the bound in A is the bound in V over R.
    shunt = spec.through_shunt(0.01)
    assert shunt.half_width(0.05 / 0.01) == pytest.approx(spec.half_width(0.05) / 0.01, rel=1e-12)
