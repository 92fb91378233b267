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
connection from a slow instrument. The peek is a system call, and at zero reply
latency one per message was the largest cost of the whole layer, so it is made
only where it can tell something: after a timeout or failure, and before a
message on a link that has been quiet for `IDLE_CHECK_S` (a peer that closed
between two exchanges is then seen before anything is sent into the dead link).
In a back-to-back exchange a closed link shows up at once as a reset or, for a
query, as the timeout that the peek then explains. Bytes that pyvisa-py already
read past a reply are checked before every query without a system call.

A reply must be complete within its timeout in total, not per byte: pyvisa-py's
socket read restarts its wait whenever a byte arrives, so an instrument that
trickles one byte at a time could hold a query for ever. On a pyvisa-py socket
the reply is therefore read here against one deadline (select + recv into the
session's own buffer); a reply still incomplete at the deadline abandons the
link (it is closed; the next exchange, or the guard, opens a fresh one). Other
backends keep their own read, and a reply that came in past the deadline is
still refused. A write also waits for (and discards) a reply still owed to an
interrupted query first, so a command never interrupts a query (-410, IEEE
488.2 6.3.2.3).
"""

from __future__ import annotations

import select
import socket
import threading
import time
from typing import Any

from .errors import BenchError, ConnectionLost, InstrumentTimeout, SafetyLimit, TransportError

# How many late replies a drain reads and discards at most, and the wait between them.
_DRAIN_MAX_READS = 64
_DRAIN_FOLLOW_S = 0.05
#: A link quiet for longer than this gets one non-blocking peek before its next message.
IDLE_CHECK_S = 0.05
# MSG_PEEK | MSG_DONTWAIT as a plain int (or None where the platform lacks MSG_DONTWAIT);
# or-ing the IntFlag members per call costs more than the peek itself.
_PEEK_FLAGS = int(socket.MSG_PEEK) | int(socket.MSG_DONTWAIT) if hasattr(socket, "MSG_DONTWAIT") else None
_monotonic = time.monotonic


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
    # Last line of defence: whatever a caller built, one write is one line of printable text
    # (str.isprintable is False for CR, LF and every other control character).
    if type(command) is not str or not command or not command.isprintable():
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
        self._session: Any = None  # pyvisa-py's session object, to see bytes it read past a reply
        self._sock: socket.socket | None = None  # its socket, for the peek (None: backend hides it)
        self._res_timeout_ms = 0  # the timeout last set on the resource (set only when it changes)
        self._last_io = 0.0  # monotonic time of the last exchange that went through
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
        self._res_timeout_ms = max(1, round(self.timeout_s * 1000))
        self._session, self._sock = _backend_socket(self._res)
        self._last_io = _monotonic()
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
        self._session = self._sock = None
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
                    self._set_timeout_ms(max(1, round(self._timeout_s * 1000)))
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
            if self._stale or self._buffered():
                self._drain()  # a reply still owed to an interrupted query: never answer it with a command
            self._write(command)
            self._last_io = _monotonic()

    def query(self, command: str, *, timeout_s: float | None = None) -> str:
        _check_command(command, self.resource)
        with self._lock:
            self._ensure_open(command)
            if self._stale or self._buffered():
                self._drain()
            try:
                self._write(command)
                reply = self._read(command, timeout_s)
            except BenchError:
                raise
            except BaseException:
                # Ctrl-C or SIGTERM inside the read: the reply may still come; drop it before the next query.
                self._stale = True
                raise
            self._last_io = _monotonic()
            return reply

    def _ensure_open(self, command: str) -> None:
        if self._closed:
            raise ConnectionLost(f"transport is closed; {command!r} not sent", resource=self.resource)
        if self._lost is not None:
            raise ConnectionLost(f"{self._lost}; {command!r} not sent", resource=self.resource)
        if _monotonic() - self._last_io > IDLE_CHECK_S:
            # Quiet for a while: the instrument may have closed the link or sent something unasked.
            state = self._peer_state()
            if state == "closed":
                self._lose("connection closed by the instrument")
                raise ConnectionLost(f"{self._lost}; {command!r} not sent", resource=self.resource)
            if state == "data":
                self._stale = True

    def _buffered(self) -> bool:
        """Bytes pyvisa-py already read past the last reply (an unasked line): no system call needed."""
        session = self._session
        return session is not None and bool(getattr(session, "_pending_buffer", None))

    def _write(self, command: str) -> None:
        try:
            self._res.write(command)
        except self._pyvisa_errors as exc:
            raise self._convert(exc, command) from None

    def _set_timeout_ms(self, ms: int) -> None:
        self._res.timeout = ms
        self._res_timeout_ms = ms

    def _read(self, command: str, timeout_s: float | None) -> str:
        limit_s = self._timeout_s if timeout_s is None else float(timeout_s)
        if self._sock is not None:
            raw = self._read_by_deadline(command, limit_s)
        else:
            raw = self._read_visa(command, limit_s)
        # latin-1 maps every byte, so a garbage reply reaches the parser (NonsenseReply), not a decode error.
        text = raw.decode("latin-1")
        if text.endswith(self.read_termination):
            text = text[: -len(self.read_termination)]
        return text.rstrip("\r\n")

    def _read_visa(self, command: str, limit_s: float) -> bytes:
        # The resource keeps the last timeout set on it; it is changed only when a query needs
        # another one (the meter's reads add their integration time), not set and restored each time.
        wanted = max(1, round(limit_s * 1000))
        started = _monotonic()
        try:
            if wanted != self._res_timeout_ms:
                self._set_timeout_ms(wanted)
            raw = self._res.read_raw()
        except self._pyvisa_errors as exc:
            raise self._convert(exc, command) from None
        took = _monotonic() - started
        if took > limit_s * 1.05 + 0.05:  # the backend waited per chunk: the reply is late as a whole
            self._abandon(f"reply to {command!r} took {took:.3g} s, past its {limit_s:g} s deadline")
            raise InstrumentTimeout(f"{self._lost}; link closed", resource=self.resource)
        return raw

    def _read_by_deadline(self, command: str, limit_s: float) -> bytes:
        """One reply from a pyvisa-py socket, complete within `limit_s` in total."""
        session, sock = self._session, self._sock
        term = self.read_termination.encode("ascii")[-1:]
        deadline = _monotonic() + limit_s
        buffer = session._pending_buffer
        while True:
            end = buffer.find(term)
            if end >= 0:
                raw = bytes(buffer[: end + 1])
                del buffer[: end + 1]
                return raw
            left = deadline - _monotonic()
            if left <= 0:
                break
            try:
                ready, _, _ = select.select([sock], [], [], left)
                data = sock.recv(65536) if ready else None
            except (OSError, ValueError) as exc:
                raise self._convert(exc, command) from None
            if data is None:
                continue
            if not data:
                self._lose("connection closed by the instrument")
                raise ConnectionLost(f"{self._lost} (no reply to {command!r})", resource=self.resource)
            buffer.extend(data)
        if buffer:
            got = len(buffer)
            self._abandon(f"reply to {command!r} incomplete after {limit_s:g} s ({got} bytes received)")
            raise InstrumentTimeout(f"{self._lost}; link closed", resource=self.resource)
        self._stale = True
        return self._timed_out(command, limit_s)

    def _timed_out(self, command: str, limit_s: float) -> bytes:
        if self._peer_state() == "closed":
            self._lose("connection closed by the instrument")
            raise ConnectionLost(f"{self._lost} (no reply to {command!r})", resource=self.resource)
        raise InstrumentTimeout(f"no reply to {command!r} within {limit_s:g} s", resource=self.resource)

    def _abandon(self, reason: str) -> None:
        """A reply still trickling in at its deadline: the link's state is unknown, so close it."""
        self._lose(reason)
        self._drop()

    def _drain(self) -> None:
        """Read and discard replies that arrived late, so the next reply belongs to the next query."""
        if self._sock is not None:
            wait_s = self.timeout_s
            for _ in range(_DRAIN_MAX_READS):
                try:
                    self._read_by_deadline("(discarding a late reply)", wait_s)
                except InstrumentTimeout:
                    if self._lost is not None:  # still trickling: the link was abandoned
                        raise ConnectionLost(f"{self._lost} (while discarding a late reply)",
                                             resource=self.resource) from None
                    break
                wait_s = _DRAIN_FOLLOW_S
            self._stale = False
            return
        self._drain_visa()

    def _drain_visa(self) -> None:
        wait_s = self.timeout_s
        try:
            for _ in range(_DRAIN_MAX_READS):
                self._set_timeout_ms(max(1, round(wait_s * 1000)))
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
                    self._set_timeout_ms(max(1, round(self._timeout_s * 1000)))
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
                    f"no reply to {command!r} within {self._res_timeout_ms / 1000:g} s", resource=self.resource
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
        sock = self._sock
        if sock is None or _PEEK_FLAGS is None:
            return None
        if self._buffered():
            return "data"
        try:
            data = sock.recv(1, _PEEK_FLAGS)
        except (BlockingIOError, InterruptedError):
            return "idle"
        except OSError:
            return "closed"
        return "data" if data else "closed"


def _backend_socket(res: Any) -> tuple[Any, socket.socket | None]:
    """pyvisa-py's session object and its socket (SOCKET sessions only), looked up once per open.

    pyvisa-py keeps the socket as `.interface` and bytes read past a terminator in `._pending_buffer`.
    """
    try:
        session = res.visalib.sessions[res.session]
    except Exception:  # another backend: no socket to look at
        return None, None
    sock = getattr(session, "interface", None)
    if not isinstance(sock, socket.socket):
        return None, None
    return session, sock


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
