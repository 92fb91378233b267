"""Real processes for the reliability suite: `benchlog sim` and `benchlog sweep` as subprocesses, and a pyvisa look at the sim."""

from __future__ import annotations

import os
import queue
import signal
import subprocess
import sys
import threading
import time
from dataclasses import dataclass
from pathlib import Path

import pyvisa

ROOT = Path(__file__).resolve().parents[2]
PLANS = ROOT / "benchlog" / "demo" / "plans"

#: The lines `benchlog sweep` may print on stderr besides its one message: the caution and the progress.
CAUTION_START = "CAUTION: this switches real power"
PROGRESS_START = "sweep: "


def child_env() -> dict[str, str]:
    return dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))


def benchlog_argv(*args: str) -> list[str]:
    return [sys.executable, "-m", "benchlog", *args]


def start_benchlog(*args: str, cwd: Path | None = None) -> subprocess.Popen:
    return subprocess.Popen(benchlog_argv(*args), cwd=cwd or ROOT, env=child_env(), stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, stdin=subprocess.DEVNULL, text=True)


def run_benchlog(*args: str, timeout_s: float = 60.0, cwd: Path | None = None) -> subprocess.CompletedProcess:
    return subprocess.run(benchlog_argv(*args), cwd=cwd or ROOT, env=child_env(), capture_output=True,
                          stdin=subprocess.DEVNULL, text=True, timeout=timeout_s)


class SimProcess:
    """`benchlog sim ARGS` in its own process; `resources` maps role -> VISA resource once it is ready."""

    def __init__(self, *args: str) -> None:
        self.args = args
        # instant timing: these tests are of faults and safety, and their sweeps must not outlast a checkpoint
        self.proc = start_benchlog("sim", "--port", "0", "--timing", "instant", *args)
        self.resources: dict[str, str] = {}
        self._lines: "queue.Queue[str | None]" = queue.Queue()
        threading.Thread(target=self._pump, daemon=True).start()

    def _pump(self) -> None:
        for line in self.proc.stdout:
            self._lines.put(line.rstrip("\n"))
        self._lines.put(None)

    def wait_ready(self, timeout_s: float = 90.0) -> "SimProcess":  # generous: CI machines may be loaded
        deadline = time.monotonic() + timeout_s
        while time.monotonic() < deadline:
            try:
                line = self._lines.get(timeout=0.2)
            except queue.Empty:
                continue
            if line is None:
                break
            if line == "ready":
                return self
            role, resource = line.split(" ", 1)
            self.resources[role] = resource
        self.stop()
        raise AssertionError(f"benchlog sim {' '.join(self.args)}: no 'ready' line; stderr {self.proc.stderr.read()!r}")

    def stop(self) -> int:
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
            try:
                self.proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait(timeout=5)
        return self.proc.returncode

    def __enter__(self) -> "SimProcess":
        return self.wait_ready()

    def __exit__(self, *exc) -> None:
        self.stop()


def write_bench_file(path: Path, resources: dict[str, str], *, force: str, current_from: str,
                     input_v: float | None = None) -> Path:
    """A bench file that points the sim profiles at the given resources."""
    profiles = {"supply": "sim-supply", "load": "sim-load", "meter": "sim-meter", "current_meter": "sim-meter"}
    parts = [f'[{role}]\nresource = "{resource}"\nprofile = "{profiles[role]}"\n'
             for role, resource in resources.items()]
    wiring = f'[wiring]\nforce = "{force}"\ncurrent_from = "{current_from}"\n'
    if input_v is not None:
        wiring += f"input_v = {input_v}\n"
    path.write_text("\n".join(parts) + "\n" + wiring, encoding="utf-8")
    return path


@dataclass(frozen=True)
class OutputState:
    supply_output_on: bool
    load_input_on: bool


#: pyvisa-py's resource managers share one library: closing one while another thread reads breaks that read.
_VISA_LOCK = threading.Lock()


def output_state(resources: dict[str, str]) -> OutputState:
    """Reconnect to the sim over pyvisa-py, as any client would, and ask whether power is on."""
    with _VISA_LOCK:
        return _output_state(resources)


def _output_state(resources: dict[str, str]) -> OutputState:
    rm = pyvisa.ResourceManager("@py")
    try:
        supply = rm.open_resource(resources["supply"], read_termination="\n", write_termination="\n", timeout=3000)
        load = rm.open_resource(resources["load"], read_termination="\n", write_termination="\n", timeout=3000)
        try:
            return OutputState(supply.query("OUTPut:STATe?").strip() in ("1", "ON"),
                               load.query("INPut:STATe?").strip() in ("1", "ON"))
        finally:
            supply.close()
            load.close()
    finally:
        rm.close()


def stderr_lines(text: str) -> list[str]:
    return [line for line in text.replace("\r", "\n").split("\n") if line.strip()]


def messages(stderr: str) -> list[str]:
    """The stderr lines that are neither the power caution nor progress: what the user is told."""
    return [line for line in stderr_lines(stderr)
            if not line.startswith(CAUTION_START) and not line.startswith(PROGRESS_START)]


def send(resource: str, *commands: str) -> list[str]:
    """Send commands to one sim instrument over a fresh pyvisa-py connection, as any other client would.

    A command ending in '?' is a query; its reply is returned, in order.
    """
    with _VISA_LOCK:
        rm = pyvisa.ResourceManager("@py")
        try:
            link = rm.open_resource(resource, read_termination="\n", write_termination="\n", timeout=3000)
            try:
                replies = [link.query(c).strip() if c.endswith("?") else (link.write(c), "")[1] for c in commands]
                if commands and not commands[-1].endswith("?"):
                    # IEEE 488.2 *OPC?: the writes are done before this link closes, so the next client's
                    # query (on another link) cannot overtake them
                    link.query("*OPC?")
                return replies
            finally:
                link.close()
        finally:
            rm.close()
