"""Sweep overhead: the sweep runner (per-point durability on) against a plain pyvisa loop making the same SCPI exchanges.

Side by side in one run, for reply latencies of 0 ms and 2 ms (`SimConfig.latency_s`):
- ours: `benchlog.sweep.session.run_sweep` — what `benchlog sweep PLAN --bench BENCH` runs after
  parsing its arguments: plan and wiring checks, connect with `*IDN?` checks, configure,
  offset, the settle rule, limits, events, the `RunWriter` thread that flushes and fsyncs
  every batch of records, outputs off at the end;
- plain: a loop over `pyvisa.ResourceManager("@py")` resources that sends exactly the
  messages the simulator received from ours, in the same order (queries with `query`,
  the rest with `write`), after opening the same resources with TCP_NODELAY (as ours does).
The simulator records every program message each instrument executes, so the plain loop
is built from what ours actually sent, settle re-reads included. Each pair runs on a fresh
simulated bench; pairs alternate so machine noise hits both alike. The plan is the demo
P-MOSFET plan with dwell_s = 0 (a dwell is a deliberate wait, not overhead) and more points.
Goals: ratio <= 1.05 at 2 ms, <= 1.5 at 0 ms.

The simulator keeps its real instrument timing unless `--sim-timing instant` is given
(each reading takes NPLC/line frequency; setpoints settle); the output names it. With
real timing the meter's integration is in both times, as on a real bench.

A second figure runs the real `benchlog sweep` command in a subprocess against a served
bench (bench file of its resources), to show what process start-up and imports add.
"""

from __future__ import annotations

import re
import socket
import subprocess
import sys
import threading
import time
from pathlib import Path

import _common

PLAN = _common.REPO / "benchlog" / "demo" / "plans" / "pmos-prototype.toml"


def plan_text(points: int) -> str:
    text = PLAN.read_text(encoding="utf-8")
    text = re.sub(r"count = \d+", f"count = {points}", text, count=1)
    text = re.sub(r"dwell_s = [0-9.]+", "dwell_s = 0.0", text, count=1)
    return text


def record_messages(running) -> list[tuple[str, str]]:
    """Patch every simulated instrument so each executed program message is logged as (role, text)."""
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


def plain_loop(resources: dict[str, str], messages: list[tuple[str, str]]) -> None:
    """The same exchanges with bare pyvisa: open, then write or query each message in order."""
    import pyvisa
    from pyvisa import constants

    rm = pyvisa.ResourceManager("@py")
    opened = {}
    try:
        for role, resource in resources.items():
            inst = rm.open_resource(resource, read_termination="\n", write_termination="\n", timeout=2000)
            try:
                inst.set_visa_attribute(constants.VI_ATTR_TCPIP_NODELAY, constants.VI_TRUE)
            except Exception:  # noqa: BLE001 - pyvisa-py may not set it: do it on the socket
                sock = inst.visalib.sessions[inst.session].interface
                sock.setsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY, 1)
            opened[role] = inst
        for role, message in messages:
            if "?" in message:
                opened[role].query(message)
            else:
                opened[role].write(message)
    finally:
        for inst in opened.values():
            inst.close()
        rm.close()


def one_pair(latency_s: float, points: int, tmp: Path, k: int, timing: str = "real") -> dict:
    from benchlog.sweep.plan import load_plan
    from benchlog.sweep.session import run_sweep
    from benchlog.cli.simbench import builtin_bench

    plan_path = tmp / f"plan-{points}.toml"
    if not plan_path.exists():
        plan_path.write_text(plan_text(points), encoding="utf-8")
    plan = load_plan(plan_path)
    setup, running = builtin_bench(plan.element, seed=k, latency_s=latency_s, timing=timing)
    try:
        log = record_messages(running)
        t0 = time.perf_counter()
        result = run_sweep(plan, setup, tmp / f"runs-{latency_s}")
        ours = time.perf_counter() - t0
        if result.outcome != "complete" or result.points != points:
            raise RuntimeError(f"sweep ended {result.outcome} after {result.points} points: {result.message}")
        messages = list(log)
        log.clear()
        t0 = time.perf_counter()
        plain_loop(running.resources, messages)
        plain = time.perf_counter() - t0
        if len(log) != len(messages):
            raise RuntimeError(f"the plain loop made {len(log)} exchanges, ours {len(messages)}")
    finally:
        running.stop()
    queries = sum("?" in m for _, m in messages)
    return {"ours_s": ours, "plain_s": plain, "messages": len(messages), "queries": queries,
            "per_role": {r: sum(1 for role, _ in messages if role == r) for r in running.resources}}


