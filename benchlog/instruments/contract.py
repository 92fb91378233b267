"""The bench contract: what the sweep may ask of a supply, a load and a meter, as `typing.Protocol`s.

The real roles (`roles.Supply`, `roles.Load`, `roles.Meter`) satisfy these
structurally, and so must every stand-in a test passes to the sweep; one contract
suite (`tests/instruments/test_contract.py`) runs the same checks over all of them.
Only what a caller above this layer uses is listed here: the error-queue plumbing,
the phased safe state the guard prefers and the profile's template filling stay
details of the real roles.

Units are in the argument names (`voltage_v`, `current_a`, `range_v`); every
setpoint above the profile's limits, negative or not finite is refused with
`SafetyLimit` before anything is sent, and `safe_state()` leaves the output or
input off.
"""

from __future__ import annotations

from typing import Protocol, runtime_checkable

from benchlog.scpi.replies import Idn

from .profile import Profile

__all__ = ["BenchRole", "Idn", "LoadRole", "MeterRole", "SUPPLY_MODES", "SupplyRole", "TemperatureProbeRole"]

#: What `SupplyRole.mode()` may answer (CV/CC as read back; OFF; UNKNOWN when the profile cannot tell).
SUPPLY_MODES = ("CV", "CC", "OFF", "UNKNOWN")


@runtime_checkable
class BenchRole(Protocol):
    """What every role offers: who it is, its profile, its error queue, sync, safe state, close."""

    resource: str
    profile: Profile
    idn: Idn

    def check_errors(self, after: str | None = None) -> None:
        """Raise `InstrumentError` for the first entry of the instrument's error queue, naming `after`."""
        ...

    def sync(self) -> None:
        """Return once the instrument has applied every command sent so far."""
        ...

    def check_new_errors(self, after: str | None = None) -> None:
        """`check_errors` when something was sent since the queue was last read empty (else no news)."""
        ...

    def safe_state(self) -> None:
        """Output or input off, setpoints to zero; raises `SafeStateFailed` if a step failed."""
        ...

    def close(self) -> None:
        ...


@runtime_checkable
class SupplyRole(BenchRole, Protocol):
    """A programmable DC supply: voltage, current limit, output, read-back, CV/CC mode, polarity."""

    output_on: bool
    reversed: bool

    @property
    def can_report_mode(self) -> bool: ...

    @property
    def can_detect_trip(self) -> bool: ...

    @property
    def can_reverse(self) -> bool: ...

    def set_voltage(self, voltage_v: float) -> None: ...

    def set_current_limit(self, current_a: float) -> None: ...

    def set_output(self, on: bool) -> None: ...

    def measure_voltage(self) -> float: ...

    def measure_current(self) -> float: ...

    def mode(self) -> str:
        """One of `SUPPLY_MODES`."""
        ...

    def read_back(self, *, current: bool = False, voltage: bool = False) -> tuple[str, float | None, float | None]:
        """(mode, current or None, voltage or None): the mode always, the read-backs asked for, in one
        message where the profile allows."""
        ...

    def tripped(self) -> bool:
        """True when the supply's protection switched the output off (False if it cannot tell)."""
        ...

    def set_reversed(self, on: bool) -> None:
        """Reverse the output polarity; refused with `SafetyLimit` while the output is on."""
        ...


@runtime_checkable
class LoadRole(BenchRole, Protocol):
    """An electronic load in constant current (CC)."""

    input_on: bool

    def set_current(self, current_a: float) -> None: ...

    def set_input(self, on: bool) -> None: ...

    def measure_voltage(self) -> float: ...

    def measure_current(self) -> float: ...


@runtime_checkable
class MeterRole(BenchRole, Protocol):
    """A DC multimeter: function, range and NPLC configured once, then `read()` per point."""

    nplc: float | None
    samples: int

    def configure_voltage(self, range_v: float, nplc: float) -> None: ...

    def configure_current(self, range_a: float, nplc: float) -> None: ...

    def set_samples(self, count: int) -> None: ...

    def read(self) -> tuple[float | None, ...]:
        """`samples` readings of the configured function; None marks an overload."""
        ...


@runtime_checkable
class TemperatureProbeRole(BenchRole, Protocol):
    """A meter whose temperature input has a probe on the element (the bench's [sensor])."""

    def configure_temperature(self) -> None:
        """Select the temperature function (a profile without the command keeps its own)."""
        ...

    def measure_temperature(self) -> float | None:
        """One reading in °C; None marks an overload; nonsense is `NonsenseReply`."""
        ...
