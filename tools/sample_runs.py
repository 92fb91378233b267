"""Regenerate the recorded sample runs in `sample_runs/` from the simulated bench, the same every time.

    python -m tools.sample_runs [--out DIR] [--only NAME ...] [--port BASE] [--list]

(from the repository root: a developer tool, not part of the installed package)

Every file is a genuine recording: the real sweep runner drives the simulated
bench over pyvisa-py loopback sockets and the real run writer records it. What
makes the files repeatable:

* fixed seeds (the sim's part-to-part spread, noise and instrument errors);
* a bench clock shared by the runner and the simulated bench that moves only
  when the runner waits (dwell, cool-down, reverse hold), so the recorded times
  and the junction's self-heating depend on the plan, not on the machine; before
  it moves, every instrument is asked `*OPC?` (IEEE 488.2 10.19), so each
  setting sent so far has reached the simulated circuit and no socket race can
  change what is read;
* the simulator's instant timing (`SimConfig.timing = "instant"`): readings and
  setpoints take no time of their own, so the bench clock holds only the plan's
  waits; the recorded times are the plan's, not what a real meter would add;
* a fixed start time per run (`started_utc`), a fixed run id (`sample_run_id`:
  a version 4 UUID drawn from the sample's name, not from a random source), a
  fixed host name, and fixed loopback ports (`--port`, default 29100) for the instruments' resource strings.

The killed run is recorded by a child process that stops itself with SIGKILL
after a fixed number of points are on disk, half-way through writing the next
record: the file has no end record and a torn last line, exactly as a crash
leaves it.
"""

from __future__ import annotations

import argparse
import hashlib
import os
import signal
import subprocess
import sys
import time
import uuid
from dataclasses import dataclass, field, replace
from datetime import datetime, timedelta, timezone
from pathlib import Path
from typing import Any, Mapping, Sequence

import benchlog

PACKAGE_DIR = Path(benchlog.__file__).resolve().parent
DEMO_PLANS = PACKAGE_DIR / "demo" / "plans"
#: the checkout this tool sits in
REPO = Path(__file__).resolve().parents[1]
DEFAULT_OUT = REPO / "sample_runs"
#: loopback ports of the simulated instruments (supply, load, meter, current meter = BASE .. BASE+3)
DEFAULT_PORT = 29100
#: recorded in every header instead of this machine's name
HOST = "sample-bench"
#: the recordings are dated as one session on one (invented) day
SESSION_START = datetime(2025, 3, 4, 9, 0, 0, tzinfo=timezone.utc)
LOT_SIZE = 20


def sample_run_id(name: str) -> str:
    """The fixed run id of one sample: a UUID with the version 4 bits set, from the SHA-256 of its name."""
    return str(uuid.UUID(bytes=hashlib.sha256(name.encode("utf-8")).digest()[:16], version=4))


@dataclass(frozen=True)
class SampleRun:
    """One recorded run: which demo plan, which simulated part, and what it shows."""

    name: str  # file path under the output folder, without ".run"
    plan: str  # a plan in benchlog/demo/plans
    seed: int  # seed of the simulated bench (part-to-part spread, noise, instrument errors)
    what: str  # one line for the README's inventory
    start_min: float  # minutes after SESSION_START
    serial: str | None = None  # replaces the plan's [element].serial
    element_params: Mapping[str, float] = field(default_factory=dict)  # exact sim parameters (outliers)
    killed_after_points: int | None = None  # SIGKILL once this many points are on disk
    input_v: float | None = None  # the bench's input voltage for load wiring (None: the simulated bench's 12 V)

    @property
    def started_utc(self) -> str:
        when = SESSION_START + timedelta(minutes=self.start_min)
        return when.strftime("%Y-%m-%dT%H:%M:%S.") + f"{when.microsecond // 1000:03d}Z"


#: lot parts made clearly out of family: serial -> exact R_DS(on) at 25 °C (family: 10 mΩ ± 10 %)
LOT_OUTLIERS: Mapping[str, float] = {"L07-0006": 0.0150, "L07-0013": 0.0068}


#: the lot's input voltage: the spec's |Vgs| of 10 V plus about the drop (gate tied to the return)
LOT_INPUT_V = 10.0


