"""Invented demo runs for the archive tests and benchmark, written by the real run writer.

Each run is a short linear sweep of an invented P-MOSFET whose drop follows
V = v0 + R·I with small noise, so its fitted `r_on_ohm` is close to the R given.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from benchlog.runs.events import Offset, Point, RunFinished, RunStarted
from benchlog.runs.record import RunHeader, new_run_id
from benchlog.runs.writer import RunWriter


def demo_header(*, serial: str, lot: str, host: str = "bench-a", started_utc: str = "2025-03-01T08:00:00Z",
                run_id: str | None = None, kind: str = "pmos", label: str = "demo pfet") -> RunHeader:
    return RunHeader.from_table({
        "format": "benchlog-run", "schema": 2, "tool_version": "0.1.0", "started_utc": started_utc,
        "run_id": run_id or new_run_id(), "host": host,
        "instruments": {"meter": {"resource": "TCPIP0::127.0.0.1::5025::SOCKET", "idn": "DEMO,SIM-METER,0001,1.0",
                                  "profile": "sim-meter", "profile_sha256": "ab" * 32}},
        "element": {"id": "Q1", "kind": kind, "label": label, "lot": lot, "serial": serial, "ambient_c": 23.0},
        "accuracy": {"drop": {"reading_pct": 0.0035, "range_pct": 0.0005, "range_v": 0.1},
                     "current": {"reading_pct": 0.05, "range_pct": 0.01, "range_a": 3.0}},
    })


def point_events(r_on_ohm: float, n: int, rng, start: int = 0) -> list[Point]:
    out = []
    for i in range(start, start + n):
        sp = 0.2 + 0.25 * i
        current = sp * (1 + rng.normal(0.0, 2e-4))
        drop = 2e-5 + r_on_ohm * current + rng.normal(0.0, 3e-7)
        out.append(Point(index=i, t_s=0.5 * (i + 1), setpoint_a=sp, current_a=current, drop_v=drop,
                         supply_v=12.0, supply_mode="CV", settle_reads=2, direction="up"))
    return out


def write_run(path: Path, header: RunHeader, r_on_ohm: float, *, points: int = 6, seed: int = 0,
              finished: bool = True) -> Path:
    """One run file by the real writer (without fsync: these are throw-away files)."""
    rng = np.random.default_rng(seed)
    events = [RunStarted(header), Offset(0.1, 1e-6), *point_events(r_on_ohm, points, rng)]
    if finished:
        events.append(RunFinished(0.5 * points + 1.0, "complete", points, ""))
    with RunWriter(path, fsync=False) as writer:
        for event in events:
            writer.write(event)
    return path


def write_lot(folder: Path, lot: str, r_on_ohm: float, count: int, *, host: str = "bench-a", day: str = "2025-03-01",
              seed: int = 0, spread: float = 0.0) -> list[Path]:
    """`count` runs of one lot, serials LOT-0001.., R drawn around `r_on_ohm` with a relative `spread`."""
    rng = np.random.default_rng(seed)
    folder.mkdir(parents=True, exist_ok=True)
    paths = []
    for i in range(count):
        r = r_on_ohm * (1 + spread * rng.standard_normal())
        serial = f"{lot}-{i + 1:04d}"
        header = demo_header(serial=serial, lot=lot, host=host, started_utc=f"{day}T08:{i // 60 % 60:02d}:{i % 60:02d}Z")
        paths.append(write_run(folder / f"{lot}-{i + 1:04d}.run", header, r, seed=seed * 100003 + i))
    return paths
