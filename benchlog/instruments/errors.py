"""The errors the instrument layer raises: backend errors are converted once, at the transport boundary.

Nothing above `instruments/` ever sees a pyvisa or socket exception; it sees one of these::

    Exception
     ├── BenchError                    something went wrong talking to an instrument (.resource)
     │    ├── TransportError           the link itself failed
     │    │    ├── InstrumentTimeout   no (complete) reply within the timeout
     │    │    └── ConnectionLost      closed, reset or refused by the far end; cannot be opened
     │    ├── InstrumentError          the instrument reported an error (.code, .text, .command)
     │    ├── SafetyLimit              a setpoint refused before sending (outside the profile's ranges,
     │    │                            not a finite number, or a value that would change the command)
     │    ├── SafeStateFailed          an output/input not confirmed off (.report, .failures)
     │    ├── BenchInUse               another session holds an instrument's lock (.holder)
     │    ├── NonsenseReply  ──┐       a reply that is not what was asked for (.command, .reply)
     │    └── WrongInstrument ─┤       the *IDN? reply does not match the profile's idn_pattern
     └── BadInput              │       (benchlog.badinput) input a user must fix: one line, exit 2
          ├── NonsenseReply ◄──┘
          ├── WrongInstrument
          └── ProfileError             an instrument profile that cannot be used (file, key, problem)

`NonsenseReply` and `WrongInstrument` are both: they happen while talking to an
instrument, and the user fixes them (wrong resource, wrong profile, broken firmware
setting), so the CLI reports them like any other bad input.
"""

from __future__ import annotations

from benchlog.badinput import BadInput


class BenchError(Exception):
    """Base of every failure while talking to an instrument; `.resource` names the VISA resource."""

    def __init__(self, message: str, *, resource: str = "") -> None:
        self.resource = resource
        self.message = message
        super().__init__(f"{resource}: {message}" if resource else message)


class TransportError(BenchError):
    """The link failed: nothing useful came back."""


class InstrumentTimeout(TransportError):
    """No complete reply within the timeout; the transport clears the late reply before the next query."""


class ConnectionLost(TransportError):
    """The far end closed, reset or refused the connection (or it was never reachable)."""


class InstrumentError(BenchError):
    """An entry from the instrument's error queue (`SYSTem:ERRor?`), tied to the command that caused it."""

    def __init__(self, code: int, text: str, command: str, *, resource: str = "", more: int = 0) -> None:
        self.code = code
        self.text = text
        self.command = command
        self.more = more  # further non-zero entries drained after this first one
        tail = f" (+{more} more in the queue)" if more else ""
        super().__init__(f"error {code:+d} \"{text}\" after {command!r}{tail}", resource=resource)


class SafetyLimit(BenchError):
    """A setpoint refused before anything was sent."""

    def __init__(self, message: str, *, resource: str = "", name: str = "", value: object = None) -> None:
        self.name = name
        self.value = value
        super().__init__(message, resource=resource)


class SafeStateFailed(BenchError):
    """An output or input was not confirmed off; `.report` holds every role's read-back state.

    Built from a guard's `SafeStateReport` (its message is the report's one statement), or
    from a plain list of (role, step, error) failures.
    """

    def __init__(self, report_or_failures) -> None:
        failures = getattr(report_or_failures, "failures", None)
        if failures is not None:
            self.report = report_or_failures
            self.failures = tuple(failures)
            message = report_or_failures.statement()
        else:
            self.report = None
            self.failures = tuple(report_or_failures)
            parts = [f"{who}: {step} failed ({err})" for who, step, err in self.failures]
            message = "OUTPUTS MAY BE ON: " + "; ".join(parts) + " -- switch them off by hand now"
        super().__init__(message)


class BenchInUse(BenchError):
    """Another session holds the lock of an instrument resource: one sweep per bench."""

    def __init__(self, message: str, *, resource: str = "", holder: object = None) -> None:
        self.holder = holder
        super().__init__(message, resource=resource)


class ProfileError(BadInput):
    """An instrument profile that cannot be used: file, key, what is wrong, what was expected."""


class NonsenseReply(BenchError, BadInput):
    """A reply that is not what the command asks for (not a number, wrong field count, ...)."""

    def __init__(self, command: str, reply: str, expected: str, *, resource: str = "") -> None:
        self.command = command
        self.reply = reply
        shown = reply if len(reply) <= 60 else reply[:57] + "..."
        BadInput.__init__(self, f"reply from {resource or 'instrument'}", f"to {command!r}", f"got {shown!r}", expected)
        self.resource = resource
        self.message = self.line()

    def __str__(self) -> str:
        return self.line()


class WrongInstrument(BenchError, BadInput):
    """The instrument at a resource does not identify as the profile expects."""

    def __init__(self, idn: str, profile_name: str, pattern: str, *, resource: str = "") -> None:
        self.idn = idn
        self.profile_name = profile_name
        BadInput.__init__(
            self,
            resource or "instrument",
            "*IDN?",
            f"{idn!r} does not match profile {profile_name!r}",
            f"a reply matching {pattern!r}, or another profile",
        )
        self.resource = resource
        self.message = self.line()

    def __str__(self) -> str:
        return self.line()
