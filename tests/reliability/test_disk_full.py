"""A full disk during a sweep: one line, exit 4, the points already on disk kept, the outputs off.

Two ways to fill the disk: a file object at the run writer's write seam that
takes only so many bytes and then raises ENOSPC, as a full file system does
(in-process, always runs), and a real 4 kB tmpfs (a real `benchlog sweep`
process; skipped where mounting is not allowed). Either way the outputs are
asked of the simulated instruments over a fresh pyvisa-py connection.
"""

from __future__ import annotations

import errno
import re
import subprocess
from pathlib import Path

import pytest

import benchlog.runs.writer as writer_module
from benchlog.cli import main
from benchlog.runs import load

from .procs import OutputState, SimProcess, messages, output_state, run_benchlog, write_bench_file

PMOS_PLAN = Path(__file__).parent / "plans" / "pmos-40.toml"  # 40 points, load wiring
LOAD_WIRING = {"force": "load", "current_from": "load", "input_v": 12.0}
ROLES = ("supply", "load", "meter")


class FillingFile:
    """A binary file that takes `room` bytes, writes the part that fits, then raises ENOSPC like a full disk."""

    def __init__(self, real, room: int) -> None:
        self.real = real
        self.room = room

    def write(self, data: bytes) -> int:
        if len(data) > self.room:
            self.real.write(data[: self.room])
            self.room = 0
            raise OSError(errno.ENOSPC, "No space left on device")
        self.room -= len(data)
        return self.real.write(data)

    def __getattr__(self, name):
        return getattr(self.real, name)


def _kept(line: str) -> int:
    found = re.search(r"the (\d+) points confirmed on disk before are kept", line)
    assert found, line
    return int(found.group(1))


@pytest.mark.fault_survival("disk full during a sweep")
def test_disk_full_at_the_write_seam_keeps_the_points_and_switches_off(sim_bench, tmp_path, monkeypatch, capsys):
    bench = sim_bench("pmos", seed=2)
    resources = {role: bench.resources[role] for role in ROLES}
    bench_file = write_bench_file(tmp_path / "bench.toml", resources, **LOAD_WIRING)
    real_open = open

    def open_on_a_nearly_full_disk(path, mode="r", *args, **kwargs):
        handle = real_open(path, mode, *args, **kwargs)
        return FillingFile(handle, room=3500) if "x" in mode else handle  # the header and a dozen points fit

    monkeypatch.setattr(writer_module, "open", open_on_a_nearly_full_disk, raising=False)
    rc = main(["sweep", str(PMOS_PLAN), "--bench", str(bench_file), "--out", str(tmp_path / "runs"), "--yes"])
    out, err = capsys.readouterr()
    context = f"exit {rc}\nstdout {out!r}\nstderr {err!r}"
    assert rc == 4, context
    assert "Traceback" not in err, context
    told = messages(err)
    assert len(told) == 1 and told[0].startswith("benchlog: ") and "the disk is full" in told[0], context
    runs = sorted((tmp_path / "runs").glob("*.run"))
    assert len(runs) == 1 and str(runs[0]) in told[0], context
    kept = _kept(told[0])
    frame, meta = load(runs[0])  # the torn last line (cut by the full disk) is skipped, as after a crash
    assert 0 < kept <= len(frame) < 40 and not meta.complete, context
    assert frame["index"].tolist() == list(range(len(frame)))
    assert output_state(resources) == OutputState(supply_output_on=False, load_input_on=False)


@pytest.mark.fault_survival("disk full during a sweep")
def test_disk_full_on_a_real_small_file_system(tmp_path):
    full = tmp_path / "full"
    full.mkdir()
    mounted = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=4k", "tmpfs", str(full)],
                             capture_output=True, timeout=20).returncode == 0
    if not mounted:
        pytest.skip("mounting a 4 kB tmpfs needs root; the write-seam test covers the same path")
    try:
        with SimProcess() as sim:
            bench_file = write_bench_file(tmp_path / "bench.toml", sim.resources, **LOAD_WIRING)
            done = run_benchlog("sweep", str(PMOS_PLAN), "--bench", str(bench_file), "--out", str(full), "--yes",
                                timeout_s=90)
            state = output_state(sim.resources)
        context = f"exit {done.returncode}\nstdout {done.stdout!r}\nstderr {done.stderr!r}"
        assert done.returncode == 4 and "Traceback" not in done.stderr, context
        told = messages(done.stderr)
        assert len(told) == 1 and "the disk is full" in told[0], context
        runs = sorted(full.glob("*.run"))
        kept = _kept(told[0])
        frame, _meta = load(runs[0])
        assert 0 < kept <= len(frame) < 40, context
        assert state == OutputState(supply_output_on=False, load_input_on=False), context
    finally:
        subprocess.run(["umount", str(full)], capture_output=True, timeout=20)


@pytest.mark.fault_survival("disk full during a sweep")
@pytest.mark.parametrize("argv", [("export", "{run}", "--csv", "{full}/points.csv"),
                                  ("report", "{run}", "-o", "{full}/report.html")], ids=["export", "report"])
def test_export_and_report_onto_a_full_disk(argv, tmp_path, capsys):
    from .test_bad_inputs import GOOD_RUN

    full = tmp_path / "full"
    full.mkdir()
    mounted = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=4k", "tmpfs", str(full)],
                             capture_output=True, timeout=20).returncode == 0
    if not mounted:
        pytest.skip("mounting a 4 kB tmpfs needs root")
    try:
        before = Path(GOOD_RUN).read_bytes()
        (full / "filler").write_bytes(b"x" * 4096)  # the one page of this file system is taken: no room left
        rc = main([a.replace("{run}", GOOD_RUN).replace("{full}", str(full)) for a in argv])
        out, err = capsys.readouterr()
        lines = [line for line in err.splitlines() if line.strip()]
        assert rc == 4 and len(lines) == 1 and "Traceback" not in err, (rc, out, err)
        assert "the disk is full" in lines[0] and "untouched" in lines[0], lines
        assert Path(GOOD_RUN).read_bytes() == before
    finally:
        subprocess.run(["umount", str(full)], capture_output=True, timeout=20)
