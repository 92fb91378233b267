"""One sweep per bench: an exclusive lock per instrument resource, held from before the first command.

Two sessions driving one instrument interleave their setpoints: one run records
points taken at the other's current, and one switches the output off under the
other. So every session takes the lock of each resource it will talk to before
it sends anything, and a second session on a resource in use is refused at once,
naming the holder.

The lock is an OS file lock (the `filelock` library; `flock` on POSIX), so it is
released by the operating system when its holder dies, however it dies. Beside
each lock a small JSON file names the holder (PID, host, command, start time);
a holder file found under a free lock was left by a process that did not finish
(killed, crashed) and is taken over with a note.

Locks live in `$BENCHLOG_LOCK_DIR`, by default `$XDG_RUNTIME_DIR/benchlog-locks`
or `~/.cache/benchlog/locks`: per user. A lab where several users share
instruments points BENCHLOG_LOCK_DIR at one folder they can all write.
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import socket
import sys
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path

from .errors import BenchInUse

LOCK_DIR_ENV = "BENCHLOG_LOCK_DIR"
_ODD = re.compile(r"[^A-Za-z0-9.-]+")


def lock_dir() -> Path:
    """Where the locks are kept: $BENCHLOG_LOCK_DIR, else a per-user folder."""
    chosen = os.environ.get(LOCK_DIR_ENV)
    if chosen:
        return Path(chosen)
    runtime = os.environ.get("XDG_RUNTIME_DIR")
    if runtime and Path(runtime).is_dir():
        return Path(runtime) / "benchlog-locks"
    return Path.home() / ".cache" / "benchlog" / "locks"


def resource_key(resource: str) -> str:
    """One name per instrument address: case and the default board number 0 do not make another one."""
    parts = [p.strip().upper() for p in resource.strip().split("::")]
    if parts:
        parts[0] = re.sub(r"^([A-Z]+)0$", r"\1", parts[0])  # TCPIP0 == TCPIP, GPIB0 == GPIB
    return "::".join(parts)


def _file_stem(key: str) -> str:
    digest = hashlib.sha256(key.encode("utf-8")).hexdigest()[:12]
    return f"{_ODD.sub('_', key)[:60]}-{digest}"


@dataclass(frozen=True)
class Holder:
    """Who holds (or held) a resource."""

    pid: int
    host: str
    command: str
    started_utc: str

    def describe(self) -> str:
        return f"PID {self.pid} on {self.host} ({self.command!r}, since {self.started_utc})"

    def in_use(self) -> str:
        """What a scan says of a resource this holder has: "in use by PID … on HOST since …"."""
        return f"in use by PID {self.pid} on {self.host} since {self.started_utc} ({self.command!r})"


def _me() -> Holder:
    now = datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
    command = " ".join(os.path.basename(a) if i == 0 else a for i, a in enumerate(sys.argv))[:200] or "python"
    return Holder(os.getpid(), socket.gethostname(), command, now)


def _read_holder(path: Path) -> Holder | None:
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
        return Holder(int(data["pid"]), str(data["host"]), str(data["command"]), str(data["started_utc"]))
    except (OSError, ValueError, KeyError, TypeError):
        return None


class BenchLock:
    """Exclusive locks on every resource of a bench, as one context manager.

        with BenchLock(["TCPIP0::10.0.0.5::5025::SOCKET", ...]) as lock:
            lock.notes   # locks taken over from processes that no longer run
            ...          # connect and sweep
    """

    def __init__(self, resources, *, directory: Path | None = None, on_note=None) -> None:
        self.resources = list(dict.fromkeys(str(r) for r in resources))
        self.directory = Path(directory) if directory is not None else lock_dir()
        self.notes: list[str] = []
        self.on_note = on_note  # told of each lock taken over, as it is taken
        self._held: list[tuple[object, Path]] = []

    def acquire(self) -> "BenchLock":
        from filelock import FileLock, Timeout

        try:
            self.directory.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise BenchInUse(f"cannot create the lock folder {self.directory} ({exc.strerror}); "
                             f"set {LOCK_DIR_ENV} to a writable folder") from None
        me = _me()
        try:
            for resource in sorted(self.resources, key=resource_key):  # one order: no two sessions deadlock
                stem = _file_stem(resource_key(resource))
                lock_path = self.directory / f"{stem}.lock"
                holder_path = self.directory / f"{stem}.holder.json"
                lock = FileLock(str(lock_path), timeout=0)
                try:
                    lock.acquire()
                except Timeout:
                    holder = _read_holder(holder_path)
                    who = holder.describe() if holder else "another process (no holder file)"
                    raise BenchInUse(f"in use by {who}; one sweep per bench: wait for it to finish",
                                     resource=resource, holder=holder) from None
                except OSError as exc:
                    raise BenchInUse(f"cannot take the lock {lock_path} ({exc.strerror}); "
                                     f"set {LOCK_DIR_ENV} to a writable folder", resource=resource) from None
                self._held.append((lock, holder_path))
                left = _read_holder(holder_path)
                if left is not None and left.pid != me.pid:
                    self.notes.append(f"{resource}: took over the lock left by {left.describe()}, "
                                      "which no longer holds it (ended without releasing it)")
                    if self.on_note is not None:
                        self.on_note(self.notes[-1])
                holder_path.write_text(json.dumps(me.__dict__) + "\n", encoding="utf-8")
        except BaseException:
            self.release()
            raise
        return self

    def release(self) -> None:
        while self._held:
            lock, holder_path = self._held.pop()
            try:
                holder_path.unlink(missing_ok=True)
            except OSError:
                pass
            try:
                lock.release()  # type: ignore[attr-defined]
            except Exception:  # noqa: BLE001 -- releasing must not hide what ended the session
                pass

    def __enter__(self) -> "BenchLock":
        return self.acquire()

    def __exit__(self, *exc: object) -> None:
        self.release()