def _lot() -> tuple[SampleRun, ...]:
    runs = []
    for n in range(1, LOT_SIZE + 1):
        serial = f"L07-{n:04d}"
        params = {"r_on_ohm": LOT_OUTLIERS[serial]} if serial in LOT_OUTLIERS else {}
        what = f"lot part {serial} at {LOT_INPUT_V:g} V input" + (f" (out of family: R_DS(on) {params['r_on_ohm'] * 1e3:g} mΩ)"
                                       if params else "")
        # incoming inspection tests like for like: an input of 10 V puts |Vgs| just under the 10 V the
        # spec's maximum is stated at, inside its R_DS(on)(Vgs) points (12 V would be outside: cannot pass)
        runs.append(SampleRun(f"lot-demo-07/{serial}", "lot-inspection", 100 + n, what,
                              start_min=60 + 2 * n, serial=serial, element_params=params, input_v=LOT_INPUT_V))
    return tuple(runs)


SAMPLES: tuple[SampleRun, ...] = (
    SampleRun("rectifier-prototype", "rectifier-prototype", 1,
              "silicon rectifier DEMO-RECT-3A, log sweep 5 mA..2 A with cool-down between points", 0),
    SampleRun("schottky-prototype", "schottky-prototype", 2,
              "Schottky DEMO-SCHOTTKY-2A, log sweep 2 mA..2 A with cool-down between points", 10),
    SampleRun("pmos-prototype", "pmos-prototype", 3,
              "P-MOSFET DEMO-PFET-10M as an ideal diode, load-forced at 12 V input, 0.1..3 A", 20),
    SampleRun("resistor-prototype", "resistor-prototype", 4,
              "reference resistor DEMO-SHUNT-50M, up-then-down sweep 0.2..3 A", 30),
    SampleRun("rectifier-reverse", "reverse-polarity", 5,
              "rectifier forward sweep, then 12 V reversed for 2 s (reverse current read by a series meter)", 40),
    SampleRun("rectifier-self-heating", "self-heating", 6,
              "rectifier, slow up-then-down sweep with no cool-down: the down leg lies below the up leg", 50),
    SampleRun("pmos-killed", "pmos-prototype", 7,
              "P-MOSFET sweep killed (SIGKILL) after 12 of 30 points: no end record, torn last line", 56,
              serial="PROTO-0005", killed_after_points=12),
    SampleRun("pmos-heat-soak", "pmos-heat-soak", 8,
              "P-MOSFET heat-soak: 5 A held for 60 s, the drop read every 0.25 s, then 20 s of cooling at 1 A", 58),
) + _lot()


# -- the bench clock: benchlog.cli.simbench.BenchClock, shared with the heat-soak tests ------------


