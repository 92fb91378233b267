"""Fixtures for the UI tests: demo plan and spec files, run folders and a scripted bench."""

from __future__ import annotations

from pathlib import Path

import asyncio
import inspect

import pytest

from .synthetic import ScriptedSession, write_files, write_run


@pytest.fixture
def demo_files(tmp_path: Path) -> tuple[Path, Path]:
    return write_files(tmp_path / "cfg")


@pytest.fixture
def runs_dir(tmp_path: Path) -> Path:
    folder = tmp_path / "runs"
    folder.mkdir()
    return folder


@pytest.fixture
def archive(runs_dir: Path) -> list[Path]:
    """Two recorded runs of invented parts (27 mΩ and 30 mΩ)."""
    return [write_run(runs_dir, serial="A1", r_ohm=0.027, seed=1, started_utc="2025-03-04T10:20:30.000Z"),
            write_run(runs_dir, serial="A2", r_ohm=0.030, seed=3, started_utc="2025-03-05T11:00:00.000Z")]


@pytest.fixture
def scripted(runs_dir: Path) -> ScriptedSession:
    return ScriptedSession(runs_dir)


@pytest.hookimpl(tryfirst=True)
def pytest_pyfunc_call(pyfuncitem):
    """Run `async def` tests of this folder in a fresh event loop (no async plugin is a dependency)."""
    if inspect.iscoroutinefunction(pyfuncitem.obj):
        names = pyfuncitem._fixtureinfo.argnames
        kwargs = {name: pyfuncitem.funcargs[name] for name in names}
        asyncio.run(pyfuncitem.obj(**kwargs))
        return True
    return None
