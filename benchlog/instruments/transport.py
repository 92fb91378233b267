"""Talking to one instrument: a small transport interface and its implementation over pyvisa.

`Transport` is the one seam the roles use (`write`, `query`, `close`, `reopen`);
tests and demos may pass another implementation. `VisaTransport` is the real one:
every pyvisa and socket error is converted here, once, into `errors.py`'s types.

Two details of message-based instruments matter for correct data:
- one lock per instrument around each write/read pair, so two threads never
  interleave a command with another command's reply;
- after a timeout the late reply may still arrive; it is read and discarded
  before the next query, so replies never shift by one.

pyvisa-py reports a peer that closed a raw socket as a read timeout; where the
backend exposes its socket we look at it (a non-blocking peek) to tell a dropped
connection from a slow instrument.
"""

from __future__ import annotations

import socket
import threading
from typing import Any

from .errors import BenchError, ConnectionLost, InstrumentTimeout, SafetyLimit, TransportError

# How many late replies a drain reads and discards at most, and the wait between them.
_DRAIN_MAX_READS = 64
_DRAIN_FOLLOW_S = 0.05


class Transport:
    """One message-based instrument link: send a command, or send a query and return its reply."""

    resource: str = ""

    def write(self, command: str) -> None:
        raise NotImplementedError

    def query(self, command: str, *, timeout_s: float | None = None) -> str:
        raise NotImplementedError

    def reopen(self) -> None:
        """Open the link again after it was lost (the guard uses this to reach the safe state)."""
        raise ConnectionLost("this transport cannot reconnect", resource=self.resource)

    def close(self) -> None:
        pass

    def __enter__(self) -> "Transport":
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


# -- resource managers: one per backend, shared, closed with the last user ------------


class _Managers:
    def __init__(self) -> None:
        self._lock = threading.Lock()
        self._entries: dict[str, list[Any]] = {}  # backend -> [ResourceManager, users]

    def acquire(self, backend: str) -> Any:
        with self._lock:
            entry = self._entries.get(backend)
            if entry is None:
                try:
                    import pyvisa  # imported here so commands that never touch a bench start fast
                except ImportError as exc:  # pragma: no cover - a hard dependency
                    raise TransportError(f"pyvisa is not installed ({exc}); pip install pyvisa pyvisa-py") from None
                try:
                    manager = pyvisa.ResourceManager(backend)
                except (ValueError, OSError, pyvisa.errors.Error) as exc:
                    raise TransportError(
                        f"VISA backend {backend!r} is not available ({exc})",
                    ) from None
                entry = self._entries[backend] = [manager, 0]
            entry[1] += 1
            return entry[0]

    def release(self, backend: str) -> None:
        with self._lock:
            entry = self._entries.get(backend)
            if entry is None:
                return
            entry[1] -= 1
            if entry[1] <= 0:
                del self._entries[backend]
                try:
                    entry[0].close()
                except Exception:  # closing a manager whose sessions already died is not an error
                    pass

    def users(self, backend: str) -> int:
        with self._lock:
            entry = self._entries.get(backend)
            return entry[1] if entry else 0


MANAGERS = _Managers()


def _check_command(command: str, resource: str) -> None:
    # Last line of defence: whatever a caller built, one write is one line of printable text.
    if not isinstance(command, str) or not command or any(c in command for c in "\r\n") or not command.isprintable():
        raise SafetyLimit(f"command {command!r} refused: not one line of printable text", resource=resource)


