"""The UI's bench session takes the same per-instrument lock as the CLI: one sweep per bench."""

from __future__ import annotations

import pytest

from benchlog.instruments.benchlock import BenchLock
from benchlog.instruments.errors import BenchInUse
from benchlog.sweep.bench_file import load_bench
from benchlog.sweep.plan import parse_plan
from benchlog.tui.session import BenchSession

PLAN = """
[element]
id = "Q9"
kind = "pmos"
serial = "UI-LOCK-1"
[steps]
mode = "linear"
start_a = 0.1
stop_a = 0.8
count = 3
[settle]
dwell_s = 0.0
tolerance_v = 0.001
[limits]
max_current_a = 1.0
compliance_v = 14.0
"""


def _session(tmp_path, resources):
    text = "".join(f'[{r}]\nresource = "{resources[r]}"\nprofile = "sim-{r}"\n\n' for r in ("supply", "load", "meter"))
    path = tmp_path / "bench.toml"
    path.write_text(text + '[wiring]\nforce = "load"\ncurrent_from = "load"\ninput_v = 12.0\n')
    return BenchSession(load_bench(path), runs_dir=tmp_path / "runs")


def test_the_ui_session_is_refused_while_another_session_holds_an_instrument(sim_bench, tmp_path):
    running = sim_bench()
    session = _session(tmp_path, running.resources)
    plan = parse_plan(PLAN, "plan.toml")
    with BenchLock([running.resources["meter"]]):  # another session (a CLI sweep) holds the meter
        with pytest.raises(BenchInUse) as info:
            session.sweep(plan, lambda event: None)
        assert "in use by PID" in str(info.value)
        status = session.probe("meter")
        assert status.state == "in use" and "one sweep per bench" in status.message
    assert not (tmp_path / "runs").exists()  # refused before anything was recorded
    done = session.sweep(plan, lambda event: None)  # free again: the same session now runs
    assert done.outcome == "complete" and done.safe_state == "verified"
    assert done.safe_statement.startswith("outputs verified off (read back): supply ")
