"""The progress display and the power-on caution/confirmation of `benchlog sweep`."""

from __future__ import annotations

import io
import sys

from benchlog.cli import sweep_cmd


class TtyStream(io.StringIO):
    def isatty(self):
        return True


class Clock:
    def __init__(self):
        self.now = 0.0

    def __call__(self):
        return self.now


def test_progress_bar_on_a_terminal_shows_points_and_eta():
    stream, clock = TtyStream(), Clock()
    bar = sweep_cmd.Progress(10, stream, clock)
    for _ in range(4):
        clock.now += 2.0  # 2 s per point
        bar.point()
    text = stream.getvalue()
    assert text.startswith("\r[") and "4/10 points" in text
    assert text.rstrip().endswith("ETA 0:12")  # 6 points left at 2 s each
    bar.end()
    assert stream.getvalue().endswith("\n")


def test_progress_without_a_terminal_prints_plain_lines_every_tenth():
    stream, clock = io.StringIO(), Clock()
    bar = sweep_cmd.Progress(100, stream, clock)
    for _ in range(100):
        clock.now += 0.5
        bar.point()
    lines = stream.getvalue().splitlines()
    assert len(lines) == 10 and "\r" not in stream.getvalue()
    assert lines[0] == "sweep: 10/100 points  ETA 0:45" and lines[-1] == "sweep: 100/100 points  ETA 0:00"


def _prompt(monkeypatch, answer, real_bench=True, yes=False, tty=True):
    monkeypatch.setattr(sweep_cmd, "_caution_shown", False)
    stdin = TtyStream(answer) if tty else io.StringIO(answer)
    stderr = TtyStream() if tty else io.StringIO()
    monkeypatch.setattr(sys, "stdin", stdin)
    monkeypatch.setattr(sys, "stderr", stderr)
    result = sweep_cmd._power_prompt(real_bench, yes)()
    return result, stderr.getvalue()


def test_real_bench_on_a_terminal_asks_before_power(monkeypatch):
    ok, err = _prompt(monkeypatch, "n\n")
    assert ok is False and "CAUTION" in err and "[y/N]" in err
    assert "local electrical codes" in err and "reversed-polarity" in err
    ok, _ = _prompt(monkeypatch, "yes\n")
    assert ok is True


def test_yes_flag_and_non_interactive_do_not_ask(monkeypatch):
    ok, err = _prompt(monkeypatch, "", yes=True)
    assert ok is True and "CAUTION" in err and "[y/N]" not in err
    ok, err = _prompt(monkeypatch, "", tty=False)
    assert ok is True and "[y/N]" not in err


def test_caution_only_once_per_session(monkeypatch):
    _prompt(monkeypatch, "", yes=True)
    stderr = io.StringIO()
    monkeypatch.setattr(sys, "stderr", stderr)
    assert sweep_cmd._power_prompt(True, True)() is True
    assert stderr.getvalue() == ""
