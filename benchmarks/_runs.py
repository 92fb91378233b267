"""Run files for the benchmarks: one real header from a simulated sweep, then many points or many parts.

The header is taken from a real sweep of the demo P-MOSFET plan on the
built-in simulated bench (pyvisa-py over loopback), so the loader and the fits
see exactly what a recorded run holds; the points are drawn from the same
straight-line law with the simulator's noise sizes, written by the run file's
own encoder (the bytes a `RunWriter` would write).
"""

from __future__ import annotations

import tempfile
from dataclasses import replace
from pathlib import Path

import _common  # noqa: F401  (puts the repository on sys.path)

from benchlog.runs.record import ElementRecord, RunHeader, new_run_id

DEMO_PLAN = _common.REPO / "benchlog" / "demo" / "plans" / "pmos-prototype.toml"
DEMO_SPEC = _common.REPO / "benchlog" / "demo" / "specs" / "demo-pfet-10m.toml"


def recorded_header(out_dir: Path, seed: int = 0) -> tuple[RunHeader, Path]:
    """The header of a real 30-point sweep on the simulated bench (and the run file it is in)."""
    from benchlog.runs import load
    from benchlog.sweep.plan import load_plan
    from benchlog.cli.simbench import sweep_on_builtin_bench

    result = sweep_on_builtin_bench(load_plan(DEMO_PLAN), out_dir, seed=seed)
    if result.outcome != "complete":
        raise RuntimeError(f"template sweep ended {result.outcome}: {result.message}")
    _, meta = load(result.run_file)
    return meta.header, result.run_file


def write_run(path: Path, header: RunHeader, current_a, drop_v, supply_v, t_s, setpoint_a,
              serial: str | None = None, offset_v: float | None = 1.5e-6) -> None:
    """Write a complete run file: header, offset, one P line per point, end record."""
    from benchlog.runs.events import Offset, Point, RunFinished, RunStarted
    from benchlog.runs.writer import encode_event, encode_point

    header = replace(header, run_id=new_run_id())  # each run file its own id
    if serial is not None:
        plan_element = header.plan.element if header.plan is not None else {}
        header = replace(header, element=ElementRecord.from_table({**header.element.table, "serial": serial},
                                                                  plan_element))
    lines = [encode_event(RunStarted(header))]
    if offset_v is not None:
        lines.append(encode_event(Offset(0.0, offset_v)))
    n = len(current_a)
    for i, (t, sp, i_a, v, vs) in enumerate(zip(t_s.tolist(), setpoint_a.tolist(), current_a.tolist(),
                                              drop_v.tolist(), supply_v.tolist())):
        lines.append(encode_point(Point(index=i, t_s=t, setpoint_a=sp, current_a=i_a, drop_v=v, supply_v=vs,
                                        supply_mode="CV", settle_reads=2, direction="up")))
    lines.append(encode_event(RunFinished(float(t_s[-1]) + 0.01 if n else 0.0, "complete", n, "")))
    with open(path, "x", encoding="utf-8") as f:
        f.write("".join(lines))


def synthetic_points(n: int, rng, r_on_ohm: float = 0.0093, v0_v: float = 2e-5):
    """n points of a linear sweep 0.1-3 A (repeated if n is large) with the sim's noise sizes."""
    import numpy as np

    per_sweep = 30 if n <= 30 else 1000
    setpoint = np.tile(np.linspace(0.1, 3.0, per_sweep), -(-n // per_sweep))[:n]
    current = setpoint * (1 + 2e-4) + rng.normal(0.0, 5e-4, n)  # load read-back noise (sim specs)
    drop = v0_v + r_on_ohm * current + rng.normal(0.0, 3.0e-7, n)  # 0.1 V range at 1 PLC (sim meter)
    supply = 12.0 + rng.normal(0.0, 2e-4, n)
    t = 0.02 * np.arange(1, n + 1)
    return current, drop, supply, t, setpoint


def temp_dir(prefix: str) -> tempfile.TemporaryDirectory:
    return tempfile.TemporaryDirectory(prefix=f"benchlog-{prefix}-")
