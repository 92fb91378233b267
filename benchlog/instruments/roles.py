"""The three instrument roles on the bench (Supply, Load, Meter), each driven through its profile.

A role never builds SCPI text itself: it fills the profile's templates with
`benchlog.scpi.fill_template`, after checking every setpoint against the profile's
limits (`SafetyLimit`, nothing sent). Replies are parsed by `benchlog.scpi`; a reply
that does not parse is a `NonsenseReply`. Setpoint writes are not followed by an
error-queue read (that would double the exchanges per point); callers drain the queue
at checkpoints with `check_errors()`, and `set_output(True)` / `set_input(True)` drain
it before switching power on, so a rejected setpoint never goes live. A caller that
must know a setpoint is applied before reading another instrument calls `sync()`.

Round trips: on a profile with `[link].compound_queries`, a setpoint write is held
back and sent in front of the next message to that instrument (`CURR 1.5;*OPC?`:
the setpoint and its sync in one exchange), a triggered read goes out as one
message (`INIT;:FETC?`) and the supply's per-point read-backs are asked together
(`read_back`). A held setpoint is dropped, never sent, when the safe state begins.
"""

from __future__ import annotations

import math
import numbers
import time
from collections import deque
from typing import Callable

from benchlog.accuracy import Accuracy
from benchlog.scpi.errors import ScpiError, ScpiReplyError
from benchlog.scpi.messages import join_units, split_response
from benchlog.scpi.numbers import fill_template
from benchlog.scpi.replies import Idn, parse_bool, parse_error_entry, parse_idn, parse_int, parse_number, parse_numbers

from .errors import (
    InstrumentError,
    NonsenseReply,
    ProfileError,
    SafeStateFailed,
    SafetyLimit,
    TransportError,
    WrongInstrument,
)
from .profile import Profile
from .transport import Transport

# SYSTem:ERRor? is read at most this often per check: a queue that never empties is itself a fault.
MAX_ERROR_READS = 32
# Integration time per reading is NPLC / line frequency; 50 Hz is the longer power-line cycle (20 ms).
_LONGEST_PLC_S = 0.020
# Allowance for autozero and settling per reading, as a factor on the integration time (common practice: ~2x).
_READ_OVERHEAD = 2.0
#: A lost link is reopened at most this often per safe-state step, waiting these seconds before each try
#: (an instrument that reset its interface may refuse connections for a moment).
REOPEN_WAITS_S = (0.0, 0.25, 1.0)
#: How often the state query is asked (with the off command sent again in between) before "not confirmed".
VERIFY_ATTEMPTS = 3
# The integration time assumed for the read timeout of a meter whose profile cannot set NPLC (a slow setting).
_UNKNOWN_NPLC = 10.0

Failure = tuple[str, str, BaseException]


def _ok_number(value: object) -> bool:
    return isinstance(value, numbers.Real) and not isinstance(value, bool)


