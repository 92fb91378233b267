"""The one place that leaves the bench safe: every output and input off on any way out of a block.

    with safe_state_guard(supply, load, meter):
        ...  # switch power on, sweep

On normal exit, an exception, Ctrl-C (KeyboardInterrupt) and SIGTERM the guard
switches every role's output/input off first, then sets every setpoint to zero,
then reads each error queue. Each role and each step is tried independently: one
instrument that fails (a dropped link, a timeout) never stops the others, and a
lost link is reopened once to reach the off state. While the guard cleans up, a
second Ctrl-C or SIGTERM is held back until the bench is safe.

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
from typing import Any, Callable

from .errors import SafeStateFailed

Failure = tuple[str, str, BaseException]


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


def reach_safe_state(*roles: Any) -> list[Failure]:
    """All roles off, then all setpoints to zero, then all error queues; returns every failure."""
    present = [r for r in roles if r is not None]
    phased = [_steps(r) for r in present]
    failures: list[Failure] = []
    for phase in range(3):
        for role, steps in zip(present, phased):
            try:
                failures.extend(steps[phase]())
            except Exception as exc:  # a role whose own collector broke still must not stop the others
                failures.append((getattr(role, "label", repr(role)), f"phase {phase + 1}", exc))
    return failures


class safe_state_guard:  # noqa: N801 - used like a function: `with safe_state_guard(...)`
    """Context manager that leaves every given role in its safe state; `None` roles are skipped."""

    def __init__(self, *roles: Any, report: Callable[[str], None] = _report_to_stderr) -> None:
        self.roles = roles
        self.report = report
        self.failures: list[Failure] = []
        self._previous_term: Any = None
        self._installed = False
        self._cleaning = False
        self._held: list[int] = []

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
            self.failures = reach_safe_state(*self.roles)
        finally:
            if shielded:
                signal.signal(signal.SIGINT, previous_int)
            if self._installed:
                signal.signal(signal.SIGTERM, self._previous_term if self._previous_term is not None else signal.SIG_DFL)
                self._installed = False
            self._cleaning = False

        if self.failures:
            error = SafeStateFailed(self.failures)
            self.report(str(error))
            if exc is None:
                raise error
            exc.add_note(str(error))
        else:
            done = ", ".join(getattr(r, "label", type(r).__name__) for r in self.roles if r is not None)
            if exc is not None and done:
                exc.add_note(f"safe state reached: {done}")
        if exc is None and self._held:
            raise Terminated() if signal.SIGTERM in self._held else KeyboardInterrupt
        return False
