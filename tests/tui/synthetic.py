"""Invented run data and a scripted bench session for the UI tests (demo data only, deterministic).

The scripted session stands in for the bench where a test is about the UI
itself (layout, keys, batching); the flow tests use the real runner over the
simulated bench instead.
"""

from __future__ import annotations

import io
import threading
import uuid
from pathlib import Path

import numpy as np
from rich.console import Console

from benchlog.runs.events import Note, Offset, Point, RunFinished, RunStarted
from benchlog.runs.record import RunHeader
from benchlog.runs.writer import RunWriter, new_run_path
from benchlog.sweep.plan import parse_plan
from benchlog.tui.session import BenchSession, RoleStatus, SweepOutcome

PLAN_TEXT = """\
spec = "DEMO-PFET-26M.toml"

[element]
id = "Q1"
kind = "pmos"
serial = "DEMO-0001"
lot = "L-7"
ambient_c = 25.0
operating_a = 2.0

[steps]
mode = "linear"
start_a = 0.1
stop_a = 3.0
count = 30

[settle]
dwell_s = 0.01
tolerance_v = 0.0001
consecutive = 2
timeout_s = 1.0

[limits]
max_current_a = 3.2
compliance_v = 15.0
max_drop_v = 0.5
max_power_w = 1.0
max_time_s = 120.0
"""

SPEC_TEXT = """\
name = "DEMO-PFET-26M"
kind = "pmos"
rds_on_ohm = 0.026
rds_on_max_ohm = 0.035
rds_on_vgs_v = 10.0
rds_on_tempco_per_k = 0.004
vgs_th_v = 2.0
vgs_max_v = 20.0
vds_max_v = 60.0
rth_ja_k_per_w = 62.0
tj_max_c = 150.0
"""


def write_files(folder: Path) -> tuple[Path, Path]:
    folder.mkdir(parents=True, exist_ok=True)
    plan = folder / "demo-pfet.toml"
    spec = folder / "DEMO-PFET-26M.toml"
    plan.write_text(PLAN_TEXT, encoding="utf-8")
    spec.write_text(SPEC_TEXT, encoding="utf-8")
    return plan, spec


def header(serial: str = "DEMO-0001", started_utc: str = "2025-03-04T10:20:30.000Z",
           plan_text: str = PLAN_TEXT) -> RunHeader:
    plan = parse_plan(plan_text, "plan")
    plan_dict = plan.to_dict()
    plan_dict["element"]["serial"] = serial
    element = dict(plan_dict["element"])
    return RunHeader.from_table({
        "format": "benchlog-run", "schema": 2, "tool_version": "0.1.0", "started_utc": started_utc,
        "run_id": str(uuid.uuid5(uuid.NAMESPACE_URL, f"{serial} {started_utc}")), "host": "bench-pc",
        "instruments": {"supply": {"resource": "TCPIP0::127.0.0.1::5025::SOCKET",
                                   "idn": "BENCHLOG,SIM-SUPPLY,0001,1.0", "profile": "generic-supply",
                                   "profile_sha256": "a" * 64}},
        "bench": {"wiring": {"force": "load", "current_from": "load", "input_v": 12.0}}, "plan": plan_dict, "element": element,
        "accuracy": {"drop": {"reading_pct": 0.002, "range_pct": 0.0005, "range_v": 1.0},
                     "current": {"reading_pct": 0.05, "range_pct": 0.01, "range_a": 3.0}},
        "meter": {"nplc": 1.0, "samples": 1, "range_v": 1.0}, "line_frequency_hz": 50.0,
        "point_columns": ["index", "t_s", "setpoint_a", "current_a", "drop_v", "supply_v", "supply_mode",
                          "temperature_c", "settle_reads", "direction", "flags"],
    })


