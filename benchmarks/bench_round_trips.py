"""Round trips per point: the sweep runner against a minimal pyvisa loop that records the same quantities.

Side by side on one simulated bench per pair (real instrument timing unless
`--sim-timing instant`), at reply latencies of 0, 2 and 5 ms per query message
(`SimConfig.latency_s`):

- ours: `benchlog.sweep.session.run_sweep` of the demo P-MOSFET plan (load wiring:
  the load sets the current and reads it back, the supply holds the input in CV);
- ours, one unit per message: the same with the sim profiles' `compound_queries`
  switched off (every setpoint, sync, trigger and read-back its own message), the
  exchanges before the round-trip work;
- minimal: a loop written plainly below with raw pyvisa, not our code. Per point it
  sets the load current, waits for `*OPC?`, waits the dwell, reads `READ?` until two
  consecutive readings agree within the plan's tolerance (or the read bound or
  timeout), reads the load current and the supply's status register and voltage, and
  appends one CSV line with flush + fsync: the quantities our run record holds.

Per-point time is (t of the last point - t of the first) / (points - 1) on each side,
so connection, configuration and shutdown are left out alike; messages per point
are counted at the simulator between those two points. The physical floor per point
is dwell + settle reads x samples x NPLC / line frequency (the reads ours took, from
its run record). Goals: ours <= 1.10x minimal at 2 and 5 ms; ours <= 1.05x the
floor with real timing (0 ms latency).
"""

from __future__ import annotations

import json
import os
import re
import statistics
import sys
import threading
import time
from pathlib import Path

import _common

PLAN = _common.REPO / "benchlog" / "demo" / "plans" / "pmos-prototype.toml"


def plan_text(points: int) -> str:
    text = PLAN.read_text(encoding="utf-8")
    return re.sub(r"count = \d+", f"count = {points}", text, count=1)


def record_messages(running) -> list[tuple[float, str, str]]:
    """Log every program message each simulated instrument executes as (time, role, text)."""
    log: list[tuple[float, str, str]] = []
    lock = threading.Lock()
    for role, device in running.bench.devices().items():
        original = device.execute

        def execute(message, _original=original, _role=role):
            with lock:
                log.append((time.perf_counter(), _role, message))
            return _original(message)

        device.execute = execute
    return log


def minimal_loop(resources: dict[str, str], plan, input_v: float, csv_path: Path) -> list[float]:
    """The same measurement with bare pyvisa; returns the time of each point's CSV line."""
    import socket

    import pyvisa
    from pyvisa import constants

    rm = pyvisa.ResourceManager("@py")
    inst = {}
    stamps: list[float] = []
    try:
        for role in ("supply", "load", "meter"):
            r = rm.open_resource(resources[role], read_termination="\n", write_termination="\n", timeout=3000)
            try:
                r.set_visa_attribute(constants.VI_ATTR_TCPIP_NODELAY, constants.VI_TRUE)
            except Exception:  # noqa: BLE001 - set it on the socket instead
                r.visalib.sessions[r.session].interface.setsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY, 1)
            inst[role] = r
        supply, load, meter = inst["supply"], inst["load"], inst["meter"]
        meter.write(f"CONF:VOLT:DC {plan.meter.range_v}")
        meter.write(f"VOLT:DC:NPLC {plan.meter.nplc}")
        meter.write(f"SAMP:COUN {plan.meter.samples}")
        supply.write(f"VOLT {input_v}")
        supply.write(f"CURR {plan.limits.max_current_a * 1.05}")
        load.write("FUNC CURR")
        currents = [plan.steps.start_a + i * (plan.steps.stop_a - plan.steps.start_a) / (plan.steps.count - 1)
                    for i in range(plan.steps.count)]
        load.write(f"CURR {currents[0]}")
        supply.write("OUTP ON")
        load.write("INP ON")
        rule = plan.settle
        with open(csv_path, "w", encoding="ascii") as out:
            out.write("setpoint_a,current_a,drop_v,supply_v,status,reads\n")
            for a in currents:
                load.write(f"CURR {a}")
                load.query("*OPC?")
                time.sleep(rule.dwell_s)
                window: list[float] = []
                reads = 0
                deadline = time.monotonic() + rule.timeout_s
                while True:
                    samples = [float(x) for x in meter.query("READ?").split(",")]
                    window = (window + [sum(samples) / len(samples)])[-rule.consecutive:]
                    reads += 1
                    if len(window) == rule.consecutive and max(window) - min(window) <= rule.tolerance_v:
                        break
                    if reads >= rule.max_reads or time.monotonic() >= deadline:
                        break
                current = float(load.query("MEAS:CURR?"))
                status = int(supply.query("STAT:OPER:COND?"))
                volts = float(supply.query("MEAS:VOLT?")) if plan.record.supply_v else float("nan")
                out.write(f"{a},{current},{sum(window) / len(window)},{volts},{status},{reads}\n")
                out.flush()
                os.fsync(out.fileno())
                stamps.append(time.perf_counter())
        load.write("INP OFF")
        supply.write("OUTP OFF")
    finally:
        for r in inst.values():
            try:
                r.close()
            except Exception:  # noqa: BLE001
                pass
        rm.close()
    return stamps


