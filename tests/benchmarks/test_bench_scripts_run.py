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
# bench_coverage.py runs at a larger size in test_coverage_small.py (its figures checked there), so its quick run
# would only repeat that; the rest are checked here
QUICK = [p for p in SCRIPTS if p.name != "bench_coverage.py"]


def test_the_benchmarks_are_there():
    names = {p.name for p in SCRIPTS}
    assert {"bench_analysis_scale.py", "bench_estimator_efficiency.py", "bench_time_to_answer.py",
            "bench_sweep_overhead.py", "bench_ui_latency.py", "bench_round_trips.py", "bench_sequential_lot.py"} <= names


@pytest.mark.parametrize("script", QUICK, ids=[p.stem for p in QUICK])
def test_benchmark_runs_in_quick_mode(script: Path, tmp_path: Path):
    out = tmp_path / "figures.json"
    done = subprocess.run([sys.executable, str(script), "--quick", "--json", str(out)], cwd=tmp_path,
                          capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr[-3000:]
    assert "reproduce: python " in done.stdout
    figures = json.loads(out.read_text())
    assert figures["quick"] is True and figures["figures"]
    assert figures["machine"]["nproc"] >= 1


def test_the_one_sitting_driver_runs_its_steps_and_the_lot_report(tmp_path: Path):
    # benchmarks/issue14_figures.py: a step's output and JSON land in --out, the lot report's size is read back
    out = tmp_path / "figures"
    done = subprocess.run([sys.executable, str(BENCHMARKS / "issue14_figures.py"), "--quick", "--out", str(out),
                           "--only", "command_startup", "lot_report"], capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr[-3000:]
    summary = json.loads((out / "summary.json").read_text())
    assert set(summary["steps"]) == {"command_startup"} and summary["steps"]["command_startup"]["exit"] == 0
    assert (out / "command_startup.json").exists() and "reproduce: python " in (out / "command_startup.txt").read_text()
    lot = summary["lot_report"]
    assert lot["runs"] == 20 and lot["size_b"] == (out / "lot20.html").stat().st_size > 0
    assert "machine" in summary and "cpu" not in summary["machine"]  # no processor name (no brands)