def cli_pair(latency_s: float, points: int, tmp: Path, timing: str = "real") -> dict:
    """`benchlog sweep --bench` in a subprocess against a served bench, and the plain loop beside it."""
    from benchlog.sim.config import SimConfig
    from benchlog.sim.server import serve_bench
    from benchlog.cli.simbench import SIM_INPUT_V, SIM_PROFILES

    running = serve_bench(SimConfig(element="pmos", seed=1, latency_s=latency_s, timing=timing))
    try:
        log = record_messages(running)
        bench = tmp / f"bench-{latency_s}.toml"
        lines = [f'[{role}]\nresource = "{res}"\nprofile = "{SIM_PROFILES[role]}"\n'
                 for role, res in running.resources.items()]
        lines.append(f'[wiring]\nforce = "load"\ncurrent_from = "load"\ninput_v = {SIM_INPUT_V}\n')
        bench.write_text("\n".join(lines), encoding="utf-8")
        plan_path = tmp / f"plan-{points}.toml"
        plan_path.write_text(plan_text(points), encoding="utf-8")
        t0 = time.perf_counter()
        done = subprocess.run([sys.executable, "-m", "benchlog", "sweep", str(plan_path), "--bench", str(bench),
                               "--out", str(tmp / "cli-runs"), "--yes", "--json"],
                              cwd=_common.REPO, capture_output=True, text=True, timeout=600)
        cli = time.perf_counter() - t0
        if done.returncode != 0:
            raise RuntimeError(f"benchlog sweep failed ({done.returncode}): {done.stderr[-2000:]}")
        messages = list(log)
        log.clear()
        t0 = time.perf_counter()
        plain_loop(running.resources, messages)
        plain = time.perf_counter() - t0
    finally:
        running.stop()
    start = subprocess.run([sys.executable, "-c", "import time; t=time.perf_counter(); "
                            "import benchlog.cli, benchlog.sweep.session, pyvisa; print(time.perf_counter()-t)"],
                           cwd=_common.REPO, capture_output=True, text=True, check=True)
    return {"cli_s": cli, "plain_s": plain, "messages": len(messages), "imports_s": float(start.stdout)}


def main() -> int:
    p = _common.parser(__doc__.splitlines()[0])
    p.add_argument("--points", type=int, default=200, help="points per sweep (default 200)")
    p.add_argument("--repeat", type=int, default=5, help="pairs per latency (default 5)")
    p.add_argument("--no-cli", action="store_true", help="skip the benchlog-sweep subprocess figure")
    p.add_argument("--sim-timing", choices=("real", "instant"), default="real",
                   help="the simulator's timing (default real: readings take their integration time)")
    args = p.parse_args()
    if args.quick:
        args.points, args.repeat = 10, 1

    import tempfile

    goals = {0.0: 1.5, 0.002: 1.05}
    figures: dict = {"sim_timing": args.sim_timing}
    print(f"simulator timing: {args.sim_timing}")
    with tempfile.TemporaryDirectory(prefix="benchlog-overhead-") as tmp:
        tmp = Path(tmp)
        one_pair(0.0, 5, tmp, 0, args.sim_timing)  # warm-up: imports, the first resource manager
        for latency, goal in goals.items():
            pairs = [one_pair(latency, args.points, tmp, k, args.sim_timing) for k in range(args.repeat)]
            ours = [x["ours_s"] for x in pairs]
            plain = [x["plain_s"] for x in pairs]
            ratio = min(ours) / min(plain)
            ratios = sorted(o / q for o, q in zip(ours, plain))
            met = ratio <= goal
            first = pairs[0]
            print(f"\nreply latency {latency * 1e3:g} ms, {args.sim_timing} sim timing, {args.points} points: "
                  f"{first['messages']} program messages "
                  f"({first['queries']} queries; per role {first['per_role']}), "
                  f"{first['messages'] / args.points:.2f} per point")
            print(f"  runner (run_sweep, fsync per batch): {_common.describe(ours)}")
            print(f"  plain pyvisa loop, same messages:    {_common.describe(plain)}")
            print(f"  ratio {ratio:.3f} (best/best; pairwise {ratios[0]:.3f}..{ratios[-1]:.3f}); "
                  f"per point: ours {min(ours) / args.points * 1e3:.2f} ms, plain {min(plain) / args.points * 1e3:.2f} ms; "
                  f"goal <= {goal}: {_common.verdict(met)}")
            figures[f"latency_{latency * 1e3:g}ms"] = {
                "points": args.points, "ours_s": ours, "plain_s": plain, "ratio": ratio, "pairwise": ratios,
                "messages": first["messages"], "queries": first["queries"], "per_role": first["per_role"],
                "goal": f"<= {goal}", "met": met}
        if not args.no_cli:
            print()
            for latency in goals:
                c = cli_pair(latency, args.points, tmp, args.sim_timing)
                print(f"benchlog sweep (subprocess, {latency * 1e3:g} ms, {args.sim_timing} sim timing): {c['cli_s']:.2f} s against the plain loop "
                      f"{c['plain_s']:.2f} s ({c['messages']} messages): ratio {c['cli_s'] / c['plain_s']:.2f}; "
                      f"of which interpreter imports about {c['imports_s']:.2f} s")
                figures[f"cli_{latency * 1e3:g}ms"] = c
    _common.finish("sweep_overhead", figures, args)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
