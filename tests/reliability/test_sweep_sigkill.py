"""SIGKILL of a whole sweep process at seeded random moments: every run file loads and holds every acknowledged point.

tests/runs kills a process that only writes; here the killed process is the
`benchlog sweep` command itself, with its built-in simulated bench, runner,
progress output and writer thread. `benchlog sweep` prints no durability
acknowledgements, so most kills run it through `acked_sweep`, which is the same
command with the run writer's fsync callback printing "ack N" (N points
flushed and fsynced). A few kills hit the plain command and check that the file
it leaves loads.

The moments are drawn after the header is on disk (before that there is no run
to keep: a kill in the first milliseconds can leave an empty file, which the
readers refuse as "no complete header", one line, exit 2).
"""

from __future__ import annotations

import random
import signal
import subprocess
import sys
import time
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path

from benchlog.runs import load, read_events
from benchlog.runs.events import Point

from .procs import ROOT, child_env

PLAN = Path(__file__).parent / "plans" / "pmos-300.toml"  # 299 points, at least 0.9 s of dwell
ACKED_KILLS = 22
PLAIN_KILLS = 2
PARALLEL = 6
SEED = 20250207


@dataclass(frozen=True)
class Kill:
    number: int
    delay_s: float
    acked: bool


@dataclass(frozen=True)
class Killed:
    kill: Kill
    out_dir: Path
    returncode: int
    acknowledged: int  # the highest "ack N" printed before the kill (-1: none)
    stderr: str


def _argv(kill: Kill, out_dir: Path) -> list[str]:
    # instant sim timing: this tests durability, and the kills must land all along a sweep of many points
    args = [str(PLAN), "--out", str(out_dir), "--seed", str(kill.number), "--sim-timing", "instant"]
    if kill.acked:
        return [sys.executable, "-m", "tests.reliability.acked_sweep", *args]
    return [sys.executable, "-m", "benchlog", "sweep", *args]


def _kill_once(kill: Kill, work: Path) -> Killed:
    out_dir = work / f"kill{kill.number:02d}"
    child = subprocess.Popen(_argv(kill, out_dir), cwd=ROOT, env=child_env(), stdin=subprocess.DEVNULL,
                             stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    seen: list[str] = []
    if kill.acked:
        first = child.stdout.readline()  # "ack 0": the header is on disk
        seen.append(first)
        assert first.startswith("ack "), (first, child.stderr.read() if child.poll() is not None else "")
    else:
        deadline = time.monotonic() + 30
        while not any(out_dir.glob("*.run")) or not _has_header(out_dir):
            assert time.monotonic() < deadline and child.poll() is None, child.communicate()
            time.sleep(0.005)
    time.sleep(kill.delay_s)
    child.send_signal(signal.SIGKILL)
    rest, err = child.communicate(timeout=30)
    seen.append(rest)
    acks = [int(line.split()[1]) for line in "".join(seen).splitlines() if line.startswith("ack ")]
    return Killed(kill, out_dir, child.returncode, max(acks, default=-1), err)


def _has_header(out_dir: Path) -> bool:
    return any(b"\n" in path.read_bytes()[:65536] for path in out_dir.glob("*.run"))


def test_sigkill_of_the_sweep_process_keeps_every_acknowledged_point(tmp_path):
    rng = random.Random(SEED)
    kills = [Kill(k, rng.uniform(0.0, 0.6), acked=k < ACKED_KILLS) for k in range(ACKED_KILLS + PLAIN_KILLS)]
    with ThreadPoolExecutor(max_workers=PARALLEL) as pool:
        results = list(pool.map(lambda k: _kill_once(k, tmp_path), kills))

    for r in results:
        name = f"kill {r.kill.number} after {r.kill.delay_s:.3f} s"
        assert r.returncode == -signal.SIGKILL, f"{name}: the sweep ended before the kill; {r.stderr}"
        assert "Traceback" not in r.stderr, name
        runs = list(r.out_dir.glob("*.run"))
        assert len(runs) == 1, name
        frame, meta = load(runs[0])  # the file loads
        assert frame["index"].tolist() == list(range(len(frame))), name  # none lost in the middle
        assert not meta.complete and meta.outcome == "incomplete", name
        assert sum(isinstance(e, Point) for e in read_events(runs[0])) == len(frame), name
        if r.kill.acked:
            assert r.acknowledged >= 0, name
            assert len(frame) >= r.acknowledged, f"{name}: {len(frame)} points on disk, {r.acknowledged} acknowledged"

    # the kills really landed at different moments of the sweep, not all before or after it
    on_disk = sorted(len(load(next(r.out_dir.glob("*.run")))[0]) for r in results)
    assert on_disk[0] < 100 and on_disk[-1] > 10 and len(set(on_disk)) > len(on_disk) // 2, on_disk