class _KillAfter:
    """A run writer that lets `points` points reach the disk, writes half the next record, then SIGKILLs."""

    def __init__(self, writer: Any, points: int) -> None:
        self.writer = writer
        self.points = points

    def write(self, event: Any) -> None:
        from benchlog.runs.events import Point
        from benchlog.runs.writer import encode_event

        if isinstance(event, Point) and event.index >= self.points:
            while self.writer.durable_count < self.writer.queued_count:
                time.sleep(0.001)
            line = encode_event(event).encode("utf-8")
            with open(self.writer.path, "ab") as torn:
                torn.write(line[: len(line) // 2])
                torn.flush()
                os.fsync(torn.fileno())
            os.kill(os.getpid(), signal.SIGKILL)
        self.writer.write(event)


# -- recording ------------------------------------------------------------------------------------


def run_path(out_dir: str | Path, sample: SampleRun) -> Path:
    return Path(out_dir) / f"{sample.name}.run"


def record(sample: SampleRun, out_dir: str | Path, *, port: int = DEFAULT_PORT, kill: bool = True) -> Path:
    """Record `sample` into `out_dir` (replacing an earlier recording of it); returns the run file.

    A sample with `killed_after_points` is recorded by a child process that
    kills itself (`kill=True`); `kill=False` is that child's own call.
    """
    path = run_path(out_dir, sample)
    path.parent.mkdir(parents=True, exist_ok=True)
    if path.exists():
        path.unlink()
    if sample.killed_after_points is not None and kill:
        _record_in_killed_child(sample, Path(out_dir), port)
        return path
    _record_here(sample, path, port, kill_after=sample.killed_after_points)
    return path


def _record_here(sample: SampleRun, path: Path, port: int, kill_after: int | None) -> None:
    from benchlog.sim.config import SimConfig
    from benchlog.sweep.plan import load_plan
    from benchlog.cli.simbench import sim_wiring, sweep_on_bench_clock

    plan = load_plan(DEMO_PLANS / f"{sample.plan}.toml")
    if sample.serial is not None:
        plan = replace(plan, element=replace(plan.element, serial=sample.serial))
    # as `benchlog sweep` does: a reverse test reads its leakage with a series current meter
    wiring = sim_wiring(plan.element, current_from="meter" if plan.reverse is not None else "supply")
    if sample.input_v is not None:
        wiring = replace(wiring, input_v=sample.input_v)
    config = SimConfig(element=plan.element.kind, seed=sample.seed, ambient_c=plan.element.ambient_c,
                       port=port, element_params=dict(sample.element_params),
                       current_meter=wiring.current_from in ("meter", "shunt"), timing="instant")
    sweep_on_bench_clock(plan, config, path, wiring=wiring, source="built-in simulated bench",
                         check_feasibility=True,
                         header={"started_utc": sample.started_utc, "host": HOST, "run_id": sample_run_id(sample.name)},
                         wrap_writer=None if kill_after is None else (lambda w: _KillAfter(w, kill_after)))


def _record_in_killed_child(sample: SampleRun, out_dir: Path, port: int) -> None:
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join(p for p in (str(REPO), str(PACKAGE_DIR.parent), env.get("PYTHONPATH")) if p)
    done = subprocess.run(
        [sys.executable, "-m", "tools.sample_runs", "--out", str(out_dir), "--only", sample.name,
         "--port", str(port), "--as-killed-child"],
        env=env, capture_output=True, text=True, timeout=120,
    )
    if done.returncode != -signal.SIGKILL:
        raise RuntimeError(f"the child recording {sample.name} should have died of SIGKILL, exit code "
                           f"{done.returncode}: {done.stderr.strip()[-500:]}")


def select(names: Sequence[str] | None) -> tuple[SampleRun, ...]:
    """The samples named (a name, or a folder such as `lot-demo-07` for all of its runs); all if None."""
    if not names:
        return SAMPLES
    chosen = [s for s in SAMPLES if any(s.name == n or s.name.startswith(n.rstrip("/") + "/") for n in names)]
    unknown = [n for n in names if not any(s.name == n or s.name.startswith(n.rstrip("/") + "/") for s in SAMPLES)]
    if unknown:
        from benchlog.badinput import BadInput

        raise BadInput("--only", ", ".join(unknown), "is not a sample run",
                       "one of " + ", ".join(sorted({s.name.split("/")[0] for s in SAMPLES})))
    return tuple(chosen)


def generate(out_dir: str | Path = DEFAULT_OUT, names: Sequence[str] | None = None, *,
             port: int = DEFAULT_PORT) -> list[Path]:
    """Record every sample (or those named) into `out_dir`; returns the run files."""
    return [record(sample, out_dir, port=port) for sample in select(names)]


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(
        prog="python -m tools.sample_runs",
        description="Regenerate the sample run files from the simulated bench (deterministic).")
    parser.add_argument("--out", default=str(DEFAULT_OUT), metavar="DIR",
                        help=f"output folder (default: {DEFAULT_OUT})")
    parser.add_argument("--only", nargs="+", metavar="NAME", help="record only these samples (or a folder)")
    parser.add_argument("--port", type=int, default=DEFAULT_PORT,
                        help=f"first loopback port of the simulated instruments (default {DEFAULT_PORT})")
    parser.add_argument("--list", action="store_true", help="list the samples and what each shows")
    parser.add_argument("--as-killed-child", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    from benchlog.badinput import BadInput

    try:
        samples = select(args.only)
        if args.list:
            for s in samples:
                print(f"{s.name}.run\t{s.what}")
            return 0
        if args.as_killed_child:
            for s in samples:
                _record_here(s, run_path(args.out, s), args.port, kill_after=s.killed_after_points)
            return 1  # not reached: the child kills itself
        for s in samples:
            path = record(s, args.out, port=args.port)
            print(path)
    except BadInput as exc:
        print(exc.line(), file=sys.stderr)
        return 2
    except OSError as exc:
        print(f"tools.sample_runs: {exc} (is port {args.port}..{args.port + 3} in use? try --port)",
              file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
