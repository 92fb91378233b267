"""Run events for the run-file tests: one of every kind, with invented demo values."""

from __future__ import annotations

from benchlog.runs.events import (
    FLAG_COMPLIANCE,
    FLAG_OVERLOAD,
    FLAG_UNSETTLED,
    Note,
    Offset,
    Point,
    ReverseResult,
    RunFinished,
    RunStarted,
)
from benchlog.runs.record import RunHeader

#: An invented, fixed run id (a valid UUID4 text) so the tests' files are the same every time.
RUN_ID = "0f5f3c2a-7d1e-4b8a-9c6d-2e4f6a8b0c1d"


def header_table(**element) -> dict:
    """A full header object as the runner writes it (invented demo part)."""
    return {
        "tool_version": "0.1.0",
        "started_utc": "2025-01-31T09:15:02.250Z",
        "run_id": RUN_ID,
        "host": "bench-pc",
        "instruments": {"meter": {"resource": "TCPIP0::127.0.0.1::5025::SOCKET",
                                  "idn": "BENCHLOG,SIM-METER,0001,1.0",
                                  "profile": "sim-meter", "profile_sha256": "ab" * 32}},
        "bench": {"wiring": {"force": "supply", "current_from": "supply"}},
        "plan": {"steps": {"mode": "linear", "start_a": 0.1, "stop_a": 2.0, "count": 5}},
        "element": {"id": "D1", "kind": "rectifier", "label": "input diode", "lot": "L7",
                    "serial": "S-0001", "ambient_c": 23.5, "note": "µ-test ✓", **element},
        "accuracy": {"drop": {"reading_pct": 0.0035, "range_pct": 0.0005, "range_v": 1.0},
                     "current": {"reading_pct": 0.05, "range_pct": 0.01, "range_a": 3.0}},
        "meter": {"nplc": 1.0, "samples": 1, "range_v": 1.0},
        "line_frequency_hz": 50.0,
    }


def header(**element) -> RunHeader:
    """A full typed header as the runner makes it (invented demo part)."""
    return RunHeader.from_table(header_table(**element))


def every_kind() -> list:
    """A run that holds every event kind and every optional point field, set and unset."""
    return [
        RunStarted(header()),
        Offset(t_s=0.05, drop_v=-1.25e-6),
        Point(index=0, t_s=0.5, setpoint_a=0.1, current_a=0.1000012, drop_v=0.5812345678901234,
              supply_v=1.25, supply_mode="CC", temperature_c=24.1, settle_reads=3,
              direction="up", flags=()),
        Point(index=1, t_s=1.0, setpoint_a=1.0, current_a=0.99998, drop_v=0.7,
              supply_v=None, supply_mode=None, temperature_c=None, settle_reads=12,
              direction="up", flags=(FLAG_UNSETTLED,)),
        Note(t_s=1.2, kind="warning", message='supply near its limit\t"quoted"\nsecond line'),
        Point(index=5, t_s=1.5, setpoint_a=2.0, current_a=2.0, drop_v=0.81, supply_v=4.9,
              supply_mode="CV", temperature_c=-40.0, settle_reads=1, direction="down",
              flags=(FLAG_COMPLIANCE, FLAG_UNSETTLED)),
        Point(index=6, t_s=2.0, setpoint_a=0.5, current_a=0.5, drop_v=float("nan"),
              supply_mode="OFF", settle_reads=0, direction="down", flags=(FLAG_OVERLOAD,)),
        ReverseResult(t_s=3.0, voltage_v=-12.0, duration_s=1.0, current_a=2.5e-9, limit_a=1e-6,
                      passed=True),
        RunFinished(t_s=3.5, outcome="complete", points=4, message="done"),
    ]
