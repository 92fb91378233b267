"""Shared fixtures: the simulated bench on ephemeral loopback ports, talked to through real pyvisa-py."""

from __future__ import annotations

import os
import tempfile
import threading
import time

import pytest

from benchlog.sim.config import SimConfig
from benchlog.sim.server import RunningBench, serve_bench

# Instrument locks go to a folder of this test session, never the user's own (child processes inherit it).
os.environ.setdefault("BENCHLOG_LOCK_DIR", tempfile.mkdtemp(prefix="benchlog-test-locks-"))


@pytest.fixture
def sim_bench():
    """Factory: ``sim_bench(element="pmos", seed=1, **SimConfig overrides) -> RunningBench``.

    Every bench is served on port 0 (ephemeral, one port per instrument) on
    127.0.0.1 and stopped at teardown. Pass ``clock=`` (a callable returning
    seconds) to drive the thermal model with an injected clock (and ``sleep=`` to let the
    instruments' own timing pass on it). The simulator's timing is "instant" here unless
    ``timing="real"`` is passed.
    Example: ``bench = sim_bench("rectifier", seed=3, latency_s=0.002)``;
    ``bench.resources["supply"]`` is ``TCPIP0::127.0.0.1::<port>::SOCKET``.
    """
    started: list[RunningBench] = []

    def start(element: str = "pmos", seed: int = 1, *, clock=None, sleep=None, **overrides) -> RunningBench:
        overrides.setdefault("port", 0)
        overrides.setdefault("timing", "instant")  # tests of timing ask for timing="real"
        config = SimConfig(element=element, seed=seed, **overrides)
        running = serve_bench(config, clock=clock or time.monotonic, sleep=sleep)
        started.append(running)
        return running

    yield start
    for running in started:
        running.stop()


class BenchClock:
    """A clock that moves only when someone sleeps on it (a test, the runner or a simulated instrument).

    Shared by the runner and the simulator, it makes timing exact and instant: what a message,
    a dwell or an integration took is read on this clock, never on the wall.
    """

    def __init__(self, start_s: float = 0.0) -> None:
        self.now_s = start_s
        self._lock = threading.Lock()

    def __call__(self) -> float:
        return self.now_s

    def sleep(self, seconds: float) -> None:
        with self._lock:
            self.now_s += max(0.0, seconds)


@pytest.fixture
def clocked_sim_bench(sim_bench):
    """Factory: ``clocked_sim_bench(element, seed, start_s=0.0, **SimConfig overrides) -> (BenchClock, RunningBench)``.

    The simulated bench on a BenchClock of its own (injected clock and sleep), with real timing
    unless ``timing=`` says otherwise.
    """

    def start(element: str = "resistor", seed: int = 1, *, start_s: float = 0.0, **overrides):
        clock = BenchClock(start_s)
        overrides.setdefault("timing", "real")
        return clock, sim_bench(element, seed, clock=clock, sleep=clock.sleep, **overrides)

    return start


def pytest_collection_modifyitems(config, items):
    """Tests marked `hardware` need real instruments: they run only with BENCHLOG_HARDWARE (a bench file) set."""
    if os.environ.get("BENCHLOG_HARDWARE"):
        return
    skip = pytest.mark.skip(reason="needs real instruments: set BENCHLOG_HARDWARE to a bench file to run")
    for item in items:
        if "hardware" in item.keywords:
            item.add_marker(skip)
