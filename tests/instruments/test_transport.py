"""VisaTransport over real pyvisa-py and a real loopback socket, against a small scripted line peer.

The peer is a raw TCP server (no pyvisa inside it) whose answers are chosen per test, so
the transport's boundary cases are exact: a reply that arrives after the timeout, a peer
that closes, bytes that are not text. The simulated bench covers the same cases end to end
in test_sim_bench.py.
"""

from __future__ import annotations

import socket
import threading
import time

import pytest

from benchlog.instruments.errors import ConnectionLost, InstrumentTimeout, SafetyLimit, TransportError
from benchlog.instruments.transport import MANAGERS, VisaTransport


class LinePeer:
    """Serves one connection at a time; `answer(line) -> bytes | None | 'close'` decides each reply."""

    def __init__(self, answer) -> None:
        self.answer = answer
        self.received: list[str] = []
        self.server = socket.socket()
        self.server.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        self.server.bind(("127.0.0.1", 0))
        self.server.listen(4)
        self.port = self.server.getsockname()[1]
        self.connections = 0
        self._stop = False
        self.thread = threading.Thread(target=self._serve, daemon=True)
        self.thread.start()

    @property
    def resource(self) -> str:
        return f"TCPIP0::127.0.0.1::{self.port}::SOCKET"

    def _serve(self) -> None:
        while not self._stop:
            try:
                conn, _ = self.server.accept()
            except OSError:
                return
            self.connections += 1
            with conn:
                buffer = b""
                while True:
                    try:
                        chunk = conn.recv(4096)
                    except OSError:
                        break
                    if not chunk:
                        break
                    buffer += chunk
                    closed = False
                    while b"\n" in buffer:
                        line, buffer = buffer.split(b"\n", 1)
                        text = line.decode()
                        self.received.append(text)
                        reply = self.answer(text)
                        if reply == "close":
                            closed = True
                            break
                        if callable(reply):
                            threading.Thread(target=reply, args=(conn,), daemon=True).start()
                        elif reply is not None:
                            conn.sendall(reply)
                    if closed:
                        break

    def stop(self) -> None:
        self._stop = True
        self.server.close()


@pytest.fixture
def peer_factory():
    peers: list[LinePeer] = []

    def make(answer):
        peer = LinePeer(answer)
        peers.append(peer)
        return peer

    yield make
    for p in peers:
        p.stop()


def _send_quietly(conn: socket.socket, data: bytes) -> None:
    try:
        conn.sendall(data)
    except OSError:  # the test may already have closed the connection
        pass


def echo_number(line: str):
    if line.endswith("?"):
        return f"{len(line)}\n".encode()
    return None


def test_query_and_write_round_trip(peer_factory):
    peer = peer_factory(echo_number)
    with VisaTransport(peer.resource, timeout_s=1.0) as t:
        t.write("VOLT 1.0")
        assert t.query("ABC?") == "4"
        assert t.query("ABCDEF?") == "7"
    assert peer.received == ["VOLT 1.0", "ABC?", "ABCDEF?"]


def test_late_reply_is_discarded_so_replies_never_shift(peer_factory):
    def answer(line: str):
        if line == "SLOW?":
            def late(conn):
                time.sleep(0.6)  # after the client's 0.3 s timeout
                _send_quietly(conn, b"slow-reply\n")
            return late
        return f"reply-to-{line}\n".encode()

    peer = peer_factory(answer)
    with VisaTransport(peer.resource, timeout_s=0.3) as t:
        with pytest.raises(InstrumentTimeout) as info:
            t.query("SLOW?")
        assert "SLOW?" in str(info.value) and info.value.resource == peer.resource
        time.sleep(0.4)  # the late reply is now on the wire
        assert t.query("NEXT?") == "reply-to-NEXT?"
        assert t.query("THEN?") == "reply-to-THEN?"


