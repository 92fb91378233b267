"""One real-terminal smoke test: `python -m benchlog demo` in tmux at 80x24, driven by send-keys, read by capture-pane."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import time
import uuid
from pathlib import Path

import pytest

pytestmark = pytest.mark.skipif(shutil.which("tmux") is None, reason="tmux is not installed (.ci/run installs it with apt)")

REPO = Path(__file__).resolve().parents[2]


def tmux(*args: str) -> str:
    return subprocess.run(["tmux", *args], check=True, capture_output=True, text=True).stdout


class Terminal:
    def __init__(self, command: str, width: int = 80, height: int = 24) -> None:
        self.name = f"benchlog-{uuid.uuid4().hex[:8]}"
        env = f"cd {REPO} && PYTHONPATH={REPO} TERM=xterm-256color "
        tmux("new-session", "-d", "-s", self.name, "-x", str(width), "-y", str(height), env + command)

    def screen(self) -> str:
        return tmux("capture-pane", "-p", "-t", self.name)

    def keys(self, *keys: str) -> None:
        for key in keys:
            tmux("send-keys", "-t", self.name, key)
            time.sleep(0.15)

    def wait_for(self, text: str, timeout: float = 60.0) -> str:
        end = time.monotonic() + timeout
        while time.monotonic() < end:
            try:
                screen = self.screen()
            except subprocess.CalledProcessError:
                raise AssertionError(f"the terminal closed before {text!r} appeared") from None
            if text in screen:
                return screen
            time.sleep(0.2)
        raise AssertionError(f"{text!r} never appeared; last screen:\n{self.screen()}")

    def alive(self) -> bool:
        return subprocess.run(["tmux", "has-session", "-t", self.name], capture_output=True).returncode == 0

    def close(self) -> None:
        subprocess.run(["tmux", "kill-session", "-t", self.name], capture_output=True)


def test_demo_in_a_real_terminal(tmp_path):
    out = tmp_path / "runs"
    term = Terminal(f"{sys.executable} -m benchlog demo --out {out}; sleep 30")
    try:
        screen = term.wait_for("✔ answers")
        assert "1 [Bench]" in screen and "2 Set-up" in screen  # the key bar shows the way
        term.keys("2")
        term.wait_for("Tab Edit fields")
        term.keys("Tab", "Tab", "Tab")  # element id, kind, serial: entering a field selects its value
        term.wait_for("Shift+Tab previous field")
        term.keys("TMUX-7", "Enter", "w")
        screen = term.wait_for("Plan saved to")
        saved = out / "plans" / "pmos-prototype-edited.toml"
        from benchlog.sweep.plan import load_plan

        plan = load_plan(saved)  # what was typed, through the plan reader, with its spec still found
        assert plan.element.serial == "TMUX-7" and Path(plan.spec).name == "demo-pfet-10m.toml"
        assert (saved.parent / plan.spec).resolve().is_file()
        term.keys("r")
        term.wait_for("CAUTION")
        term.keys("y")
        screen = term.wait_for("Run complete", timeout=90)
        assert "outputs are off" in screen and "points" in screen
        term.keys("4")
        screen = term.wait_for("VERDICT:")
        assert any(word in screen for word in ("PASS", "FAIL", "COND"))
        term.keys("6")
        term.wait_for("complete")
        term.keys("p")
        term.wait_for("Replay of", timeout=60)
        term.keys("q")
        end = time.monotonic() + 20
        while time.monotonic() < end and "q Quit" in term.screen():
            time.sleep(0.2)
        after = term.screen()
        assert "q Quit" not in after, "q did not close the UI"
        assert "Traceback" not in after
        runs = list(out.glob("*.run"))
        assert len(runs) == 1, "the demo recorded no run file"
        assert '"serial":"TMUX-7"' in runs[0].read_text(encoding="utf-8").splitlines()[0]  # the typed serial ran
    finally:
        term.close()
