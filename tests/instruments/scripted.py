"""A scripted Transport for pure unit tests of the roles and the guard (dependency injection, not a pyvisa mock)."""

from __future__ import annotations

from typing import Callable

from benchlog.instruments.errors import ConnectionLost
from benchlog.instruments.transport import Transport


class ScriptedTransport(Transport):
    """Records every write; answers queries from `replies` and an error queue list.

    A reply is the exact text, or a function of no arguments called at the query (it may look at
    `sent`, so an answer can follow what the role commanded).
    """

    def __init__(self, idn: str, replies: dict[str, str | Callable[[], str]] | None = None, *,
                 resource: str = "SCRIPTED::1") -> None:
        self.resource = resource
        self.idn = idn
        self.replies = dict(replies or {})
        self.errors: list[str] = []  # entries still in the instrument's queue, oldest first
        self.sent: list[str] = []  # every write and query, in order
        self.fail_writes: set[str] = set()  # commands that raise ConnectionLost when written
        self.lost = False
        self.reopened = 0
        self.closed = False
        # The output/input state as a real instrument keeps it: switched by the sim profiles'
        # on/off commands, read by their state queries; `stuck_on` ignores the off command.
        self.power = False
        self.stuck_on = False
        self.on_commands = {"OUTPut:STATe ON", "INPut ON"}
        self.off_commands = {"OUTPut:STATe OFF", "INPut OFF"}
        self.state_queries = {"OUTPut:STATe?", "INPut:STATe?"}

    def write(self, command: str) -> None:
        if self.lost or command in self.fail_writes:
            raise ConnectionLost(f"scripted loss at {command!r}", resource=self.resource)
        self.sent.append(command)
        if command in self.on_commands:
            self.power = True
        elif command in self.off_commands and not self.stuck_on:
            self.power = False

    def query(self, command: str, *, timeout_s: float | None = None) -> str:
        if self.lost:
            raise ConnectionLost(f"scripted loss at {command!r}", resource=self.resource)
        self.sent.append(command)
        units = _units(command)
        if command not in self.replies and len(units) > 1:
            # a compound message (IEEE 488.2 7.3): units run in order, one ';'-joined response
            replies = []
            for unit in units:
                if unit.split(" ", 1)[0].endswith("?"):
                    replies.append(self._answer(unit))
                else:
                    self._effect(unit)
            return ";".join(replies)
        return self._answer(command)

    def _effect(self, command: str) -> None:
        if command in self.on_commands:
            self.power = True
        elif command in self.off_commands and not self.stuck_on:
            self.power = False

    def _answer(self, command: str) -> str:
        if command == "*IDN?":
            return self.idn
        if command.startswith("SYST") and "ERR" in command:
            return self.errors.pop(0) if self.errors else '+0,"No error"'
        if command in self.state_queries and command not in self.replies:
            return "1" if self.power else "0"
        reply = self.replies[command]
        return reply() if callable(reply) else reply

    def reopen(self) -> None:
        self.reopened += 1
        self.lost = False
        self.fail_writes.clear()

    def close(self) -> None:
        self.closed = True


def _units(message: str) -> list[str]:
    """The program units of a message joined by our roles (no ';' inside quotes there), leading ':' removed."""
    return [u.strip().lstrip(":") for u in message.split(";")] if '"' not in message else [message]