class Role:
    """Common part of every role: identity, command sending, error queue, safe state."""

    role_name = ""

    def __init__(self, transport: Transport, profile: Profile, *, check_idn: bool = True) -> None:
        if profile.role != self.role_name:
            raise ProfileError(profile.source, "role", f"is {profile.role!r}", f"{self.role_name!r} for a {type(self).__name__}")
        self.transport = transport
        self.profile = profile
        self.resource = getattr(transport, "resource", "")
        # the last commands written since the error queue was drained, to name them in an InstrumentError
        self._pending: deque[str] = deque(maxlen=8)
        self._error_query = profile.error_query
        self._fixed: dict[str, str] = {}  # operation -> its command, for templates without placeholders
        self._held: list[str] = []  # setpoint commands to send in front of the next message (compound profiles)
        self.idn_text = self._query("*IDN?")
        try:
            self.idn: Idn = parse_idn(self.idn_text)
        except ScpiReplyError:
            raise NonsenseReply("*IDN?", self.idn_text, "four comma-separated fields", resource=self.resource) from None
        if check_idn and not profile.matches_idn(self.idn_text):
            raise WrongInstrument(self.idn_text, profile.name, profile.idn_pattern, resource=self.resource)
        # Errors queued before we connected are not ours; keep them for the log instead of blaming our commands.
        self.earlier_errors = self._drain_errors()[0]
        for command in profile.connect_commands:
            self._write(command)
        self._after_connect()
        self.check_errors()

    def _after_connect(self) -> None:
        pass

    # -- plumbing ---------------------------------------------------------------------
    def _with_held(self, command: str) -> str:
        if not self._held:
            return command
        message = join_units([*self._held, command])
        self._held.clear()
        return message

    def _write(self, command: str) -> None:
        command = self._with_held(command)
        self.transport.write(command)
        self._pending.append(command)

    def _write_setpoint(self, command: str) -> None:
        """Send a setpoint now, or hold it for the next message when the profile takes compound messages."""
        if self.profile.compound_queries:
            self._held.append(command)
        else:
            self._write(command)

    def _query(self, command: str, timeout_s: float | None = None) -> str:
        command = self._with_held(command)
        if command != self._error_query:  # a query can cause an error too (an unknown header)
            self._pending.append(command)
        if timeout_s is None:
            return self.transport.query(command)
        return self.transport.query(command, timeout_s=timeout_s)

    def _template(self, operation: str) -> str:
        template = self.profile.commands.get(operation)
        if template is None:
            raise ProfileError(self.profile.source, f"[commands].{operation}", "is not in this profile",
                               f"a template for {operation} to use this feature")
        return template

    def _command(self, operation: str, **values: float) -> str:
        if not values:
            fixed = self._fixed.get(operation)
            if fixed is not None:  # a template without placeholders fills the same every time
                return fixed
        try:
            command = fill_template(self._template(operation), **values)
        except ScpiError as exc:  # the range checks come first; this is the last line of defence
            raise SafetyLimit(f"{operation} refused: {exc}", resource=self.resource) from None
        if not values:
            self._fixed[operation] = command
        return command

    def _setpoint(self, name: str, value: object, limit: float | None, unit: str, key: str) -> float:
        if not _ok_number(value):
            raise SafetyLimit(f"{name} {value!r} refused: not a number", resource=self.resource, name=name, value=value)
        v = float(value)  # type: ignore[arg-type]
        if not math.isfinite(v):
            raise SafetyLimit(f"{name} {v} refused: not a finite number", resource=self.resource, name=name, value=value)
        if v < 0:
            raise SafetyLimit(f"{name} {v:g} {unit} refused: below 0", resource=self.resource, name=name, value=v)
        if limit is not None and v > limit:
            raise SafetyLimit(
                f"{name} {v:g} {unit} refused: above {limit:g} {unit} ({self.profile.name} {key})",
                resource=self.resource, name=name, value=v,
            )
        return v

    def _query_all(self, commands: list[str]) -> list[str]:
        """The reply to each query, in one message when the profile takes compound messages."""
        if len(commands) <= 1 or not self.profile.compound_queries:
            return [self._query(c) for c in commands]
        message = join_units(commands)
        reply = self._query(message)
        try:
            return split_response(reply, len(commands))
        except ScpiError:
            raise NonsenseReply(message, reply, f"{len(commands)} replies separated by ';'",
                                resource=self.resource) from None

    def _number(self, command: str, timeout_s: float | None = None) -> float | None:
        reply = self._query(command, timeout_s)
        try:
            return parse_number(reply)
        except ScpiReplyError:
            raise NonsenseReply(command, reply, "a number", resource=self.resource) from None

    def _reading(self, operation: str, reply: str | None = None) -> float:
        command = self._command(operation)
        if reply is None:
            value = self._number(command)
        else:
            try:
                value = parse_number(reply)
            except ScpiReplyError:
                raise NonsenseReply(command, reply, "a number", resource=self.resource) from None
        if value is None:
            raise NonsenseReply(command, "overload", "a reading within range", resource=self.resource)
        return value

    # -- synchronisation ----------------------------------------------------------------
    def sync(self) -> None:
        """Return once the instrument has applied every command sent to it so far.

        A write returns when the bytes are sent, not when the instrument has acted on
        them, and commands on separate links are not ordered: a meter on its own socket
        can be read before the load has taken its new current. The profile's sync query
        (default `*OPC?`, IEEE 488.2 10.18) answers 1 only when all pending operations
        are complete, and the instrument answers queries in the order it got them.
        """
        command = self.profile.sync_query
        reply = self._query(command)
        if reply != "1" and reply.strip() not in ("1", "+1"):
            raise NonsenseReply(command, reply, "1 (operation complete)", resource=self.resource)

    # -- error queue ------------------------------------------------------------------
    def _drain_errors(self) -> tuple[tuple, int]:
        entries = []
        command = self.profile.error_query
        for _ in range(MAX_ERROR_READS):
            reply = self._query(command)
            try:
                entry = parse_error_entry(reply)
            except ScpiReplyError:
                raise NonsenseReply(command, reply, 'an error entry such as +0,"No error"', resource=self.resource) from None
            if not entry.is_error:
                return tuple(entries), 0
            entries.append(entry)
        return tuple(entries), 1  # still not empty after MAX_ERROR_READS

    def check_errors(self, after: str | None = None) -> None:
        """Drain SYSTem:ERRor?; the first non-zero entry becomes an InstrumentError naming the command."""
        command = after if after is not None else (" ; ".join(self._pending) or "(no command since the last check)")
        entries, not_empty = self._drain_errors()
        self._pending.clear()
        if entries:
            first = entries[0]
            raise InstrumentError(first.code, first.text, command, resource=self.resource,
                                  more=len(entries) - 1 + not_empty)

    @property
    def has_unchecked(self) -> bool:
        """True when something was sent since the error queue was last read empty."""
        return bool(self._pending or self._held)

    def check_new_errors(self, after: str | None = None) -> None:
        """`check_errors` when the queue can hold news of ours (something was sent since it was read empty).

        A queue just read empty, with nothing sent since, has nothing of ours to say; reading
        it again by rote only costs a round trip.
        """
        if self.has_unchecked:
            self.check_errors(after)

    # -- safe state -------------------------------------------------------------------
    @property
    def label(self) -> str:
        return f"{self.role_name} {self.resource}".strip()

    def _safe_steps_off(self) -> list[tuple[str, Callable[[], None]]]:
        return []

    def _safe_steps_zero(self) -> list[tuple[str, Callable[[], None]]]:
        return []

    def _reopen(self) -> None:
        """A fresh link after a lost or confused one: a few tries, then the last error is raised.

        Once the tries failed within one safe-state pass, the later steps of that pass fail at
        once instead of waiting again, so one dead instrument does not hold up the others.
        """
        failed = getattr(self, "_reopen_failed", None)
        if failed is not None:
            raise failed
        last: BaseException | None = None
        for wait_s in REOPEN_WAITS_S:
            if wait_s:
                time.sleep(wait_s)
            try:
                self.transport.reopen()
                return
            except TransportError as exc:
                last = exc
        assert last is not None
        self._reopen_failed = last
        raise last

    def _run_safe(self, steps: list[tuple[str, Callable[[], None]]]) -> list[Failure]:
        failures: list[Failure] = []
        for step, action in steps:
            try:
                try:
                    action()
                except TransportError:
                    # A lost or confused link leaves the output as it was: open a fresh link and try again.
                    self._reopen()
                    action()
            except Exception as exc:  # noqa: BLE001 -- collected and reported; the next step still runs
                failures.append((self.label, step, exc))
        return failures

    # The operation that reads the output/input state back, and the command that switches it off.
    _state_operation = ""
    _off_operation = ""

    @property
    def has_power(self) -> bool:
        """True for a role that can deliver or sink power (a supply or a load)."""
        return bool(self._off_operation)

    @property
    def can_read_state(self) -> bool:
        return bool(self._state_operation) and self.profile.has(self._state_operation)

    def power_is_on(self) -> bool:
        """The output/input state as the instrument reports it (its profile's state query)."""
        command = self._command(self._state_operation)
        reply = self._query(command)
        try:
            return parse_bool(reply)
        except ScpiReplyError:
            raise NonsenseReply(command, reply, "1, 0, ON or OFF", resource=self.resource) from None

    def safe_prepare(self) -> tuple[str, ...]:
        """Before the off commands: discard a reply still owed and drain the error queue.

        Entries found here were caused by earlier commands; they are returned as text so they
        are reported as what they are, not blamed on the safe-state commands. Nothing here may
        stop the off commands: a failure (a lost link) is left for them to meet and reopen.
        """
        self._reopen_failed: BaseException | None = None  # a new pass tries to reopen again
        self._held.clear()  # a setpoint not yet sent is dropped: the safe state decides what goes out
        if not self.has_power:
            return ()
        try:
            entries, _ = self._drain_errors()
        except Exception:  # noqa: BLE001 -- the off commands go out regardless
            return ()
        command = " ; ".join(self._pending) or "an earlier command"
        self._pending.clear()
        return tuple(f"{self.label}: error {e.code:+d} \"{e.text}\" after {command!r} (before the safe state)"
                     for e in entries)

    def safe_verify(self) -> tuple[str, str]:
        """Read the output/input state back: ('verified' | 'unverified' | 'unknown', why not verified)."""
        if not self.has_power:
            return "verified", ""
        if not self.can_read_state:
            return "unknown", f"its profile {self.profile.name!r} has no {self._state_operation} query"
        last = ""
        for attempt in range(VERIFY_ATTEMPTS):
            try:
                try:
                    on = self.power_is_on()
                except TransportError:
                    self._reopen()
                    on = self.power_is_on()
            except Exception as exc:  # noqa: BLE001 -- every failure means "not confirmed"
                last = f"state query failed: {exc}"
                continue
            if not on:
                return "verified", ""
            last = f"{self._state_operation} reads ON after the off command"
            try:
                self._write(self._command(self._off_operation))
            except Exception as exc:  # noqa: BLE001
                last += f"; sending off again failed: {exc}"
        return "unverified", last

    def safe_off(self) -> list[Failure]:
        """Output or input off; returns the failures instead of raising, so the guard can go on."""
        return self._run_safe(self._safe_steps_off())

    def safe_zero(self) -> list[Failure]:
        """Setpoints to zero (after everything is off)."""
        return self._run_safe(self._safe_steps_zero())

    def safe_confirm(self) -> list[Failure]:
        """Read the error queue once the safe state was commanded: a rejected 'off' must not pass unseen."""
        if not self._safe_steps_off() and not self._safe_steps_zero():
            return []
        return self._run_safe([("error queue after safe state", lambda: self.check_errors())])

    def safe_state(self) -> None:
        """Output/input off, then setpoints to zero, then the error queue; raises SafeStateFailed if any step failed."""
        failures = self.safe_off() + self.safe_zero() + self.safe_confirm()
        if failures:
            raise SafeStateFailed(failures)

    # -- the instrument's own protection (supply output, load input) ---------------------
    @property
    def can_detect_trip(self) -> bool:
        return self.profile.has("protection_tripped")

    def tripped(self) -> bool:
        """True when the instrument's protection has switched its output/input off (False if the profile cannot tell)."""
        if not self.can_detect_trip:
            return False
        command = self._command("protection_tripped")
        reply = self._query(command)
        try:
            return parse_bool(reply)
        except ScpiReplyError:
            value = None
            try:
                value = parse_number(reply)
            except ScpiReplyError:
                pass
            if value in (0.0, 1.0):
                return bool(value)
            raise NonsenseReply(command, reply, "0 or 1", resource=self.resource) from None

    def clear_protection(self) -> None:
        self._write(self._command("protection_clear"))
        self.check_errors()

    def _program_levels(self, levels: list[tuple[str, str, float | None, str, str]]) -> list[str]:
        """Send (operation, placeholder, value, unit, name) for each level given whose operation the profile has.

        All are sent, then the error queue is read once: a level the instrument refused raises
        InstrumentError and must not pass as a protection it does not have. Returns what was set.
        """
        done: list[str] = []
        sent: list[str] = []
        for operation, placeholder, value, unit, name in levels:
            if value is None or not self.profile.has(operation):
                continue
            checked = self._setpoint(placeholder, value, None, unit, "")
            sent.append(self._command(operation, **{placeholder: checked}))
            done.append(f"{name} {checked:g} {unit}")
        for command in sent:
            self._write(command)
        if sent:
            self.check_errors(after=" ; ".join(sent))
        return done

    # -- life cycle -------------------------------------------------------------------
    def close(self) -> None:
        self.transport.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def __repr__(self) -> str:
        return f"<{type(self).__name__} {self.resource} profile={self.profile.name}>"


