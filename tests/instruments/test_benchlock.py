"""One sweep per bench: the per-resource lock (OS file locks through filelock) in a test's own folder."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from benchlog.instruments.benchlock import LOCK_DIR_ENV, BenchLock, lock_dir, resource_key
from benchlog.instruments.errors import BenchInUse

REPO = Path(__file__).resolve().parents[2]
A = "TCPIP0::127.0.0.1::5025::SOCKET"
B = "TCPIP0::127.0.0.1::5026::SOCKET"


def test_a_second_session_on_a_resource_in_use_is_refused_naming_the_holder(tmp_path):
    with BenchLock([A, B], directory=tmp_path):
        with pytest.raises(BenchInUse) as info:
            BenchLock([B], directory=tmp_path).acquire()
    text = str(info.value)
    assert text.startswith(f"{B}: in use by PID {os.getpid()} on ")
    assert "one sweep per bench" in text and info.value.holder.pid == os.getpid()


def test_a_refused_session_holds_nothing_and_the_lock_is_free_after_release(tmp_path):
    first = BenchLock([B], directory=tmp_path).acquire()
    with pytest.raises(BenchInUse):
        BenchLock([A, B], directory=tmp_path).acquire()  # took A, then refused on B: A must be free again
    with BenchLock([A], directory=tmp_path):
        pass
    first.release()
    with BenchLock([A, B], directory=tmp_path) as lock:
        assert lock.notes == []
    assert not list(tmp_path.glob("*.holder.json"))  # a clean release leaves no holder behind


def test_one_address_written_two_ways_is_one_lock(tmp_path):
    assert resource_key("tcpip0::127.0.0.1::5025::socket") == resource_key("TCPIP::127.0.0.1::5025::SOCKET")
    with BenchLock(["tcpip::127.0.0.1::5025::socket"], directory=tmp_path):
        with pytest.raises(BenchInUse):
            BenchLock([A], directory=tmp_path).acquire()


def test_a_lock_left_by_a_killed_process_is_taken_over_with_a_note(tmp_path):
    holder = textwrap.dedent(f"""
        import os, signal, sys
        from pathlib import Path
        from benchlog.instruments.benchlock import BenchLock
        BenchLock([{A!r}], directory=Path({str(tmp_path)!r})).acquire()
        print("held", flush=True)
        os.kill(os.getpid(), signal.SIGKILL)  # dies holding it: no release, the holder file stays
    """)
    env = dict(os.environ, PYTHONPATH=str(REPO))
    done = subprocess.run([sys.executable, "-c", holder], capture_output=True, text=True, env=env, timeout=60)
    assert done.returncode == -signal.SIGKILL and "held" in done.stdout
    left = json.loads(next(tmp_path.glob("*.holder.json")).read_text())
    with BenchLock([A], directory=tmp_path) as lock:
        assert len(lock.notes) == 1
        assert lock.notes[0].startswith(f"{A}: took over the lock left by PID {left['pid']} on ")


def test_the_folder_comes_from_the_environment(monkeypatch, tmp_path):
    monkeypatch.setenv(LOCK_DIR_ENV, str(tmp_path / "locks"))
    assert lock_dir() == tmp_path / "locks"
    monkeypatch.delenv(LOCK_DIR_ENV)
    assert lock_dir() != tmp_path / "locks"  # a per-user default otherwise
