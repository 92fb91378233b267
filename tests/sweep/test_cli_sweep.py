"""`benchlog sweep` and `benchlog demo` end to end: exit codes, JSON, one-line errors, kill and Ctrl-C."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from benchlog.cli import main
from benchlog.runs import load
from benchlog.sim.faults import FaultPlan

REPO = Path(__file__).resolve().parents[2]
PLANS = REPO / "benchlog" / "demo" / "plans"

PMOS_PLAN = """
[element]
id = "Q9"
kind = "pmos"
serial = "CLI-1"
[steps]
mode = "linear"
start_a = 0.1
stop_a = 2.0
count = {count}
[settle]
dwell_s = {dwell}
tolerance_v = 0.0001
consecutive = 1
timeout_s = 0.5
[meter]
range_v = 0.1
[limits]
max_current_a = 2.0
max_drop_v = 0.09
"""


def bench_file(tmp_path, running, force="load"):
    r = running.resources
    text = "".join(f'[{role}]\nresource = "{r[role]}"\nprofile = "sim-{role}"\n' for role in ("supply", "load", "meter"))
    wiring = 'force = "load"\ncurrent_from = "load"\ninput_v = 12.0' if force == "load" else \
        'force = "supply"\ncurrent_from = "supply"'
    path = tmp_path / f"bench-{force}.toml"
    path.write_text(text + f"[wiring]\n{wiring}\n")
    return path


def write(tmp_path, name, text):
    path = tmp_path / name
    path.write_text(text)
    return path


def test_sweep_on_the_builtin_sim_prints_json(tmp_path, capsys):
    rc = main(["sweep", str(PLANS / "lot-inspection.toml"), "--out", str(tmp_path), "--json"])
    out, err = capsys.readouterr()
    assert rc == 0
    payload = json.loads(out)
    assert set(payload) == {"run_file", "points", "outcome", "safe_state"}
    assert payload["safe_state"] == "verified"  # the sim profiles read their output states back
    assert payload["outcome"] == "complete" and payload["points"] == 5
    frame, meta = load(payload["run_file"])
    assert meta.complete and len(frame) == 5
    assert "CAUTION" in err or err == ""  # the caution is shown once per CLI session


def test_sweep_against_a_bench_file(sim_bench, tmp_path, capsys):
    running = sim_bench("pmos", seed=41)
    plan = write(tmp_path, "plan.toml", PMOS_PLAN.format(count=8, dwell=0.0))
    rc = main(["sweep", str(plan), "--bench", str(bench_file(tmp_path, running)), "--out", str(tmp_path), "--yes"])
    out, _ = capsys.readouterr()
    assert rc == 0 and "run file:" in out and "8 points, outcome complete" in out
    assert not running.bench.supply.output_on and not running.bench.load.input_on


def test_limit_exits_1(sim_bench, tmp_path, capsys):
    running = sim_bench("pmos", seed=42)
    plan = write(tmp_path, "plan.toml", PMOS_PLAN.format(count=8, dwell=0.0).replace("max_drop_v = 0.09", "max_drop_v = 0.01"))
    rc = main(["sweep", str(plan), "--bench", str(bench_file(tmp_path, running)), "--out", str(tmp_path), "--json"])
    out, err = capsys.readouterr()
    assert rc == 1 and json.loads(out)["outcome"] == "limit"
    assert "benchlog: limit: max_drop_v" in err


def test_nonsense_reply_exits_2(sim_bench, tmp_path, capsys):
    running = sim_bench("pmos", seed=43, faults=FaultPlan(garbage_after=30, role="meter"))
    plan = write(tmp_path, "plan.toml", PMOS_PLAN.format(count=30, dwell=0.0))
    rc = main(["sweep", str(plan), "--bench", str(bench_file(tmp_path, running)), "--out", str(tmp_path), "--json"])
    out, err = capsys.readouterr()
    assert rc == 2 and json.loads(out)["outcome"] == "fault"
    assert "GARBLED" in err and "Traceback" not in err
    assert not running.bench.supply.output_on and not running.bench.load.input_on


def test_wiring_that_would_measure_the_body_diode_is_refused(sim_bench, tmp_path, capsys):
    running = sim_bench("pmos", seed=44)
    plan = write(tmp_path, "plan.toml", PMOS_PLAN.format(count=8, dwell=0.0) + "compliance_v = 3.0\n")
    rc = main(["sweep", str(plan), "--bench", str(bench_file(tmp_path, running, force="supply")), "--out", str(tmp_path)])
    _, err = capsys.readouterr()
    assert rc == 2
    assert err.count("\n") == 1 and "[wiring].force" in err and "body diode" in err
    assert not list(tmp_path.glob("*.run"))
    assert not running.bench.supply.output_on


GOOD = (PLANS / "rectifier-prototype.toml").read_text()
BROKEN_FILES = [
    ("plan", GOOD.replace('kind = "rectifier"', 'kind = "valve"'), "[element].kind"),
    ("plan", GOOD.replace("count = 25", "count = 0"), "[steps].count"),
    ("plan", GOOD.replace("dwell_s", "dwel_s"), "did you mean 'dwell_s'"),
    ("plan", GOOD.replace("stop_a = 2.0", "stop_a = 5.0"), "[steps].stop_a"),
    ("plan", GOOD.replace("compliance_v = 3.0", "compliance_v = 0.2"), "[limits].compliance_v"),
    ("plan", GOOD.replace("range_v = 10", "range_v = 7"), "[meter].range_v"),
    ("plan", GOOD.replace("nplc = 1", "nplc = 0.001"), "[meter].nplc"),
    ("plan", GOOD.replace("samples = 1", "samples = 5000"), "[meter].samples"),
    ("plan", GOOD + "[reverse]\nvoltage_v = 50\nduration_s = 1\nmax_current_a = 0.0001\n", "[reverse].voltage_v"),
    ("plan", GOOD + "[reverse]\nvoltage_v = 12\nduration_s = 1\nmax_current_a = 0.000001\n", "[reverse].max_current_a"),
    ("plan", GOOD[: len(GOOD) // 2] + "= = =", "TOML"),
    ("bench", '[meter]\nresource = "TCPIP0::127.0.0.1::1::SOCKET"\nprofile = "sim-meter"\n', "[wiring]"),
    ("bench", '[supply]\nresource = "x"\nprofile = "sim-supply"\n[meter]\nresource = "y"\nprofile = "sim-meter"\n'
              '[wiring]\nforce = "supply"\ncurrent_from = "shunt"\n', "[wiring].shunt_ohm"),
    ("bench", '[supply]\nresource = "x"\nprofile = "sim-supply"\n[meter]\nresource = "y"\nprofile = "sim-meter"\n'
              '[wiring]\nforce = "load"\ncurrent_from = "supply"\ninput_v = 12\n', "needs a [load] table"),
]


@pytest.mark.parametrize("which, text, where", BROKEN_FILES, ids=[f"{b[0]}-{b[2]}" for b in BROKEN_FILES])
def test_broken_files_give_one_line_and_exit_2(tmp_path, capsys, which, text, where):
    path = write(tmp_path, f"{which}.toml", text)
    args = ["sweep", str(path), "--out", str(tmp_path)] if which == "plan" else \
        ["sweep", str(PLANS / "rectifier-prototype.toml"), "--bench", str(path), "--out", str(tmp_path)]
    rc = main(args)
    out, err = capsys.readouterr()
    assert rc == 2
    assert err.count("\n") == 1 and str(path) in err and where in err, err
    assert "Traceback" not in err and not list(tmp_path.glob("*.run"))


def test_demo_headless_summary(tmp_path, capsys):
    rc = main(["demo", "--headless", "--out", str(tmp_path), "--json"])
    out, _ = capsys.readouterr()
    assert rc == 0
    summary = json.loads(out)
    assert summary["outcome"] == "complete" and summary["points"] == 30
    assert summary["sim_timing"] == "real"  # the demo runs on the simulator's real instrument timing
    assert Path(summary["run_file"]).is_file()
    assert summary["fit"]["model"] == "resistive" and summary["fit"]["params"]["r_on_ohm"] > 0


def test_sweep_names_the_simulator_timing_and_refuses_it_with_a_bench(sim_bench, tmp_path, capsys):
    rc = main(["sweep", str(PLANS / "lot-inspection.toml"), "--out", str(tmp_path), "--sim-timing", "instant"])
    out, _ = capsys.readouterr()
    assert rc == 0 and "built-in simulated bench: instant timing" in out
    running = sim_bench("pmos", seed=45)
    plan = write(tmp_path, "plan.toml", PMOS_PLAN.format(count=4, dwell=0.0))
    rc = main(["sweep", str(plan), "--bench", str(bench_file(tmp_path, running)), "--out", str(tmp_path),
               "--sim-timing", "real"])
    _, err = capsys.readouterr()
    assert rc == 2 and err.count("\n") == 1 and "--sim-timing" in err
    assert not running.bench.supply.output_on


def test_demo_without_the_ui_says_so(monkeypatch, tmp_path, capsys):
    monkeypatch.setitem(sys.modules, "benchlog.tui.launch", None)  # as if the UI were not installed
    rc = main(["demo", "--out", str(tmp_path)])
    _, err = capsys.readouterr()
    assert rc == 2 and err.count("\n") == 1 and "--headless" in err


def test_unknown_demo_plan(tmp_path, capsys):
    assert main(["demo", "--headless", "--plan", "nope", "--out", str(tmp_path)]) == 2
    assert "pmos-prototype" in capsys.readouterr().err


# -- processes: SIGKILL and Ctrl-C ------------------------------------------------


def _env():
    return dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))


def _wait_for_points(out_dir: Path, n: int, child, deadline_s: float = 30.0) -> Path:
    end = time.monotonic() + deadline_s
    while time.monotonic() < end:
        files = list(out_dir.glob("*.run"))
        if files and files[0].read_bytes().count(b"\nP\t") >= n:
            return files[0]
        if child.poll() is not None:
            pytest.fail(f"sweep ended early: {child.stderr.read()}")
        time.sleep(0.05)
    child.kill()
    pytest.fail("no points appeared in time")


def test_sigkill_leaves_a_readable_incomplete_run(tmp_path):
    plan = write(tmp_path, "plan.toml", PMOS_PLAN.format(count=200, dwell=0.05))
    out_dir = tmp_path / "runs"
    child = subprocess.Popen([sys.executable, "-m", "benchlog", "sweep", str(plan), "--out", str(out_dir)],
                             stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=_env(), cwd=tmp_path)
    path = _wait_for_points(out_dir, 5, child)
    child.send_signal(signal.SIGKILL)
    child.wait(timeout=10)
    data = path.read_bytes()
    whole_lines = data[: data.rfind(b"\n") + 1]
    expected = whole_lines.count(b"\nP\t")
    frame, meta = load(path)
    assert not meta.complete and meta.outcome == "incomplete"
    assert len(frame) == expected >= 5
    assert frame["index"].tolist() == list(range(expected))


def test_ctrl_c_exits_130_with_outputs_off(sim_bench, tmp_path):
    running = sim_bench("pmos", seed=45)
    plan = write(tmp_path, "plan.toml", PMOS_PLAN.format(count=200, dwell=0.05))
    out_dir = tmp_path / "runs"
    child = subprocess.Popen(
        [sys.executable, "-m", "benchlog", "sweep", str(plan), "--bench", str(bench_file(tmp_path, running)),
         "--out", str(out_dir), "--yes"],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=_env(), cwd=tmp_path)
    path = _wait_for_points(out_dir, 3, child)
    assert running.bench.supply.output_on and running.bench.load.input_on  # really on before Ctrl-C
    child.send_signal(signal.SIGINT)
    _, err = child.communicate(timeout=30)
    assert child.returncode == 130, err
    assert "outputs verified off (read back)" in err and "Traceback" not in err
    assert not running.bench.supply.output_on and not running.bench.load.input_on
    frame, meta = load(path)
    assert meta.outcome == "cancelled" and meta.complete and len(frame) == meta.finished.points