def events(serial: str = "DEMO-0001", r_ohm: float = 0.027, n: int = 30, seed: int = 1,
           started_utc: str = "2025-03-04T10:20:30.000Z", stop_after: int | None = None, plan_text: str = PLAN_TEXT):
    """A resistive element's sweep as events: R = `r_ohm`, 20 µV noise (invented demo data)."""
    rng = np.random.default_rng(seed)
    current = np.linspace(0.1, 3.0, n)
    drop = 1e-5 + r_ohm * current + rng.normal(0.0, 2e-5, n)
    out = [RunStarted(header(serial, started_utc, plan_text)), Offset(0.1, 1e-5)]
    t = 0.5
    for k, (i, v) in enumerate(zip(current, drop)):
        if stop_after is not None and k >= stop_after:
            out.append(Note(t, "cancel", "cancelled by the operator"))
            out.append(RunFinished(t, "cancelled", k, "cancelled by the operator", "verified"))
            return out
        t += 0.25
        out.append(Point(index=k, t_s=t, setpoint_a=float(round(i, 6)), current_a=float(i), drop_v=float(v),
                         supply_v=float(12.0 - 0.05 * i), supply_mode="CV", settle_reads=2))
    out.append(RunFinished(t + 0.1, "complete", n, "", "verified"))
    return out


def write_run(folder: Path, **kwargs) -> Path:
    evs = events(**kwargs)
    path = new_run_path(folder, evs[0].header)
    with RunWriter(path, fsync=False) as writer:
        for event in evs:
            writer.write(event)
    return path


class ScriptedSetup:
    """Looks like a BenchSetup to the UI (roles and wiring only)."""

    class _Spec:
        def __init__(self, role: str, resource: str, profile: str) -> None:
            self.role, self.resource, self.profile, self.backend = role, resource, profile, "@py"

    class _Wiring:
        force = "load"
        current_from = "load"

    def __init__(self) -> None:
        self.roles = {"supply": self._Spec("supply", "TCPIP0::127.0.0.1::5025::SOCKET", "generic-supply"),
                      "meter": self._Spec("meter", "TCPIP0::127.0.0.1::5026::SOCKET", "generic-meter")}
        self.wiring = self._Wiring()
        self.source = "scripted bench"


class ScriptedSession(BenchSession):
    """Plays invented events as a sweep; `gate` lets a test hold the sweep after `hold_at` points."""

    def __init__(self, runs_dir: Path, *, hold_at: int | None = None, n: int = 30) -> None:
        super().__init__(ScriptedSetup(), runs_dir=runs_dir, label="scripted bench")
        self.hold_at = hold_at
        self.n = n
        self.gate = threading.Event()
        self.reached_hold = threading.Event()
        self.cancel_seen = threading.Event()
        self.output_on = False
        self.sweeps = 0
        self.r_by_serial: dict[str, float] = {}  # a part's invented R_on (default 27 mΩ)

    def probe(self, role: str) -> RoleStatus:
        spec = self.setup.roles[role]
        return RoleStatus(role, spec.resource, spec.profile, f"BENCHLOG,SIM-{role.upper()},0001,1.0", "connected")

    def sweep(self, plan, on_event) -> SweepOutcome:
        self.sweeps += 1
        serial = plan.element.serial
        evs = events(serial=serial, n=self.n, seed=self.sweeps, r_ohm=self.r_by_serial.get(serial, 0.027))
        path = new_run_path(self.runs_dir, evs[0].header)
        with RunWriter(path, fsync=False) as writer:
            for k, event in enumerate(evs):
                if isinstance(event, Point):
                    self.output_on = True
                    if self.hold_at is not None and event.index == self.hold_at:
                        self.reached_hold.set()
                        self.gate.wait(10)
                    if self.cancel_seen.is_set():
                        self.output_on = False
                        # this scripted bench's own output flag, off again: what its read-back would say
                        for tail in (Note(event.t_s, "cancel", "cancelled by the operator"),
                                     RunFinished(event.t_s, "cancelled", event.index, "cancelled by the operator",
                                                 "verified")):
                            writer.write(tail)
                            on_event(tail)
                        return SweepOutcome("cancelled", path, event.index, "cancelled by the operator",
                                            "verified", "outputs verified off (read back): scripted bench")
                if isinstance(event, RunFinished):
                    self.output_on = False
                writer.write(event)
                on_event(event)
        return SweepOutcome("complete", path, self.n, "", "verified",
                            "outputs verified off (read back): scripted bench")

    def cancel(self) -> None:
        self.cancel_seen.set()
        self.gate.set()


def screen_text(app) -> str:
    """The screen as plain text (what a person would read), for assertions."""
    width, height = app.size
    console = Console(width=width, height=height, file=io.StringIO(), force_terminal=True, record=True,
                      legacy_windows=False, safe_box=False)
    console.print(app.screen._compositor.render_update(full=True, screen_stack=app._background_screens))
    return console.export_text()
