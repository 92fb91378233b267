"""The N-MOSFET kind end to end, as a user runs it: `benchlog sim --element nmos --truth T`, a sweep
through real pyvisa-py sockets with `benchlog sweep --bench`, and `benchlog fit --json` recovering the
simulator's R_DS(on) within 1 %.

Reference: Ohm's law, V = V0 + R·I (common practice), fitted by least squares; the truth file is
the simulator's own parameter (at 25 °C and full enhancement). The sweep is short (about a second)
and the part dissipates under 40 mW at 3 A, so the channel warms by well under 1 K: the 1 % holds
without a temperature correction.
"""

from __future__ import annotations

import json
import os
import queue
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

import benchlog

ROOT = Path(__file__).resolve().parents[2]
PLAN = Path(benchlog.__file__).parent / "demo" / "plans" / "nmos-prototype.toml"
ENV = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))


def _benchlog(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "benchlog", *args], cwd=cwd, env=ENV, capture_output=True,
                          text=True, timeout=120)


def _resources_when_ready(proc: subprocess.Popen, timeout_s: float = 20.0) -> dict[str, str]:
    lines: "queue.Queue[str | None]" = queue.Queue()

    def pump() -> None:
        for line in proc.stdout:
            lines.put(line.rstrip("\n"))
        lines.put(None)

    threading.Thread(target=pump, daemon=True).start()
    seen: dict[str, str] = {}
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        try:
            line = lines.get(timeout=0.2)
        except queue.Empty:
            continue
        if line is None or line == "ready":
            break
        role, resource = line.split(" ", 1)
        seen[role] = resource
    return seen


@pytest.fixture
def nmos_sim(tmp_path):
    truth = tmp_path / "truth.json"
    proc = subprocess.Popen([sys.executable, "-m", "benchlog", "sim", "--element", "nmos", "--port", "0",
                             "--seed", "5", "--truth", str(truth)], cwd=ROOT, env=ENV,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        resources = _resources_when_ready(proc)
        assert set(resources) == {"supply", "load", "meter"}, proc.stderr.read() if proc.poll() is not None else ""
        yield resources, json.loads(truth.read_text(encoding="utf-8"))
    finally:
        if proc.poll() is None:
            proc.send_signal(signal.SIGTERM)
            try:
                proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                proc.kill()
                proc.wait(timeout=5)


def test_sim_sweep_and_fit_recover_the_nmos_r_on_within_1_percent(nmos_sim, tmp_path):
    resources, truth = nmos_sim
    assert truth["kind"] == "nmos"
    bench = tmp_path / "bench.toml"
    bench.write_text(
        "".join(f'[{role}]\nresource = "{resources[role]}"\nprofile = "sim-{role}"\n' for role in resources)
        + '[wiring]\nforce = "load"\ncurrent_from = "load"\ninput_v = 12.0\n', encoding="utf-8")
    sweep = _benchlog("sweep", str(PLAN), "--bench", str(bench), "--yes", "--out", str(tmp_path / "runs"),
                      "--json", cwd=tmp_path)
    assert sweep.returncode == 0, sweep.stderr
    done = json.loads(sweep.stdout)
    assert done["outcome"] == "complete" and done["points"] == 30
    fit = _benchlog("fit", done["run_file"], "--json", cwd=tmp_path)
    assert fit.returncode == 0, fit.stderr
    result = json.loads(fit.stdout)
    assert result["model"] == "resistive"  # the registry's choice for a channel
    assert result["params"]["r_on_ohm"] == pytest.approx(truth["r_on_ohm"], rel=0.01)
    # and the fit's own uncertainty is small enough that the 1 % says something (every term but the
    # junction temperature's, which on a bench that states no ambient uncertainty is ±2 K at 0.5 %/K)
    terms = [t for t in result["budget"]["r_on_ohm"] if "temperature" not in t["name"]]
    assert sum(t["u"] ** 2 for t in terms) ** 0.5 < 0.005 * truth["r_on_ohm"]
    assert any("temperature" in t["name"] for t in result["budget"]["r_on_ohm"])