def _per_point(stamps: list[float], log, skip_before: float) -> tuple[float, float]:
    first, last = stamps[0], stamps[-1]
    n = len(stamps) - 1
    msgs = sum(1 for t, _, _ in log if first < t <= last and t >= skip_before)
    return (last - first) / n, msgs / n


def point_timeline(stamps: list[float], log) -> list[tuple[str, str, float]] | None:
    """Median time of each message after the previous point's record, over the points whose messages match.

    Where the per-point time goes beyond the physics: what the message log shows between two point
    records (setpoint, dwell, readings, read-backs, record). None if the points differ in their messages.
    """
    rows = []
    for a, z in zip(stamps, stamps[1:]):
        numbers_out = [(role, re.sub(r"(?<=\s)[-+\d.eE]+", "x", message)[:48], t - a)
                       for t, role, message in log if a < t <= z]  # setpoints differ; the messages do not
        rows.append(numbers_out + [("record", "point written", z - a)])
    shape = [(r, m) for r, m, _ in rows[0]]
    same = [r for r in rows if [(x, m) for x, m, _ in r] == shape]
    if len(same) < max(2, len(rows) // 2):
        return None
    return [(role, msg, statistics.median(r[i][2] for r in same)) for i, (role, msg) in enumerate(shape)]


def single_unit_profiles(tmp: Path) -> dict[str, str]:
    """Copies of the sim profiles with compound_queries off (one program unit per message)."""
    try:
        from benchlog.cli.simbench import SIM_PROFILES
    except ImportError:  # before the simulated bench moved to cli/
        from benchlog.sweep.simbench import SIM_PROFILES

    out = {}
    for role, name in SIM_PROFILES.items():
        text = (_common.REPO / "instrument_profiles" / f"{name}.toml").read_text(encoding="utf-8")
        text = text.replace("compound_queries = true", "compound_queries = false")
        path = tmp / f"{name}-single.toml"
        path.write_text(text, encoding="utf-8")
        out[role] = str(path)
    return out


def one_pair(latency_s: float, points: int, tmp: Path, k: int, timing: str) -> dict:
    from dataclasses import replace

    from benchlog.runs import load_points
    from benchlog.runs.events import Point
    from benchlog.sweep.plan import load_plan
    from benchlog.sweep.session import run_sweep
    builtin_bench = _common.builtin_bench_starter()

    plan_path = tmp / f"plan-{points}.toml"
    if not plan_path.exists():
        plan_path.write_text(plan_text(points), encoding="utf-8")
    plan = load_plan(plan_path)
    result: dict = {}
    singles = single_unit_profiles(tmp)
    for side in ("ours", "ours_single", "minimal"):
        setup, running = builtin_bench(plan.element, seed=k, latency_s=latency_s, timing=timing)
        try:
            if side == "ours_single":
                roles = {name: replace(spec, profile=singles[name]) for name, spec in setup.roles.items()}
                setup = replace(setup, roles=roles)
            log = record_messages(running)
            if side == "minimal":
                stamps = minimal_loop(running.resources, plan, setup.wiring.input_v, tmp / f"minimal-{k}.csv")
                reads = None
            else:
                stamps = []
                done = run_sweep(plan, setup, tmp / f"runs-{side}",
                                 on_event=lambda e: stamps.append(time.perf_counter()) if isinstance(e, Point) else None)
                if done.outcome != "complete" or done.points != points:
                    raise RuntimeError(f"sweep ended {done.outcome} after {done.points} points: {done.message}")
                arrays, _ = load_points(done.run_file)
                reads = float(statistics.fmean(arrays.settle_reads)) if hasattr(arrays, "settle_reads") else None
            per_s, msgs = _per_point(stamps, log, 0.0)
            result[side] = {"per_point_s": per_s, "messages_per_point": msgs, "messages_total": len(log),
                            "settle_reads_mean": reads,
                            "timeline": point_timeline(stamps, log) if side == "ours" else None}
        finally:
            running.stop()
    m = plan.meter
    reads = result["ours"]["settle_reads_mean"] or float(plan.settle.consecutive)
    result["floor_s"] = plan.settle.dwell_s + reads * m.samples * m.nplc / 50.0
    return result


def main() -> int:
    p = _common.parser(__doc__.splitlines()[0])
    p.add_argument("--points", type=int, default=30)
    p.add_argument("--pairs", type=int, default=3)
    p.add_argument("--sim-timing", choices=("real", "instant"), default="real")
    args = p.parse_args()
    args.sim_timing = _common.effective_timing(args.sim_timing)
    points, pairs = (5, 1) if args.quick else (args.points, args.pairs)
    import tempfile

    figures: dict = {}
    with tempfile.TemporaryDirectory() as d:
        tmp = Path(d)
        for latency_ms in (0.0, 2.0, 5.0):
            runs = [one_pair(latency_ms / 1e3, points, tmp, k + 1, args.sim_timing) for k in range(pairs)]
            row = {}
            for side in ("ours", "ours_single", "minimal"):
                per = [r[side]["per_point_s"] for r in runs]
                row[side] = {"best_ms": min(per) * 1e3, "median_ms": statistics.median(per) * 1e3,
                             "messages_per_point": statistics.fmean(r[side]["messages_per_point"] for r in runs),
                             "messages_total": statistics.fmean(r[side]["messages_total"] for r in runs)}
            row["ratio_best"] = row["ours"]["best_ms"] / row["minimal"]["best_ms"]
            row["ratio_median"] = row["ours"]["median_ms"] / row["minimal"]["median_ms"]
            row["floor_ms"] = statistics.fmean(r["floor_s"] for r in runs) * 1e3
            row["ours_over_floor"] = row["ours"]["best_ms"] / row["floor_ms"]
            best_run = min(runs, key=lambda r: r["ours"]["per_point_s"])
            row["ours_timeline"] = best_run["ours"]["timeline"]
            figures[f"{latency_ms:g}ms"] = row
            print(f"latency {latency_ms:g} ms per reply ({args.sim_timing} sim timing, {points} points, "
                  f"best of {pairs}):")
            for side, label in (("ours", "ours"), ("ours_single", "ours, one unit per message"),
                                ("minimal", "minimal pyvisa loop")):
                s = row[side]
                print(f"  {label:28s} {s['best_ms']:7.2f} ms per point (median {s['median_ms']:.2f}); "
                      f"{s['messages_per_point']:.2f} messages per point, {s['messages_total']:.0f} in all")
            print(f"  ratio ours / minimal {row['ratio_best']:.3f} (medians {row['ratio_median']:.3f}); "
                  f"physical floor {row['floor_ms']:.2f} ms, ours / floor {row['ours_over_floor']:.3f}")
            if row["ours_timeline"]:
                print("  a point of ours, from the message log (median over the points of the best run; "
                      "time after the previous point's record, gap to the message before):")
                before = 0.0
                for role, msg, t in row["ours_timeline"]:
                    print(f"    +{t * 1e3:7.2f} ms (gap {(t - before) * 1e3:6.2f})  {role:7s} {msg}")
                    before = t
    print(f"reproduce: {_common.reproduce_command()}")
    if args.json:
        Path(args.json).write_text(json.dumps({"quick": args.quick, "sim_timing": args.sim_timing,
                                               "figures": figures, "machine": _common.machine_facts()},
                                              indent=2), encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
