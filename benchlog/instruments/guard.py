"""The one place that leaves the bench safe: every output and input off on any way out, and read back.

    with safe_state_guard(supply, load, meter) as guard:
        ...  # switch power on, sweep
    guard.outcome.state   # "verified" | "unverified" | "unknown"

On normal exit, an exception, Ctrl-C (KeyboardInterrupt) and SIGTERM the guard
first drains each power role's error queue (an error an earlier command caused
is reported as such, never blamed on the safe state; a reply still owed to an
interrupted query is read first, so the off command does not provoke -410),
then switches every output/input off, sets every setpoint to zero, reads the
error queues again, and finally reads each output/input state back with the
profile's state query. Each role and each step is tried independently: one
instrument that fails never stops the others, and a lost link is reopened (a
few tries, a fresh connection) to switch off and then to read back.

The result is one `SafeStateReport` with one statement: outputs verified off,
or `OUTPUTS MAY BE ON` naming each role and resource that did not confirm.
"unknown" means the off command was sent without error but the profile has no
state query to read it back. Roles added with `add()` (right after each
connects) are switched off and read back at once; an output found on then is
told at once to `on_notice` (one line naming role and resource, before the off
command goes out) and noted with what the read-back said. While the guard cleans up, a second Ctrl-C or SIGTERM is held back
until the bench is safe.

SIGTERM: while the guard is active in the main thread, a handler turns SIGTERM
into `Terminated` (a SystemExit with code 143 = 128 + 15, the shell convention),
so the block unwinds through the guard like Ctrl-C does; the previous handler is
restored on exit. In other threads no handler is installed (Python allows signal
handlers only in the main thread); the main thread must then own a guard too.
"""

from __future__ import annotations

import signal
import sys
import threading
from dataclasses import dataclass
from typing import Any, Callable

from .errors import SafeStateFailed

Failure = tuple[str, str, BaseException]

SAFE_STATES = ("verified", "unverified", "unknown")


@dataclass(frozen=True)
class RoleSafety:
    """One power role after the safe state: what its own state query said."""

    label: str  # "supply TCPIP0::...::SOCKET"
    state: str  # "verified" | "unverified" | "unknown"
    why: str = ""  # why it is not verified


@dataclass(frozen=True)
class SafeStateReport:
    """Every power role's read-back state, the step failures and the errors earlier commands left."""

    roles: tuple[RoleSafety, ...] = ()
    failures: tuple[Failure, ...] = ()
    earlier_errors: tuple[str, ...] = ()

    @property
    def state(self) -> str:
        """'verified' only when every power role read back off; 'unverified' when any did not."""
        states = [r.state for r in self.roles]
        if "unverified" in states:
            return "unverified"
        if states and all(s == "verified" for s in states):
            return "verified"
        return "unknown"

    @property
    def verified(self) -> bool:
        return self.state == "verified"

    def statement(self) -> str:
        """The one sentence about the outputs: verified off, or OUTPUTS MAY BE ON naming what did not confirm."""
        if not self.roles:
            return "no instrument with an output or input was connected"
        if self.verified:
            return "outputs verified off (read back): " + ", ".join(r.label for r in self.roles)
        open_ = [r for r in self.roles if r.state != "verified"]
        parts = [f"{r.label} did not confirm off ({r.why})" if r.state == "unverified"
                 else f"{r.label} was sent off but not read back ({r.why})" for r in open_]
        which = "it" if len(open_) == 1 else "them"
        return "OUTPUTS MAY BE ON: " + "; ".join(parts) + f" -- switch {which} off by hand now"


class Terminated(SystemExit):
    """SIGTERM arrived while a guard was active; unwinds the block, then exits with 143."""

    def __init__(self) -> None:
        super().__init__(128 + signal.SIGTERM)


def _report_to_stderr(text: str) -> None:
    sys.stderr.write(f"benchlog: {text}\n")
    sys.stderr.flush()


def _steps(role: Any) -> tuple[Callable[[], list[Failure]], ...]:
    """Phased safe-state steps of a role; an object with only `safe_state()` gets one step."""
    if all(hasattr(role, name) for name in ("safe_off", "safe_zero", "safe_confirm")):
        return (role.safe_off, role.safe_zero, role.safe_confirm)

    def whole() -> list[Failure]:
        try:
            role.safe_state()
        except SafeStateFailed as exc:
            return list(exc.failures)
        except Exception as exc:
            return [(repr(role), "safe state", exc)]
        return []

    return (whole, lambda: [], lambda: [])


def _call(role: Any, name: str, default: Any) -> Any:
    method = getattr(role, name, None)
    if method is None:
        return default
    try:
        return method()
    except Exception as exc:  # noqa: BLE001 -- a role whose own step broke must not stop the others
        return exc


