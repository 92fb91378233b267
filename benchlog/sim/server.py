"""Serving the simulated bench as raw-socket SCPI, one TCP port per instrument.

Each instrument listens on its own port (the VISA `TCPIP0::<host>::<port>::SOCKET`
form, newline-terminated messages and replies). Several connections to one
port are served side by side, so a client that lost its connection can simply
open a new one while the old one is still being torn down. Settings and the
error queue belong to the instrument, not to the connection: they survive a
reconnect, as on real hardware.

Replies are sent as soon as they are computed, unless a latency is configured or
the instrument needs time (a meter's integration, see sim/timing.py). On an
injected clock (`serve_bench(..., clock=, sleep=)`) the instrument's own time is
waited out with the injected `sleep`, so tests of timing run without waiting.
While a reply waits out its latency, a new message arriving on the same
connection interrupts the query: the reply is discarded and -410 "Query
INTERRUPTED" is queued (IEEE 488.2 6.3.2.3). -420 "Query UNTERMINATED" (a read
with nothing to say) cannot be detected over a raw socket, which carries no
read request; such a read simply times out on the client.
"""

from __future__ import annotations

import select
import socket
import struct
import threading
import time
from dataclasses import dataclass, field
from typing import Callable

from .bench import SimBench
from .config import SimConfig
from .faults import GARBAGE_REPLY, QUEUE_ERROR, FaultCounter


MAX_MESSAGE_BYTES = 65536


def resource_string(host: str, port: int) -> str:
    return f"TCPIP0::{host}::{port}::SOCKET"


class _InstrumentServer:
    """One listening socket and the connections of one instrument."""

    def __init__(self, bench: SimBench, role: str, host: str, port: int) -> None:
        self.bench = bench
        self.role = role
        self.device = bench.devices()[role]
        self.faults = FaultCounter(bench.config.faults, role)
        family = socket.AF_INET6 if ":" in host else socket.AF_INET
        self.listener = socket.socket(family, socket.SOCK_STREAM)
        self.listener.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        self.listener.bind((host, port))
        self.listener.listen(8)
        self.port = self.listener.getsockname()[1]
        self.stopping = threading.Event()
        self.connections: set[socket.socket] = set()
        self.threads: list[threading.Thread] = []
        self.lock = threading.Lock()
        self.accept_thread = threading.Thread(target=self._accept, name=f"sim-{role}-accept", daemon=True)

    def start(self) -> None:
        self.accept_thread.start()

    def stop(self) -> None:
        self.stopping.set()
        for sock in [self.listener, *list(self.connections)]:
            try:
                sock.shutdown(socket.SHUT_RDWR)
            except OSError:
                pass
            try:
                sock.close()
            except OSError:
                pass
        self.accept_thread.join(timeout=2.0)
        for thread in list(self.threads):
            thread.join(timeout=2.0)

    # -- connections ------------------------------------------------------------------------------
    def _accept(self) -> None:
        while not self.stopping.is_set():
            try:
                conn, _ = self.listener.accept()
            except OSError:
                break
            if self.stopping.is_set():
                conn.close()
                break
            conn.setsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY, 1)
            with self.lock:
                self.connections.add(conn)
                self.threads = [t for t in self.threads if t.is_alive()]
                thread = threading.Thread(target=self._serve, args=(conn,), name=f"sim-{self.role}-conn",
                                          daemon=True)
                self.threads.append(thread)
            thread.start()

    def _too_long(self) -> None:
        with self.bench.lock:
            self.device.push_error(-223, f"Too much data; a message longer than {MAX_MESSAGE_BYTES} bytes")

    def _serve(self, conn: socket.socket) -> None:
        buffer = bytearray()
        skipping = False  # inside a refused over-long message, until its terminator
        try:
            while not self.stopping.is_set():
                try:
                    data = conn.recv(65536)
                except OSError:
                    return
                if not data:
                    return
                buffer += data
                while not self.stopping.is_set():
                    end = buffer.find(b"\n")
                    if end < 0:
                        if len(buffer) > MAX_MESSAGE_BYTES:
                            # a message without end: refuse it rather than grow without bound
                            del buffer[:]
                            if not skipping:
                                self._too_long()
                            skipping = True
                        break
                    line = bytes(buffer[:end])
                    del buffer[: end + 1]
                    if skipping or len(line) > MAX_MESSAGE_BYTES:
                        if not skipping:
                            self._too_long()
                        skipping = False
                        continue
                    if not self._message(conn, line, buffer):
                        return
        finally:
            with self.lock:
                self.connections.discard(conn)
            try:
                conn.close()
            except OSError:
                pass

    def _message(self, conn: socket.socket, raw: bytes, buffer: bytearray) -> bool:
        """Handle one program message; False ends the connection."""
        try:
            text = raw.decode("ascii").rstrip("\r")
        except UnicodeDecodeError:
            text = None
        fired = self.faults.next_message(has_query=b"?" in raw)
        if "drop" in fired:
            # an abortive close (TCP RST), as when an instrument reboots: the client sees the
            # connection reset instead of waiting for a reply that will never come
            try:
                conn.setsockopt(socket.SOL_SOCKET, socket.SO_LINGER, struct.pack("ii", 1, 0))
            except OSError:
                pass
            return False
        bench = self.bench
        with bench.lock:
            bench.advance()
            if "queue_error" in fired:
                self.device.push_error(*QUEUE_ERROR)
            if "trip" in fired:
                bench.supply.trip()
            if "stuck_on" in fired:
                bench.supply.stuck_on = True
            self.device.reply_delay_s = 0.0
            if text is None:
                self.device.push_error(-101, "Invalid character; only ASCII is understood")
                reply = None
            else:
                bench.supply.check_protection()
                bench.load.check_protection()
                reply = self.device.execute(text)
                bench.supply.check_protection()
                bench.load.check_protection()
            instrument_s = self.device.reply_delay_s if reply is not None else 0.0
        if reply is None or "hang" in fired:
            return True
        if bench.sleep is not None and instrument_s > 0:
            bench.sleep(instrument_s)
            instrument_s = 0.0
        delay = bench.config.latency_s + self.faults.extra_latency_s + instrument_s
        if "garbage" in fired:
            reply = GARBAGE_REPLY
        if delay > 0 and self._interrupted(conn, delay, buffer):
            with bench.lock:
                self.device.push_error(-410, "Query INTERRUPTED; a new message came before the reply was read")
            return True
        data = reply.encode("ascii", "replace") + b"\n"
        if "trickle" in fired:
            return self._trickle(conn, data)
        try:
            conn.sendall(data)
        except OSError:
            return False
        return True

    def _trickle(self, conn: socket.socket, data: bytes) -> bool:
        """Send a reply one byte at a time (the trickle fault); messages that arrive meanwhile wait."""
        for i in range(len(data)):
            if i and self.stopping.wait(self.faults.trickle_byte_s):
                return False
            try:
                conn.sendall(data[i : i + 1])
            except OSError:
                return False
        return True

    def _interrupted(self, conn: socket.socket, delay: float, buffer: bytearray) -> bool:
        """Wait out the reply latency; True if a new message arrived meanwhile (IEEE 488.2 query interrupted)."""
        if buffer.strip():
            return True
        deadline = time.monotonic() + delay
        while True:
            left = deadline - time.monotonic()
            if left <= 0:
                return False
            try:
                readable, _, _ = select.select([conn], [], [], left)
            except (OSError, ValueError):
                return False
            if readable:
                try:
                    data = conn.recv(65536)
                except OSError:
                    return False
                if not data:
                    return False  # the peer closed; nothing will read the reply anyway
                buffer += data
                return True


