"""Inspection that stops when the verdict is decided, and the per-point exchanges, on the simulated bench (real pyvisa-py).

Reference: a fixed sweep of the same part places its drop at 2 A, and the acceptance limit
is set 20 % to either side of it; the message split rule of SCPI-99 vol. 1
6.2.4 for the compound messages.
"""

from __future__ import annotations

import threading

import pytest

from benchlog.badinput import BadInput
from benchlog.runs import load
from benchlog.runs.events import Note, Point
from benchlog.scpi.messages import split_message

from .simrig import parse, plan_text, record, setup_for

LIST = "mode = 'list'\ncurrents_a = [0.5, 1.0, 1.5, 2.0, 2.5]"
LIMITS = "max_current_a = 2.6\ncompliance_v = 15.0\nmax_drop_v = 0.09"


def _plan(max_drop_v: float | None, first_look: int = 3):
    extra = "" if max_drop_v is None else (
        f"[inspection]\nstop_when_decided = true\nmax_drop_v = {max_drop_v}\nfirst_look = {first_look}\n")
    return parse(plan_text("pmos", steps=LIST, limits=LIMITS, element="operating_a = 2.0\n", extra=extra))


@pytest.mark.parametrize("above", [False, True])
def test_a_part_far_from_its_limit_is_decided_at_the_first_look(sim_bench, tmp_path, above):
    running = sim_bench("pmos", seed=4)
    # a first fixed sweep tells where the drop at 2 A lies; the limit is put 20 % away from it
    fixed = record(_plan(None), setup_for(running), tmp_path / "fixed")
    frame, _ = load(fixed.path)
    at_2a = float(frame.loc[frame["setpoint_a"] == 2.0, "drop_v"].iloc[0])
    limit = at_2a * (0.8 if above else 1.2)
    rec = record(_plan(limit), setup_for(running), tmp_path / "seq")
    assert rec.outcome == "complete"
    points = rec.points
    assert len(points) == 3  # decided at the first look
    # nearest the operating current first: 2.0 A, then 1.5 and 2.5 A (it is bracketed)
    assert [p.setpoint_a for p in points] == [2.0, 1.5, 2.5]
    notes = [e.message for e in rec.emitted if isinstance(e, Note) and e.message.startswith("inspection:")]
    assert len(notes) == 1
    assert notes[0].startswith("inspection: decided fail" if above else "inspection: decided pass")
    # Ohm's law with the measured drop: the part is where the limit says
    assert (at_2a > limit) is above


def test_a_part_on_its_limit_runs_the_whole_schedule_undecided(sim_bench, tmp_path):
    running = sim_bench("pmos", seed=4)
    fixed = record(_plan(None), setup_for(running), tmp_path / "fixed")
    frame, _ = load(fixed.path)
    at_2a = float(frame.loc[frame["setpoint_a"] == 2.0, "drop_v"].iloc[0])
    rec = record(_plan(at_2a), setup_for(running), tmp_path / "seq")
    assert len(rec.points) == 5
    notes = [e.message for e in rec.emitted if isinstance(e, Note) and e.message.startswith("inspection:")]
    assert notes and "not decided conditional" in notes[0] and "schedule ended undecided" in notes[0]


@pytest.mark.parametrize("extra, key", [
    ("[inspection]\nstop_when_decided = true\n", "max_drop_v"),
    ("[inspection]\nstop_when_decided = true\nmax_drop_v = -1\n", "max_drop_v"),
    ("[inspection]\nstop_when_decided = true\nmax_drop_v = 0.02\nfirst_look = 1\n", "first_look"),
    ("[inspection]\nstop_when_decide = true\n", "stop_when_decide"),
])
def test_bad_inspection_tables_are_one_line_naming_the_key(extra, key):
    with pytest.raises(BadInput) as info:
        parse(plan_text("pmos", steps=LIST, limits=LIMITS, element="operating_a = 2.0\n", extra=extra))
    assert key in str(info.value) and "\n" not in str(info.value)