class Supply(Role):
    """A programmable DC supply: voltage setpoint, current limit, output, readback, CV/CC mode."""

    role_name = "supply"

    def __init__(self, transport: Transport, profile: Profile, *, check_idn: bool = True) -> None:
        self.output_on = False
        self.reversed = False
        super().__init__(transport, profile, check_idn=check_idn)

    def set_voltage(self, voltage_v: float) -> None:
        v = self._setpoint("voltage_v", voltage_v, self.profile.limits.max_voltage_v, "V", "[limits].max_voltage_v")
        self._write(self._command("set_voltage", voltage_v=v))

    def set_current_limit(self, current_a: float) -> None:
        a = self._setpoint("current_a", current_a, self.profile.limits.max_current_a, "A", "[limits].max_current_a")
        self._write_setpoint(self._command("set_current_limit", current_a=a))

    def set_output(self, on: bool) -> None:
        if on:
            self.check_new_errors()  # never switch on over a setpoint the instrument rejected
            command = self._command("output_on")
            self._write(command)
            self.output_on = True
            self.check_errors(after=command)
        else:
            self._write(self._command("output_off"))
            self.output_on = False

    def measure_voltage(self) -> float:
        return self._reading("measure_voltage")

    def measure_current(self) -> float:
        return self._reading("measure_current")

    @property
    def can_report_mode(self) -> bool:
        return self.profile.mode is not None

    def mode(self) -> str:
        """'CV', 'CC', 'OFF' or 'UNKNOWN' (no [mode] in the profile, both bits, or neither bit while on)."""
        decoding = self.profile.mode
        if decoding is None:
            return "UNKNOWN"
        return self._mode_from(self._query(decoding.query))

    def read_back(self, *, current: bool = False, voltage: bool = False) -> tuple[str, float | None, float | None]:
        """(mode, current, voltage) after a point: the mode always, the read-backs asked for.

        One message on a compound profile (`STAT:OPER:COND?;:MEAS:CURR?;:MEAS:VOLT?`),
        otherwise one query each, in that order.
        """
        decoding = self.profile.mode
        commands = [decoding.query] if decoding is not None else []
        if current:
            commands.append(self._command("measure_current"))
        if voltage:
            commands.append(self._command("measure_voltage"))
        replies = self._query_all(commands)
        mode = self._mode_from(replies.pop(0)) if decoding is not None else "UNKNOWN"
        amps = self._reading("measure_current", replies.pop(0)) if current else None
        volts = self._reading("measure_voltage", replies.pop(0)) if voltage else None
        return mode, amps, volts

    def _mode_from(self, reply: str) -> str:
        decoding = self.profile.mode
        assert decoding is not None
        if decoding.uses_register:
            try:
                bits = parse_int(reply)
            except ScpiReplyError:
                bits = -1
            if not 0 <= bits < 2**16:
                raise NonsenseReply(decoding.query, reply, "a status register value 0..65535", resource=self.resource)
            cv = bool(bits >> decoding.cv_bit & 1)  # type: ignore[operator]
            cc = bool(bits >> decoding.cc_bit & 1)  # type: ignore[operator]
            if cv != cc:
                return "CV" if cv else "CC"
            if not cv and not self.output_on:
                return "OFF"
            return "UNKNOWN"
        word = reply.strip().strip('"').strip().upper()
        table = {decoding.cv_text: "CV", decoding.cc_text: "CC", decoding.off_text: "OFF"}
        for text, mode in table.items():
            if text is not None and word == text.strip().upper():
                return mode
        expected = " or ".join(repr(t) for t in table if t is not None)
        raise NonsenseReply(decoding.query, reply, expected, resource=self.resource)

    @property
    def can_reverse(self) -> bool:
        return self.profile.has("polarity_reversed")

    def set_reversed(self, on: bool) -> None:
        """Reverse the output polarity (a polarity relay); refused while the output is on."""
        if self.output_on:
            raise SafetyLimit("polarity change refused: switch the output off first", resource=self.resource)
        self._write(self._command("polarity_reversed" if on else "polarity_normal"))
        self.check_errors()
        self.reversed = bool(on)

    _state_operation = "output_state"
    _off_operation = "output_off"

    @property
    def protection_operations(self) -> tuple[str, ...]:
        """The instrument's own protection this profile can program (a second line of defence)."""
        return tuple(op for op in ("over_voltage_protection", "over_current_protection", "output_timer")
                     if self.profile.has(op))

    def program_protection(self, *, over_voltage_v: float | None, over_current_a: float | None,
                           timer_s: float | None) -> list[str]:
        """Program the levels the profile has operations for; returns what was set, as text.

        Sent with the output off, before the first output-on, and checked through the error
        queue: a level the instrument refused must not pass as a protection it does not have.
        """
        return self._program_levels([
            ("over_voltage_protection", "voltage_v", over_voltage_v, "V", "over-voltage"),
            ("over_current_protection", "current_a", over_current_a, "A", "over-current"),
            ("output_timer", "duration_s", timer_s, "s", "output timer"),
        ])

    def _safe_steps_off(self):
        def off() -> None:
            self._write(self._command("output_off"))
            self.output_on = False

        return [("output off", off)]

    def _safe_steps_zero(self):
        return [
            ("voltage to 0", lambda: self._write(self._command("set_voltage", voltage_v=0.0))),
            ("current limit to 0", lambda: self._write(self._command("set_current_limit", current_a=0.0))),
        ]