class VisaTransport(Transport):
    """A VISA resource opened through pyvisa (`'@py'` = pyvisa-py by default, any backend by name)."""

    def __init__(
        self,
        resource: str,
        *,
        read_termination: str = "\n",
        write_termination: str = "\n",
        timeout_s: float = 2.0,
        backend: str = "@py",
        open_timeout_s: float = 5.0,
    ) -> None:
        self.resource = resource
        self.backend = backend
        self.read_termination = read_termination
        self.write_termination = write_termination
        self._timeout_s = float(timeout_s)
        self.open_timeout_s = float(open_timeout_s)
        self._lock = threading.RLock()
        self._res: Any = None
        self._stale = False  # a reply may still be on its way after a timeout
        self._lost: str | None = None
        self._closed = False
        self._pyvisa_errors: tuple[type[BaseException], ...] = (OSError,)
        self._manager = MANAGERS.acquire(backend)
        try:
            self._open()
        except BaseException:
            MANAGERS.release(backend)
            raise

    # -- life cycle ------------------------------------------------------------------
    def _open(self) -> None:
        import pyvisa

        self._pyvisa_errors = (pyvisa.errors.Error, OSError)
        try:
            self._res = self._manager.open_resource(
                self.resource,
                read_termination=self.read_termination,
                write_termination=self.write_termination,
                timeout=max(1, round(self.timeout_s * 1000)),
                open_timeout=max(1, round(self.open_timeout_s * 1000)),
            )
        except Exception as exc:  # pyvisa-py raises a bare Exception for some unreachable addresses
            raise ConnectionLost(f"cannot open ({_describe(exc)})", resource=self.resource) from None
        self._lost = None
        self._stale = False
        if self.resource.upper().endswith("::SOCKET"):
            # Nagle's algorithm holds a query sent right after a write (INITiate then FETCh?) until the
            # peer's delayed ACK, about 40 ms per point on Linux; instruments answer lines, so send at once.
            _set_nodelay(self._res)
        if self._peer_state() == "closed":
            self._drop()
            raise ConnectionLost("cannot open (connection refused or closed at once)", resource=self.resource)

    def reopen(self) -> None:
        with self._lock:
            if self._closed:
                raise ConnectionLost("transport was closed", resource=self.resource)
            self._drop()
            self._open()

    def close(self) -> None:
        with self._lock:
            if self._closed:
                return
            self._closed = True
            self._drop()
            MANAGERS.release(self.backend)

    def _drop(self) -> None:
        res, self._res = self._res, None
        if res is not None:
            try:
                res.close()
            except Exception:  # the session may already be gone with the connection
                pass

    @property
    def timeout_s(self) -> float:
        """Reply timeout for every query that does not pass its own."""
        return self._timeout_s

    @timeout_s.setter
    def timeout_s(self, value: float) -> None:
        with self._lock:
            self._timeout_s = float(value)
            if self._res is not None:
                try:
                    self._res.timeout = max(1, round(self._timeout_s * 1000))
                except self._pyvisa_errors as exc:
                    raise self._convert(exc, "(setting the timeout)") from None

    @property
    def lost(self) -> bool:
        return self._lost is not None

    # -- I/O -------------------------------------------------------------------------
    def write(self, command: str) -> None:
        _check_command(command, self.resource)
        with self._lock:
            self._ensure_open(command)
            self._write(command)

    def query(self, command: str, *, timeout_s: float | None = None) -> str:
        _check_command(command, self.resource)
        with self._lock:
            self._ensure_open(command)
            if self._stale or self._peer_state() == "data":
                self._drain()
            try:
                self._write(command)
                return self._read(command, timeout_s)
            except BenchError:
                raise
            except BaseException:
                # Ctrl-C or SIGTERM inside the read: the reply may still come; drop it before the next query.
                self._stale = True
                raise

    def _ensure_open(self, command: str) -> None:
        if self._closed:
            raise ConnectionLost(f"transport is closed; {command!r} not sent", resource=self.resource)
        if self._lost is not None:
            raise ConnectionLost(f"{self._lost}; {command!r} not sent", resource=self.resource)
        if self._peer_state() == "closed":
            self._lose("connection closed by the instrument")
            raise ConnectionLost(f"{self._lost}; {command!r} not sent", resource=self.resource)

    def _write(self, command: str) -> None:
        try:
            self._res.write(command)
        except self._pyvisa_errors as exc:
            raise self._convert(exc, command) from None

    def _read(self, command: str, timeout_s: float | None) -> str:
        restore = None
        try:
            if timeout_s is not None and timeout_s != self.timeout_s:
                restore = self._res.timeout
                self._res.timeout = max(1, round(timeout_s * 1000))
            raw = self._res.read_raw()
        except self._pyvisa_errors as exc:
            raise self._convert(exc, command) from None
        finally:
            if restore is not None and self._res is not None:
                try:
                    self._res.timeout = restore
                except self._pyvisa_errors:
                    pass
        # latin-1 maps every byte, so a garbage reply reaches the parser (NonsenseReply), not a decode error.
        text = raw.decode("latin-1")
        if text.endswith(self.read_termination):
            text = text[: -len(self.read_termination)]
        return text.rstrip("\r\n")

    def _drain(self) -> None:
        """Read and discard replies that arrived late, so the next reply belongs to the next query."""
        wait_s = self.timeout_s
        original = self._res.timeout
        try:
            for _ in range(_DRAIN_MAX_READS):
                self._res.timeout = max(1, round(wait_s * 1000))
                try:
                    self._res.read_raw()
                except self._pyvisa_errors as exc:
                    err = self._convert(exc, "(discarding a late reply)")
                    if isinstance(err, InstrumentTimeout):
                        break
                    raise err from None
                wait_s = _DRAIN_FOLLOW_S
        finally:
            if self._res is not None:
                try:
                    self._res.timeout = original
                except self._pyvisa_errors:
                    pass
        self._stale = False

    # -- the boundary ----------------------------------------------------------------
    def _convert(self, exc: BaseException, command: str) -> BenchError:
        """Map one backend exception to our type; remember a lost link or a possibly late reply."""
        import pyvisa
        from pyvisa.constants import StatusCode

        if isinstance(exc, pyvisa.errors.VisaIOError):
            if exc.error_code == StatusCode.error_timeout:
                if self._peer_state() == "closed":
                    self._lose("connection closed by the instrument")
                    return ConnectionLost(f"{self._lost} (no reply to {command!r})", resource=self.resource)
                self._stale = True
                return InstrumentTimeout(
                    f"no reply to {command!r} within {self._res.timeout / 1000:g} s", resource=self.resource
                )
            self._lose(_describe(exc))
            return ConnectionLost(f"{self._lost} (during {command!r})", resource=self.resource)
        if isinstance(exc, pyvisa.errors.InvalidSession):
            self._lose("session is closed")
            return ConnectionLost(f"{self._lost} (during {command!r})", resource=self.resource)
        if isinstance(exc, (socket.timeout, TimeoutError)):
            self._stale = True
            return InstrumentTimeout(f"no reply to {command!r} (socket timeout)", resource=self.resource)
        if isinstance(exc, ConnectionRefusedError):
            self._lose("connection refused")
        elif isinstance(exc, (ConnectionResetError, BrokenPipeError, ConnectionAbortedError)):
            self._lose("connection closed by the instrument")
        elif isinstance(exc, OSError):
            self._lose(f"link failed ({_describe(exc)})")
        else:
            self._lose(_describe(exc))
        return ConnectionLost(f"{self._lost} (during {command!r})", resource=self.resource)

    def _lose(self, reason: str) -> None:
        self._lost = reason
        self._stale = False

    def _peer_state(self) -> str | None:
        """'closed', 'data' (bytes waiting), 'idle', or None when the backend hides its socket."""
        sock, pending = self._socket()
        flags = getattr(socket, "MSG_DONTWAIT", None)
        if sock is None or flags is None:
            return None
        if pending:
            return "data"
        try:
            data = sock.recv(1, socket.MSG_PEEK | flags)
        except (BlockingIOError, InterruptedError):
            return "idle"
        except OSError:
            return "closed"
        return "data" if data else "closed"

    def _socket(self) -> tuple[socket.socket | None, bool]:
        """The backend's socket and whether it already holds unread bytes (pyvisa-py SOCKET sessions only)."""
        # pyvisa-py keeps the socket as `.interface` and bytes read past a terminator in `._pending_buffer`.
        try:
            session = self._res.visalib.sessions[self._res.session]
        except Exception:
            return None, False
        sock = getattr(session, "interface", None)
        if not isinstance(sock, socket.socket):
            return None, False
        return sock, bool(getattr(session, "_pending_buffer", b""))


def _describe(exc: BaseException) -> str:
    text = str(exc).strip() or type(exc).__name__
    return " ".join(text.split())


def _set_nodelay(res) -> None:
    """TCP_NODELAY on a raw-socket resource (pyvisa-py 0.7 lists the attribute but cannot set it)."""
    try:
        from pyvisa import constants

        res.set_visa_attribute(constants.VI_ATTR_TCPIP_NODELAY, constants.VI_TRUE)
        return
    except Exception:  # noqa: BLE001
        pass
    try:
        import socket

        sock = res.visalib.sessions[res.session].interface
        sock.setsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY, 1)
    except Exception:  # noqa: BLE001 -- another backend still works, only slower
        pass