def test_reply_arriving_during_the_drain_is_also_discarded(peer_factory):
    def answer(line: str):
        if line == "SLOW?":
            def late(conn):
                time.sleep(0.45)  # after the timeout, while the next query drains
                _send_quietly(conn, b"slow-reply\n")
            return late
        return f"reply-to-{line}\n".encode()

    peer = peer_factory(answer)
    with VisaTransport(peer.resource, timeout_s=0.3) as t:
        with pytest.raises(InstrumentTimeout):
            t.query("SLOW?")
        assert t.query("NEXT?") == "reply-to-NEXT?"
        time.sleep(0.3)
        assert t.query("THEN?") == "reply-to-THEN?"


def test_unsolicited_extra_line_is_not_taken_as_the_next_reply(peer_factory):
    def answer(line: str):
        if line == "TWICE?":
            return b"first\nsecond\n"  # a misbehaving instrument answers twice
        return f"reply-to-{line}\n".encode()

    peer = peer_factory(answer)
    with VisaTransport(peer.resource, timeout_s=0.5) as t:
        assert t.query("TWICE?") == "first"
        time.sleep(0.1)
        assert t.query("NEXT?") == "reply-to-NEXT?"


def test_peer_closing_during_a_query_is_connection_lost_not_timeout(peer_factory):
    peer = peer_factory(lambda line: "close" if line == "BYE?" else b"1\n")
    with VisaTransport(peer.resource, timeout_s=0.5) as t:
        assert t.query("A?") == "1"
        with pytest.raises(ConnectionLost) as info:
            t.query("BYE?")
        assert "closed" in str(info.value)
        with pytest.raises(ConnectionLost):  # stays lost, nothing is sent on a dead link
            t.write("OUTP OFF")
        t.reopen()  # the guard reopens to reach the safe state
        assert t.query("A?") == "1"
    assert peer.connections == 2


def test_peer_closed_between_commands_is_seen_before_writing(peer_factory):
    peer = peer_factory(lambda line: "close" if line == "QUIT" else b"1\n")
    with VisaTransport(peer.resource, timeout_s=0.5) as t:
        t.write("QUIT")
        time.sleep(0.1)
        with pytest.raises(ConnectionLost) as info:
            t.write("VOLT 1")
        assert "not sent" in str(info.value)
    assert "VOLT 1" not in peer.received


def test_non_text_bytes_reach_the_caller_as_text(peer_factory):
    peer = peer_factory(lambda line: b"\xff\xfe\x00garbage\n")
    with VisaTransport(peer.resource, timeout_s=0.5) as t:
        reply = t.query("X?")
    assert reply == "\xff\xfe\x00garbage"  # decoded losslessly; the parser then calls it nonsense


@pytest.mark.parametrize("command", ["VOLT 1\n*RST", "VOLT 1\r", "", "VOLT\x001"])
def test_multi_line_or_control_text_is_refused_before_sending(peer_factory, command):
    peer = peer_factory(echo_number)
    with VisaTransport(peer.resource, timeout_s=0.5) as t:
        with pytest.raises(SafetyLimit):
            t.write(command)
        with pytest.raises(SafetyLimit):
            t.query(command)
        assert t.query("OK?") == "3"
    assert peer.received == ["OK?"]


def test_refused_port_is_connection_lost():
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    with pytest.raises(ConnectionLost):
        VisaTransport(f"TCPIP0::127.0.0.1::{port}::SOCKET", timeout_s=0.5)


def test_unknown_backend_is_a_transport_error():
    with pytest.raises(TransportError) as info:
        VisaTransport("TCPIP0::127.0.0.1::1::SOCKET", backend="@no-such-backend")
    assert "@no-such-backend" in str(info.value)