def test_inspection_needs_an_operating_current_and_a_fixed_schedule():
    with pytest.raises(BadInput, match="operating_a"):
        parse(plan_text("pmos", steps=LIST, limits=LIMITS,
                        extra="[inspection]\nstop_when_decided = true\nmax_drop_v = 0.02\n"))
    with pytest.raises(BadInput, match="adaptive"):
        parse(plan_text("pmos", steps="mode = 'adaptive'\nstart_a = 0.1\nstop_a = 2.5\ncount = 10\ntarget_rel_u = 0.01",
                        limits=LIMITS, element="operating_a = 2.0\n",
                        extra="[inspection]\nstop_when_decided = true\nmax_drop_v = 0.02\n"))


def test_a_plan_without_inspection_records_the_plan_as_before():
    assert "inspection" not in _plan(None).to_dict()
    assert _plan(0.02).to_dict()["inspection"] == {"max_drop_v": 0.02, "first_look": 3, "stop_when_decided": True}


def _logged(running):
    log: list[tuple[str, str]] = []
    lock = threading.Lock()
    for role, device in running.bench.devices().items():
        original = device.execute

        def execute(message, _original=original, _role=role):
            with lock:
                log.append((_role, message))
            return _original(message)

        device.execute = execute
    return log


def test_a_point_is_five_messages_and_the_record_is_unchanged(sim_bench, tmp_path):
    from dataclasses import replace

    running = sim_bench("pmos", seed=2)
    log = _logged(running)
    plan = _plan(None)
    rec = record(plan, setup_for(running), tmp_path / "compound")
    assert rec.outcome == "complete"
    sent = list(log)
    # from the second setpoint on, the load's setpoint rides with its sync in one message
    setpoints = [m for r, m in sent if r == "load" and m.startswith("CURR ") and m.endswith("*OPC?")]
    assert len(setpoints) == len(rec.points) - 1
    # every compound message splits back into units with absolute paths (SCPI-99 vol. 1 6.2.4)
    read_backs = [m for r, m in sent if r == "supply" and m.startswith("STATus")]
    assert len(read_backs) == len(rec.points)
    assert [u.header.upper() for u in split_message(read_backs[0])] == ["STATUS:OPERATION:CONDITION",
                                                                        "MEASURE:VOLTAGE:DC"]
    first = next(i for i, (r, m) in enumerate(sent) if m == setpoints[0])
    last = max(i for i, (r, m) in enumerate(sent) if m == read_backs[-1])
    per_point = (last - first + 1) / (len(rec.points) - 1)
    assert per_point == pytest.approx(5.0, abs=0.01)  # setpoint+sync, 2 meter reads, load current, supply
    # the same bench with one program unit per message records the same columns and points
    log.clear()
    singles = {}
    for role, spec in setup_for(running).roles.items():
        from benchlog.instruments.profile import load_profile

        src = load_profile(spec.profile).path.read_text(encoding="utf-8")
        path = tmp_path / f"{role}.toml"
        path.write_text(src.replace("compound_queries = true", "compound_queries = false"), encoding="utf-8")
        singles[role] = replace(spec, profile=str(path))
    single_setup = replace(setup_for(running), roles=singles)
    rec2 = record(plan, single_setup, tmp_path / "single")
    assert not any(";" in m and "*OPC?" in m for _, m in log)
    a, _ = load(rec.path)
    b, _ = load(rec2.path)
    assert list(a.columns) == list(b.columns)
    assert list(a["setpoint_a"]) == list(b["setpoint_a"])
    for col in ("current_a", "drop_v", "supply_v"):
        assert a[col].notna().all() and b[col].notna().all()
    assert list(a["supply_mode"]) == list(b["supply_mode"]) == ["CV"] * len(a)
    assert all(isinstance(e, Point) for e in rec.points)
