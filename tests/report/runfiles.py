"""Run and spec files for the report tests, written through the real run writer (invented demo data)."""

from __future__ import annotations


from pathlib import Path

import numpy as np

from benchlog.runs.events import FLAG_UNSETTLED, Note, Offset, Point, ReverseResult, RunFinished, RunStarted
from benchlog.runs.record import RunHeader, new_run_id
from benchlog.runs.writer import RunWriter

from .samples import HOSTILE

PFET_SPEC = """\
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


def header(*, serial: str = "S-0001", lot: str = "", note: str = "", kind: str = "pmos",
           idn: str = "BENCHLOG,SIM-METER,0001,1.0") -> dict:
    return {
        "tool_version": "0.1.0",
        "started_utc": "2025-01-31T09:15:02Z",
        "host": "bench-pc",
        "instruments": {
            "supply": {"resource": "TCPIP0::127.0.0.1::5025::SOCKET", "idn": "BENCHLOG,SIM-SUPPLY,0001,1.0",
                       "profile": "generic-dc-supply", "profile_sha256": "a" * 64},
            "meter": {"resource": "TCPIP0::127.0.0.1::5026::SOCKET", "idn": idn,
                      "profile": "generic-dmm", "profile_sha256": "b" * 64},
        },
        "bench": {"current_source": "supply_cc", "sense": "kelvin"},
        "plan": {"steps": {"start_a": 0.1, "stop_a": 3.0, "count": 20}, "limits": {"max_voltage_v": 5.0}},
        "element": {"id": "Q1", "kind": kind, "label": "input protection", "lot": lot, "serial": serial,
                    "ambient_c": 23.5, "note": note},
        "accuracy": {"drop": {"reading_pct": 0.002, "range_pct": 0.0005, "range_v": 1.0},
                     "current": {"reading_pct": 0.05, "range_pct": 0.01, "range_a": 3.0}},
        "meter": {"nplc": 1.0, "samples": 1, "range_v": 1.0},
        "line_frequency_hz": 50.0,
    }


def resistive_points(r_ohm: float = 0.027, n: int = 20, seed: int = 1, noise_v: float = 2e-5):
    rng = np.random.default_rng(seed)
    current = np.linspace(0.1, 3.0, n)
    drop = 1e-5 + r_ohm * current + rng.normal(0.0, noise_v, n)
    return current, drop


def diode_points(n: int = 20, seed: int = 2):
    # Shockley with series resistance, n = 1.05, Is = 1 µA, Rs = 40 mΩ at 25 °C (invented)
    rng = np.random.default_rng(seed)
    current = np.geomspace(0.01, 2.0, n)
    vt = 0.025693
    drop = 1.05 * vt * np.log1p(current / 1e-6) + 0.04 * current + rng.normal(0.0, 5e-5, n)
    return current, drop


def write_run(path: Path, current, drop, *, hdr: dict | None = None, finished: bool = True,
              notes: tuple[Note, ...] = (), reverse: ReverseResult | None = None,
              flags: dict[int, tuple[str, ...]] | None = None) -> Path:
    hdr = hdr or header()
    flags = flags or {}
    with RunWriter(path, fsync=False) as w:
        w.write(RunStarted(RunHeader.from_table({"run_id": new_run_id(), **hdr})))
        w.write(Offset(0.1, 1e-5))
        t = 0.5
        for k, (i, v) in enumerate(zip(current, drop)):
            t += 0.25
            w.write(Point(index=k, t_s=t, setpoint_a=float(round(i, 6)), current_a=float(i), drop_v=float(v),
                          supply_v=12.0, supply_mode="CC", temperature_c=23.5, settle_reads=2,
                          direction="up", flags=flags.get(k, ())))
        for note in notes:
            w.write(note)
        if reverse is not None:
            w.write(reverse)
        if finished:
            w.write(RunFinished(t + 0.1, "complete", len(current), "sweep done"))
    return path


def pfet_run(tmp: Path, name: str = "pfet.run", **kw) -> Path:
    current, drop = resistive_points(kw.pop("r_ohm", 0.027), seed=kw.pop("seed", 1))
    return write_run(tmp / name, current, drop, **kw)


def hostile_run(tmp: Path) -> Path:
    current, drop = resistive_points()
    return write_run(
        tmp / "hostile.run", current, drop,
        hdr=header(serial=HOSTILE, note=f"operator says {HOSTILE}", idn=f"BENCHLOG,{HOSTILE},0,1"),
        notes=(Note(5.0, "limit", f"drop above {HOSTILE}"), Note(5.1, "info", "all fine")),
        flags={3: (FLAG_UNSETTLED,)},
    )


def spec_file(tmp: Path) -> Path:
    path = tmp / "pfet.toml"
    path.write_text(PFET_SPEC, encoding="utf-8")
    return path




RECT_SPEC = """\
name = "DEMO-RECT-3A"
kind = "rectifier"
vf_v = 0.85
vf_max_v = 1.0
vf_at_a = 2.0
vr_max_v = 100.0
ir_max_a = 5e-6
ir_at_v = 100.0
rth_ja_k_per_w = 40.0
tj_max_c = 150.0
"""

SCHOTTKY_SPEC = """\
name = "DEMO-SKY-3A"
kind = "schottky"
vf_v = 0.55
vf_max_v = 0.62
vf_at_a = 2.0
vr_max_v = 40.0
ir_max_a = 50e-6
ir_at_v = 40.0
rth_ja_k_per_w = 40.0
tj_max_c = 125.0
"""

DESIGN = """\
name = "DEMO-LAMP controller <b>bold</b>"
application = "other"
note = "invented product"

[input]
nominal_v = 12.0
min_v = 9.0
max_v = 16.0
reverse_v = 14.0

[load]
nominal_a = 2.0
max_a = 2.5

[ambient]
max_c = 60.0

[[candidate]]
spec = "rect.toml"
label = "rectifier"

[[candidate]]
spec = "sky.toml"
label = "schottky"

[[candidate]]
spec = "pfet.toml"
label = "p-mosfet"
"""


def design_file(tmp: Path) -> Path:
    spec_file(tmp)
    (tmp / "rect.toml").write_text(RECT_SPEC, encoding="utf-8")
    (tmp / "sky.toml").write_text(SCHOTTKY_SPEC, encoding="utf-8")
    path = tmp / "design.toml"
    path.write_text(DESIGN, encoding="utf-8")
    return path