#: The load's own protection on its input, in the order it is programmed.
LOAD_PROTECTION_OPERATIONS = ("over_current_protection", "over_power_protection", "over_voltage_protection")


class Load(Role):
    """An electronic load in constant current (CC)."""

    role_name = "load"

    def __init__(self, transport: Transport, profile: Profile, *, check_idn: bool = True) -> None:
        self.input_on = False
        super().__init__(transport, profile, check_idn=check_idn)

    def _after_connect(self) -> None:
        if self.profile.has("set_mode_cc"):
            self._write(self._command("set_mode_cc"))

    def set_current(self, current_a: float) -> None:
        a = self._setpoint("current_a", current_a, self.profile.limits.max_current_a, "A", "[limits].max_current_a")
        self._write_setpoint(self._command("set_current", current_a=a))

    def set_input(self, on: bool) -> None:
        if on:
            self.check_new_errors()  # never switch on over a setpoint the instrument rejected
            command = self._command("input_on")
            self._write(command)
            self.input_on = True
            self.check_errors(after=command)
        else:
            self._write(self._command("input_off"))
            self.input_on = False

    def measure_voltage(self) -> float:
        return self._reading("measure_voltage")

    def measure_current(self) -> float:
        return self._reading("measure_current")

    _state_operation = "input_state"
    _off_operation = "input_off"

    @property
    def protection_operations(self) -> tuple[str, ...]:
        """The load's own input protection this profile can program (a second line of defence)."""
        return tuple(op for op in LOAD_PROTECTION_OPERATIONS if self.profile.has(op))

    def program_protection(self, *, over_current_a: float | None, over_power_w: float | None,
                           over_voltage_v: float | None) -> list[str]:
        """Program the load's input protection the profile has operations for; returns what was set, as text.

        Sent with the input off, before the first input-on, and checked through the error queue.
        """
        return self._program_levels([
            ("over_current_protection", "current_a", over_current_a, "A", "over-current"),
            ("over_power_protection", "power_w", over_power_w, "W", "over-power"),
            ("over_voltage_protection", "voltage_v", over_voltage_v, "V", "over-voltage"),
        ])

    def _safe_steps_off(self):
        def off() -> None:
            self._write(self._command("input_off"))
            self.input_on = False

        return [("input off", off)]

    def _safe_steps_zero(self):
        return [("current to 0", lambda: self._write(self._command("set_current", current_a=0.0)))]


