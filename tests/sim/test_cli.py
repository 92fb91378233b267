"""`benchlog sim` as a separate process: resource lines, `ready`, a plain pyvisa-py script, clean exit."""

from __future__ import annotations

import json
import os
import queue
import signal
import socket
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest
import pyvisa

ROOT = Path(__file__).resolve().parents[2]


def _start(*args: str) -> subprocess.Popen:
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    return subprocess.Popen([sys.executable, "-m", "benchlog", "sim", *args], cwd=ROOT, env=env,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


def _lines_until_ready(proc: subprocess.Popen, timeout_s: float = 20.0) -> list[str]:
    found: "queue.Queue[str | None]" = queue.Queue()

    def pump() -> None:
        for line in proc.stdout:
            found.put(line.rstrip("\n"))
        found.put(None)

    threading.Thread(target=pump, daemon=True).start()
    lines: list[str] = []
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        try:
            line = found.get(timeout=0.2)
        except queue.Empty:
            continue
        if line is None:
            break
        lines.append(line)
        if line == "ready":
            return lines
    proc.kill()
    raise AssertionError(f"no 'ready' line; got {lines!r}, stderr {proc.stderr.read()!r}")


@pytest.fixture
def sim_process():
    procs: list[subprocess.Popen] = []

    def start(*args: str) -> subprocess.Popen:
        proc = _start(*args)
        procs.append(proc)
        return proc

    yield start
    for proc in procs:
        if proc.poll() is None:
            proc.kill()
            proc.wait(timeout=5)


def test_sim_prints_resources_serves_pyvisa_and_ends_on_sigterm(sim_process, tmp_path):
    truth = tmp_path / "truth.json"
    proc = sim_process("--port", "0", "--element", "rectifier", "--seed", "7", "--truth", str(truth))
    lines = _lines_until_ready(proc)
    resources = dict(line.split(" ", 1) for line in lines[:-1])
    assert list(resources) == ["supply", "load", "meter"]
    assert all(r.startswith("TCPIP0::127.0.0.1::") and r.endswith("::SOCKET") for r in resources.values())
    data = json.loads(truth.read_text())
    assert data["kind"] == "rectifier" and {"ideality", "i_s_a", "r_s_ohm", "rth_ja_k_per_w"} <= set(data)
    # the junction–case–ambient network: its time constants as a list, dominant first
    assert isinstance(data["tau_s"], list) and len(data["tau_s"]) == 2 and data["tau_s"][0] > data["tau_s"][1]

    # a plain pyvisa-py script, SCPI-99 long forms
    rm = pyvisa.ResourceManager("@py")
    supply = rm.open_resource(resources["supply"], read_termination="\n", write_termination="\n", timeout=2000)
    meter = rm.open_resource(resources["meter"], read_termination="\n", write_termination="\n", timeout=2000)
    assert supply.query("*IDN?").startswith("BENCHLOG,SIM-SUPPLY,")
    supply.write("SOURce:VOLTage:LEVel:IMMediate:AMPLitude 12")
    supply.write("SOURce:CURRent:LEVel:IMMediate:AMPLitude 1")
    supply.write("OUTPut:STATe ON")
    assert supply.query("STATus:OPERation:CONDition?") == "1024"
    drop = float(meter.query("MEASure:SCALar:VOLTage:DC? 10"))
    assert 0.6 < drop < 1.2  # a silicon rectifier at 1 A
    supply.write("OUTPut:STATe OFF")
    assert supply.query("SYSTem:ERRor:NEXT?") == '+0,"No error"'
    rm.close()

    proc.send_signal(signal.SIGTERM)
    assert proc.wait(timeout=10) == 0


def test_sim_ends_on_sigint_with_exit_0(sim_process):
    proc = sim_process("--port", "0", "--current-meter")
    lines = _lines_until_ready(proc)
    assert [line.split()[0] for line in lines[:-1]] == ["supply", "load", "meter", "current_meter"]
    proc.send_signal(signal.SIGINT)
    assert proc.wait(timeout=10) == 0


def _free_base_port() -> int:
    for _ in range(20):
        with socket.socket() as probe:
            probe.bind(("127.0.0.1", 0))
            base = probe.getsockname()[1]
        if base > 65000:
            continue
        try:
            held = []
            for offset in range(3):
                s = socket.socket()
                s.bind(("127.0.0.1", base + offset))
                held.append(s)
            for s in held:
                s.close()
            return base
        except OSError:
            for s in held:
                s.close()
    pytest.skip("no three consecutive free ports")


def test_sim_with_a_fixed_port_uses_consecutive_ports(sim_process):
    base = _free_base_port()
    proc = sim_process("--port", str(base))
    lines = _lines_until_ready(proc)
    ports = [int(line.split("::")[2]) for line in lines[:-1]]
    assert ports == [base, base + 1, base + 2]
    proc.send_signal(signal.SIGTERM)
    assert proc.wait(timeout=10) == 0


@pytest.mark.parametrize(
    "args, fragment",
    [
        (["--config", "MISSING.toml"], "file not found"),
        (["--drop-after", "-3"], "--drop-after"),
        (["--element", "triode"], "invalid choice"),
        (["--latency-s", "-1"], "latency_s"),
    ],
)
def test_bad_arguments_are_one_line_and_exit_2(args, fragment):
    proc = _start(*args)
    out, err = proc.communicate(timeout=20)
    assert proc.returncode == 2
    assert fragment in err and len(err.strip().splitlines()) == 1 and "Traceback" not in err


def test_bad_config_file_names_the_key(tmp_path):
    bad = tmp_path / "sim.toml"
    bad.write_text('element = "pmos"\n[element_params]\nr_on = 0.01\n')
    proc = _start("--config", str(bad))
    _, err = proc.communicate(timeout=20)
    assert proc.returncode == 2 and "[element_params].r_on" in err and "r_on_ohm" in err


@pytest.mark.parametrize("args, said", [((), "real timing"), (("--timing", "instant"), "instant timing")])
def test_sim_says_its_timing_on_stderr(sim_process, args, said):
    proc = sim_process("--port", "0", *args)
    lines = _lines_until_ready(proc)
    assert [line.split()[0] for line in lines[:-1]] == ["supply", "load", "meter"]  # stdout stays parseable
    proc.send_signal(signal.SIGTERM)
    assert proc.wait(timeout=10) == 0
    assert said in proc.stderr.read()


def test_sim_refuses_an_unknown_timing():
    proc = _start("--timing", "fast")
    _, err = proc.communicate(timeout=20)
    assert proc.returncode == 2 and "--timing" in err and len(err.strip().splitlines()) == 1
