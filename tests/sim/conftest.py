"""Fixtures for the sim tests: pyvisa-py clients that are closed at teardown."""

from __future__ import annotations

import pytest

from .visa_helpers import Clients


@pytest.fixture
def clients():
    c = Clients()
    yield c
    c.close()


@pytest.fixture
def bench3(sim_bench, clients):
    """A PMOS bench with supply, load and meter opened."""
    running = sim_bench("pmos", seed=1)
    return running, clients.open(running.resources["supply"]), clients.open(running.resources["load"]), \
        clients.open(running.resources["meter"])