class Meter(Role):
    """A DC multimeter: function, range and NPLC configured once, then `read()` per point."""

    role_name = "meter"

    def __init__(self, transport: Transport, profile: Profile, *, check_idn: bool = True) -> None:
        self.function: str | None = None
        self.range: float | None = None
        self.nplc: float | None = None
        self.samples = 1
        super().__init__(transport, profile, check_idn=check_idn)

    def _check_range(self, value: object, ranges: tuple[float, ...], name: str, unit: str) -> float:
        if not _ok_number(value) or not math.isfinite(float(value)):  # type: ignore[arg-type]
            raise SafetyLimit(f"{name} {value!r} refused: not a finite number", resource=self.resource, name=name, value=value)
        for r in ranges:
            if math.isclose(float(value), r, rel_tol=1e-9):  # type: ignore[arg-type]
                return r
        listed = ", ".join(f"{r:g}" for r in ranges) or "none"
        raise SafetyLimit(f"{name} {value!r} {unit} refused: not a range of {self.profile.name} (ranges: {listed})",
                          resource=self.resource, name=name, value=value)

    def _check_nplc(self, nplc: object) -> float | None:
        """The NPLC to send, or None for a meter whose profile has no NPLC command (it keeps its own)."""
        limits = self.profile.limits
        if not self.profile.sets_nplc:
            return None
        if not _ok_number(nplc) or not math.isfinite(float(nplc)):  # type: ignore[arg-type]
            raise SafetyLimit(f"nplc {nplc!r} refused: not a finite number", resource=self.resource, name="nplc", value=nplc)
        n = float(nplc)  # type: ignore[arg-type]
        if limits.nplc_choices:
            for choice in limits.nplc_choices:
                if math.isclose(n, choice, rel_tol=1e-9):
                    return choice
            listed = ", ".join(f"{c:g}" for c in limits.nplc_choices)
            raise SafetyLimit(f"nplc {n:g} refused: {self.profile.name} offers {listed}", resource=self.resource,
                              name="nplc", value=n)
        assert limits.nplc_min is not None and limits.nplc_max is not None
        if not limits.nplc_min <= n <= limits.nplc_max:
            raise SafetyLimit(f"nplc {n:g} refused: outside {limits.nplc_min:g}..{limits.nplc_max:g}",
                              resource=self.resource, name="nplc", value=n)
        return n

    def configure_voltage(self, range_v: float, nplc: float) -> None:
        r = self._check_range(range_v, self.profile.limits.voltage_ranges_v, "range_v", "V")
        n = self._check_nplc(nplc)
        command = self._command("configure_voltage", range_v=r, **({} if n is None else {"nplc": n}))
        self._write(command)
        self.check_errors(after=command)
        self.function, self.range, self.nplc = "dc_voltage", r, n
        self._reapply_samples()

    def configure_current(self, range_a: float, nplc: float) -> None:
        r = self._check_range(range_a, self.profile.limits.current_ranges_a, "range_a", "A")
        n = self._check_nplc(nplc)
        command = self._command("configure_current", range_a=r, **({} if n is None else {"nplc": n}))
        self._write(command)
        self.check_errors(after=command)
        self.function, self.range, self.nplc = "dc_current", r, n
        self._reapply_samples()

    def _reapply_samples(self) -> None:
        # Common practice: CONFigure presets trigger and sample settings on many meters, so send the count again.
        if self.samples != 1 and self.profile.has("set_samples"):
            self.set_samples(self.samples)

    def set_samples(self, count: int) -> None:
        """Readings per `read()`; a meter without a sample-count command reads one at a time."""
        limit = self.profile.limits.max_samples
        if isinstance(count, bool) or not isinstance(count, numbers.Integral) or not 1 <= int(count) <= limit:
            raise SafetyLimit(f"sample count {count!r} refused: expected a whole number 1..{limit}",
                              resource=self.resource, name="count", value=count)
        count = int(count)
        if self.profile.has("set_samples"):
            command = self._command("set_samples", count=count)
            self._write(command)
            self.check_errors(after=command)
        self.samples = count

    def read_timeout_s(self) -> float:
        """Link timeout plus the integration time of the configured readings at the longer (50 Hz) cycle."""
        # A meter that does not take our NPLC integrates at its own setting: allow for a slow one.
        nplc = self.nplc if self.nplc is not None else (1.0 if self.profile.sets_nplc else _UNKNOWN_NPLC)
        base = getattr(self.transport, "timeout_s", None) or self.profile.timeout_s
        return base + self.samples * nplc * _LONGEST_PLC_S * _READ_OVERHEAD

    def read(self) -> tuple[float | None, ...]:
        """Trigger (if the profile needs it) and read `samples` readings; None marks an overload."""
        command = self._command("read")
        if self.profile.has("trigger"):
            if self.profile.compound_queries:
                command = join_units([self._command("trigger"), command])  # one message: INIT;:FETC?
            else:
                self._write(self._command("trigger"))
        reply = self._query(command, self.read_timeout_s())
        try:
            values = parse_numbers(reply)
        except ScpiReplyError:
            raise NonsenseReply(command, reply, f"{self.samples} comma-separated numbers", resource=self.resource) from None
        if len(values) != self.samples:
            raise NonsenseReply(command, reply, f"{self.samples} readings, got {len(values)}", resource=self.resource)
        return values

    def measure_voltage(self, range_v: float | None = None) -> float | None:
        """One reading with the profile's one-shot MEASure form (not every meter has one).

        Without `range_v` the configured voltage range is used, or the top range when none is
        configured (an unknown signal is safest on the highest range).
        """
        return self._measure("measure_voltage", "range_v", range_v, self.profile.limits.voltage_ranges_v, "V",
                             "dc_voltage")

    def measure_current(self, range_a: float | None = None) -> float | None:
        """One current reading with the profile's one-shot MEASure form."""
        return self._measure("measure_current", "range_a", range_a, self.profile.limits.current_ranges_a, "A",
                             "dc_current")

    def _measure(self, operation: str, key: str, value: float | None, ranges: tuple[float, ...], unit: str,
                 function: str) -> float | None:
        values = {}
        if "{" + key + "}" in self._template(operation):
            if value is None:
                value = self.range if self.function == function and self.range is not None else ranges[-1]
            values[key] = self._check_range(value, ranges, key, unit)
        return self._number(self._command(operation, **values), self.read_timeout_s())

    @property
    def can_measure_temperature(self) -> bool:
        return self.profile.has("measure_temperature")

    def configure_temperature(self) -> None:
        """Select the temperature function, when the profile needs a command for it."""
        if self.profile.has("configure_temperature"):
            command = self._command("configure_temperature")
            self._write(command)
            self.check_errors(after=command)
        self.function, self.range = "temperature", None

    def measure_temperature(self) -> float | None:
        """One temperature reading in °C from the probe on this meter's temperature input (None: overload)."""
        command = self._command("measure_temperature")
        value = self._number(command, self.read_timeout_s())
        if value is not None and not -273.15 <= value <= 3000.0:
            raise NonsenseReply(command, repr(value), "a temperature in °C between -273.15 and 3000",
                                resource=self.resource)
        return value

    def accuracy(self, function: str, range_: float) -> Accuracy:
        return self.profile.accuracy_for(function, range_)

    def range_for(self, function: str, magnitude: float) -> float:
        """The smallest range that holds |magnitude| (the top range if none does)."""
        ranges = self.profile.limits.voltage_ranges_v if function == "dc_voltage" else self.profile.limits.current_ranges_a
        for r in ranges:
            if abs(magnitude) <= r:
                return r
        return ranges[-1]


ROLE_CLASSES: dict[str, type[Role]] = {"supply": Supply, "load": Load, "meter": Meter}
