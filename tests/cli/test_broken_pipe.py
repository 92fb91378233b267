"""A reader of stdout that goes away (`benchlog fit RUN | head`) ends the command quietly, not with a traceback."""

import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def test_closed_stdout_gives_no_traceback():
    read_end, write_end = os.pipe()
    os.close(read_end)  # nobody will ever read: the first write fails with EPIPE
    try:
        proc = subprocess.run(
            [sys.executable, "-m", "benchlog", "fit", str(ROOT / "sample_runs" / "pmos-prototype.run"), "--json"],
            stdout=write_end, stderr=subprocess.PIPE, text=True, cwd=ROOT, timeout=120,
        )
    finally:
        os.close(write_end)
    assert proc.returncode == 1
    assert "Traceback" not in proc.stderr and "BrokenPipe" not in proc.stderr