@dataclass
class RunningBench:
    """A simulated bench being served; `resources` maps role -> VISA resource string."""

    config: SimConfig
    bench: SimBench
    resources: dict[str, str]
    ports: dict[str, int]
    _servers: list[_InstrumentServer] = field(repr=False)
    _stopped: bool = False

    def stop(self) -> None:
        """Stop serving; every output is left off, as a real bench left alone should be."""
        if self._stopped:
            return
        self._stopped = True
        with self.bench.lock:
            self.bench.supply.output_on = False
            self.bench.load.input_on = False
        for server in self._servers:
            server.stop()

    def truth(self) -> dict:
        return self.bench.truth()

    def messages(self, role: str) -> int:
        """How many program messages `role` has received so far (a witness that nothing was sent)."""
        return next(s.faults.count for s in self._servers if s.role == role)

    def __enter__(self) -> "RunningBench":
        return self

    def __exit__(self, *exc) -> None:
        self.stop()


def serve_bench(config: SimConfig, *, clock: Callable[[], float] = time.monotonic,
                sleep: Callable[[float], None] | None = None) -> RunningBench:
    """Start serving `config`'s bench in background threads; ports are bound before this returns.

    `clock` and `sleep` may be injected together: the instruments' timing then passes on that clock.
    """
    bench = SimBench(config, clock=clock, sleep=sleep)
    servers: list[_InstrumentServer] = []
    try:
        for index, role in enumerate(config.roles):
            port = config.port + index if config.port else 0
            servers.append(_InstrumentServer(bench, role, config.host, port))
    except OSError:
        for server in servers:
            server.stop()
        raise
    for server in servers:
        server.start()
    resources = {s.role: resource_string(config.host, s.port) for s in servers}
    return RunningBench(config, bench, resources, {s.role: s.port for s in servers}, servers)
