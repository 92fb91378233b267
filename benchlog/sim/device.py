"""What every simulated instrument shares: IEEE 488.2 common commands, status bytes and the error queue.

Error queue (SCPI-99 vol. 2 21.8): first in, first out, `SYSTem:ERRor[:NEXT]?`
answers `<code>,"<text>"` and `+0,"No error"` when empty; when it is full the
newest entry is replaced by -350 "Queue overflow". Each error also sets its
class bit in the standard event status register (IEEE 488.2 11.5.1).
"""

from __future__ import annotations

from collections import deque

from benchlog import __version__
from benchlog.scpi.codes import ESR_OPC, ESR_PON, STANDARD_ERRORS, esr_bit
from benchlog.scpi.tree import CommandTree, number_param

from .specs import ERROR_QUEUE_DEPTH

MANUFACTURER = "BENCHLOG"


def fmt(value: float, digits: int = 6) -> str:
    """A reading as NR3 numeric response data, e.g. +1.234567E-01."""
    return f"{value:+.{digits}E}"


class ErrorQueue:
    def __init__(self, depth: int = ERROR_QUEUE_DEPTH) -> None:
        self.depth = depth
        self.entries: deque[tuple[int, str]] = deque()

    def push(self, code: int, text: str) -> None:
        if len(self.entries) < self.depth:
            self.entries.append((code, text))
        elif self.entries[-1][0] != -350:
            self.entries[-1] = (-350, STANDARD_ERRORS[-350])

    def pop(self) -> tuple[int, str]:
        return self.entries.popleft() if self.entries else (0, STANDARD_ERRORS[0])

    def clear(self) -> None:
        self.entries.clear()

    def __len__(self) -> int:
        return len(self.entries)


class ScpiDevice:
    """Base of the simulated instruments; subclasses register their subsystems in `build(tree)`."""

    model = "SIM"

    def __init__(self, bench, role: str, serial: str) -> None:
        self.bench = bench
        self.role = role
        self.serial = serial
        self.errors = ErrorQueue()
        self.esr = ESR_PON
        self.ese = 0
        self.sre = 0
        self.reply_delay_s = 0.0  # extra time the current message takes (e.g. meter integration)
        self.busy_until_s = float("-inf")  # bench-clock time when the operation in progress ends
        self.tree = CommandTree()
        self._common(self.tree)
        self.build(self.tree)
        self.reset()

    # -- subclass hooks --------------------------------------------------------------------------
    def build(self, tree: CommandTree) -> None:
        raise NotImplementedError

    def reset(self) -> None:
        """*RST: the instrument's settings to their defaults (queue and status stay)."""

    # -- errors ----------------------------------------------------------------------------------
    def push_error(self, code: int, text: str | None = None) -> None:
        text = text if text is not None else STANDARD_ERRORS.get(code, "Error")
        if len(text) > 200:  # detail quotes received text, which may be anything: keep entries short
            text = text[:197] + "..."
        self.errors.push(code, text)
        self.esr |= esr_bit(code)

    def execute(self, message: str) -> str | None:
        """Run one program message; errors go to the queue; returns the response message or None."""
        outcome = self.tree.execute(message)
        for code, text in outcome.errors:
            self.push_error(code, text)
        return outcome.response

    # -- IEEE 488.2 common commands -------------------------------------------------------------
    def idn(self) -> str:
        return f"{MANUFACTURER},{self.model},{self.serial},{__version__}"

    def _stb(self) -> int:
        stb = 0
        if len(self.errors):
            stb |= 4  # SCPI-99: error/event queue not empty
        if self.esr & self.ese:
            stb |= 32  # event status summary
        if stb & self.sre & ~64:
            stb |= 64  # master summary status
        return stb

    def _common(self, tree: CommandTree) -> None:
        tree.query("*IDN?", self.idn)
        tree.command("*RST", self.reset)
        tree.command("*CLS", self._cls)
        tree.command("*OPC", self._opc)
        tree.query("*OPC?", self._opc_query)
        tree.command("*WAI", lambda: None)
        tree.query("*TST?", lambda: "0")
        tree.query("*ESR?", self._read_esr)
        tree.command("*ESE", lambda v: setattr(self, "ese", int(number_param(v, lo=0, hi=255, name="mask"))), 1)
        tree.query("*ESE?", lambda: str(self.ese))
        tree.command("*SRE", lambda v: setattr(self, "sre", int(number_param(v, lo=0, hi=255, name="mask"))), 1)
        tree.query("*SRE?", lambda: str(self.sre))
        tree.query("*STB?", lambda: str(self._stb()))
        tree.query("SYSTem:ERRor[:NEXT]?", self._next_error)
        tree.query("SYSTem:ERRor:COUNt?", lambda: str(len(self.errors)))
        tree.query("SYSTem:VERSion?", lambda: "1999.0")

    def _cls(self) -> None:
        self.errors.clear()
        self.esr = 0

    def _opc(self) -> None:
        self.esr |= ESR_OPC

    def wait_until_idle(self) -> None:
        """The reply of this message waits until the operation in progress (a reading) has ended."""
        self.reply_delay_s = max(self.reply_delay_s, self.busy_until_s - self.bench.clock())

    def _opc_query(self) -> str:
        # *OPC? answers "1" once every pending operation has completed (IEEE 488.2 10.19)
        self.wait_until_idle()
        return "1"

    def _read_esr(self) -> str:
        value, self.esr = self.esr, 0
        return str(value)

    def _next_error(self) -> str:
        code, text = self.errors.pop()
        return f"{code:+d},\"{text.replace(chr(34), chr(34) * 2)}\""