def reach_safe_state(*roles: Any) -> SafeStateReport:
    """Errors drained, all roles off, all setpoints to zero, error queues read, states read back."""
    present = [r for r in roles if r is not None]
    earlier: list[str] = []
    for role in present:
        found = _call(role, "safe_prepare", ())
        if isinstance(found, tuple):
            earlier.extend(found)
    phased = [_steps(r) for r in present]
    failures: list[Failure] = []
    for phase in range(3):
        for role, steps in zip(present, phased):
            try:
                failures.extend(steps[phase]())
            except Exception as exc:  # a role whose own collector broke still must not stop the others
                failures.append((_label(role), f"phase {phase + 1}", exc))
    results: list[RoleSafety] = []
    for role in present:
        if not getattr(role, "has_power", True):
            continue
        label = _label(role)
        verdict = _call(role, "safe_verify", None)
        if isinstance(verdict, tuple):
            state, why = verdict
        elif isinstance(verdict, BaseException):
            state, why = "unverified", f"state query failed: {verdict}"
        else:
            state, why = "unknown", "it cannot read its state back"
        if state == "unknown":
            own = [f"{step} failed ({err})" for who, step, err in failures if who == label]
            if own:  # the off command itself failed and nothing can read the state: not confirmed
                state, why = "unverified", "; ".join(own)
        results.append(RoleSafety(label, state, why))
    return SafeStateReport(tuple(results), tuple(failures), tuple(earlier))


def _label(role: Any) -> str:
    return getattr(role, "label", None) or repr(role)


def _power_word(role: Any) -> str:
    """'input' for a load (it sinks power through its input), 'output' for a supply."""
    return "input" if getattr(role, "role_name", "") == "load" else "output"


def _report_unless_verified(report: SafeStateReport) -> None:
    if report.roles and not report.verified:
        _report_to_stderr(report.statement())


class safe_state_guard:  # noqa: N801 - used like a function: `with safe_state_guard(...)`
    """Context manager that leaves every given role in its safe state and reads it back; `None` roles are skipped.

    `report` receives the `SafeStateReport` on every exit (the default prints the
    statement to stderr unless the outputs were verified off). Leaving a block
    without an exception but with an output not confirmed off raises SafeStateFailed
    (unless `raise_unverified` is False: then `report` alone tells it).
    """

    def __init__(self, *roles: Any, report: Callable[[SafeStateReport], None] | None = _report_unless_verified,
                 raise_unverified: bool = True, on_notice: Callable[[str], None] | None = _report_to_stderr) -> None:
        self.roles = tuple(r for r in roles if r is not None)
        self.report = report
        self.on_notice = on_notice
        self.raise_unverified = raise_unverified
        self.outcome: SafeStateReport | None = None
        self.connect_notes: list[str] = []
        self._previous_term: Any = None
        self._installed = False
        self._cleaning = False
        self._held: list[int] = []

    @property
    def failures(self) -> list[Failure]:
        return list(self.outcome.failures) if self.outcome is not None else []

    def add(self, role: Any) -> None:
        """Take a role just connected into the guard: switch it off now and read it back.

        An output found on is told to `on_notice` at once (before it is switched off) and
        noted in `connect_notes` with what the read-back said; one that does not read back
        off raises SafeStateFailed at once (the block then unwinds through this guard).
        """
        if role is None:
            return
        self.roles = self.roles + (role,)
        if not getattr(role, "has_power", False):
            return
        was_on = None
        if getattr(role, "can_read_state", False):
            try:
                was_on = role.power_is_on()
            except Exception:  # noqa: BLE001 -- the off command and its read-back still follow
                was_on = None
        if was_on and self.on_notice is not None:
            self.on_notice(f"{_label(role)}: {_power_word(role)} found ON at connect; "
                           "switching it off and reading it back")
        report = reach_safe_state(role)
        entry = report.roles[0] if report.roles else RoleSafety(_label(role), "unknown", "")
        if was_on:
            found = "switched off (read back)" if entry.state == "verified" else "NOT confirmed off"
            self.connect_notes.append(f"{entry.label}: {_power_word(role)} was ON when benchlog connected; {found}")
        for text in report.earlier_errors:
            self.connect_notes.append(text)
        if entry.state == "unverified":
            raise SafeStateFailed(report)

    # -- signals ------------------------------------------------------------------------
    def _on_signal(self, signum: int, frame: Any) -> None:
        if self._cleaning:
            self._held.append(signum)  # the bench is being made safe; act on it afterwards
            return
        if signum == signal.SIGTERM:
            raise Terminated()
        raise KeyboardInterrupt

    def _in_main_thread(self) -> bool:
        return threading.current_thread() is threading.main_thread()

    def __enter__(self) -> "safe_state_guard":
        if self._in_main_thread():
            try:
                self._previous_term = signal.signal(signal.SIGTERM, self._on_signal)
                self._installed = True
            except ValueError:  # not the main interpreter
                self._installed = False
        return self

    def __exit__(self, exc_type: Any, exc: BaseException | None, tb: Any) -> bool:
        previous_int: Any = None
        shielded = False
        if self._installed:
            self._cleaning = True
            try:
                previous_int = signal.signal(signal.SIGINT, self._on_signal)
                shielded = True
            except ValueError:
                shielded = False
        try:
            self.outcome = reach_safe_state(*self.roles)
        finally:
            if shielded:
                signal.signal(signal.SIGINT, previous_int)
            if self._installed:
                signal.signal(signal.SIGTERM, self._previous_term if self._previous_term is not None else signal.SIG_DFL)
                self._installed = False
            self._cleaning = False

        outcome = self.outcome
        if self.report is not None:
            self.report(outcome)
        if outcome.state == "unverified":
            if exc is None:
                if self.raise_unverified:
                    raise SafeStateFailed(outcome)
            else:
                exc.add_note(outcome.statement())
        elif exc is not None and outcome.roles:
            exc.add_note(outcome.statement())
        if exc is None and self._held:
            raise Terminated() if signal.SIGTERM in self._held else KeyboardInterrupt
        return False
