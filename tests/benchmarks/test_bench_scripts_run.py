"""Every benchmark script still runs: each is started in its tiny `--quick` mode in a fresh process.

Benchmarks are scripts, not tests (speed goals are never asserted here); this
only catches a benchmark broken by a change elsewhere. The figures themselves
are in benchmarks/RESULTS.md.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

BENCHMARKS = Path(__file__).resolve().parents[2] / "benchmarks"
SCRIPTS = sorted(BENCHMARKS.glob("bench_*.py"))


def test_the_benchmarks_are_there():
    names = {p.name for p in SCRIPTS}
    assert {"bench_analysis_scale.py", "bench_estimator_efficiency.py", "bench_time_to_answer.py",
            "bench_sweep_overhead.py", "bench_ui_latency.py", "bench_round_trips.py", "bench_sequential_lot.py"} <= names


@pytest.mark.parametrize("script", SCRIPTS, ids=[p.stem for p in SCRIPTS])
def test_benchmark_runs_in_quick_mode(script: Path, tmp_path: Path):
    out = tmp_path / "figures.json"
    done = subprocess.run([sys.executable, str(script), "--quick", "--json", str(out)], cwd=tmp_path,
                          capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr[-3000:]
    assert "reproduce: python " in done.stdout
    figures = json.loads(out.read_text())
    assert figures["quick"] is True and figures["figures"]
    assert figures["machine"]["nproc"] >= 1