def test_one_manager_per_backend_closed_with_the_last_user(peer_factory):
    peer = peer_factory(echo_number)
    base = MANAGERS.users("@py")
    a = VisaTransport(peer.resource, timeout_s=0.5)
    b = VisaTransport(peer.resource, timeout_s=0.5)
    assert a._manager is b._manager and MANAGERS.users("@py") == base + 2
    a.close()
    a.close()  # closing twice is harmless
    assert MANAGERS.users("@py") == base + 1
    b.close()
    assert MANAGERS.users("@py") == base


def test_lock_keeps_each_reply_with_its_query(peer_factory):
    peer = peer_factory(lambda line: f"{line[:-1]}\n".encode())
    errors: list[str] = []
    with VisaTransport(peer.resource, timeout_s=2.0) as t:
        def worker(tag: str) -> None:
            for i in range(40):
                q = f"{tag}{i}?"
                r = t.query(q)
                if r != q[:-1]:
                    errors.append(f"{q} -> {r}")

        threads = [threading.Thread(target=worker, args=(tag,)) for tag in "ABCD"]
        for th in threads:
            th.start()
        for th in threads:
            th.join()
    assert errors == []


def test_interrupt_during_a_read_does_not_shift_the_next_reply(peer_factory):
    def answer(line: str):
        if line == "SLOW?":
            def late(conn):
                time.sleep(0.3)
                _send_quietly(conn, b"slow-reply\n")
            return late
        return f"reply-to-{line}\n".encode()

    peer = peer_factory(answer)
    with VisaTransport(peer.resource, timeout_s=1.0) as t:
        timer = threading.Timer(0.1, lambda: __import__("_thread").interrupt_main())  # Ctrl-C while waiting
        timer.start()
        with pytest.raises(KeyboardInterrupt):
            t.query("SLOW?")
        timer.join()
        assert t.query("NEXT?") == "reply-to-NEXT?"
        time.sleep(0.3)
        assert t.query("THEN?") == "reply-to-THEN?"


def test_unasked_line_read_with_the_reply_is_drained_without_a_pause(peer_factory):
    # both lines arrive in one segment, so pyvisa-py holds the second one: no quiet spell is needed
    peer = peer_factory(lambda line: b"first\nsecond\n" if line == "TWICE?" else f"reply-to-{line}\n".encode())
    with VisaTransport(peer.resource, timeout_s=0.5) as t:
        assert t.query("TWICE?") == "first"
        assert t.query("NEXT?") == "reply-to-NEXT?"
        assert t.query("THEN?") == "reply-to-THEN?"


class _PeekCounter:
    """Wraps the transport's socket and counts the non-blocking peeks (everything else passes through)."""

    def __init__(self, sock: socket.socket) -> None:
        self.sock, self.peeks = sock, 0

    def recv(self, size: int, flags: int = 0) -> bytes:
        if flags & socket.MSG_PEEK:
            self.peeks += 1
        return self.sock.recv(size, flags)

    def __getattr__(self, name):
        return getattr(self.sock, name)


def test_the_socket_is_peeked_only_after_a_quiet_spell(peer_factory):
    peer = peer_factory(echo_number)
    with VisaTransport(peer.resource, timeout_s=0.5) as t:
        counter = t._sock = _PeekCounter(t._sock)
        for _ in range(50):  # back to back: a closed link would show as a reset or a timeout, no peek needed
            t.write("VOLT 1")
            assert t.query("ABC?") == "4"
        assert counter.peeks == 0
        time.sleep(0.1)  # longer than IDLE_CHECK_S: the peer may have closed or spoken meanwhile
        assert t.query("ABC?") == "4"
        assert counter.peeks == 1


def test_peer_closing_right_after_a_write_is_connection_lost_on_the_next_query(peer_factory):
    peer = peer_factory(lambda line: "close" if line == "QUIT" else b"1\n")
    with VisaTransport(peer.resource, timeout_s=0.5) as t:
        t.write("QUIT")
        with pytest.raises(ConnectionLost):  # no quiet spell: found by the failed exchange itself
            t.query("A?")
        with pytest.raises(ConnectionLost):
            t.write("OUTP OFF")
