"""A writer killed with SIGKILL at random moments leaves a file that loads and holds every acknowledged point."""

from __future__ import annotations

import os
import random
import signal
import subprocess
import sys
import time
from pathlib import Path

from benchlog.runs import load, read_events
from benchlog.runs.events import Point

KILLS = 20
PARALLEL = 4
ROOT = Path(__file__).resolve().parents[2]


def _start(path: Path, seed: int) -> subprocess.Popen:
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    return subprocess.Popen([sys.executable, "-m", "tests.runs.killed_writer", str(path), str(seed)],
                            cwd=ROOT, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


def _kill_after_first_ack(child: subprocess.Popen, delay_s: float) -> tuple[int, str]:
    first = child.stdout.readline()  # blocks until the first point is on disk
    assert first.startswith("ack "), child.stderr.read() if child.poll() is not None else first
    time.sleep(delay_s)
    child.send_signal(signal.SIGKILL)
    rest, err = child.communicate(timeout=30)
    acks = [int(line.split()[1]) for line in (first + rest).splitlines() if line.startswith("ack ")]
    return max(acks), err


def test_sigkill_at_random_moments_keeps_every_acknowledged_point(tmp_path):
    rng = random.Random(20250131)
    delays = [rng.uniform(0.0, 0.2) for _ in range(KILLS)]
    results = []
    for start in range(0, KILLS, PARALLEL):
        batch = []
        for k in range(start, min(start + PARALLEL, KILLS)):
            path = tmp_path / f"kill{k:02d}.run"
            batch.append((path, delays[k], _start(path, seed=k)))
        for path, delay, child in batch:
            acked, err = _kill_after_first_ack(child, delay)
            assert child.returncode == -signal.SIGKILL, err
            results.append((path, acked))

    for path, acked in results:
        frame, meta = load(path)
        assert len(frame) >= acked, f"{path.name}: {len(frame)} points on disk, {acked} acknowledged"
        assert frame["index"].tolist() == list(range(len(frame)))  # none lost in the middle
        assert not meta.complete and meta.outcome == "incomplete"
        # the line reader agrees with the loader on every killed file
        assert sum(isinstance(e, Point) for e in read_events(path)) == len(frame)
