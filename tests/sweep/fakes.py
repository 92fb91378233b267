"""Small fake roles and an injected clock for pure tests of the runner's settle, limit and cancel logic.

These stand in for instruments only in unit tests of timing and decision logic
(dependency injection); every integration test talks to the simulated bench
through real pyvisa-py instead. They keep the bench contract
(`benchlog.instruments.contract`): `tests/instruments/test_contract.py` runs the
same checks over them as over the real roles.
"""

from __future__ import annotations

import dataclasses
import math

from benchlog.instruments.errors import ConnectionLost, SafetyLimit
from benchlog.instruments.profile import Limits, Profile, load_profile
from benchlog.scpi.replies import Idn
from benchlog.sweep.bench_file import BenchSetup, RoleSpec, Wiring
from benchlog.sweep.rig import Rig


class FakeClock:
    def __init__(self) -> None:
        self.now = 1000.0

    def __call__(self) -> float:
        return self.now

    def sleep(self, seconds: float) -> None:
        self.now += seconds


def fake_profile(role: str, **limits) -> Profile:
    """The sim profile of `role` renamed, with the fakes' limits and no accuracy entries (a real `Profile`)."""
    base = dict(max_voltage_v=30.0, max_current_a=5.0, voltage_ranges_v=(0.1, 1.0, 10.0),
                current_ranges_a=(1.0, 3.0), nplc_choices=(), nplc_min=0.01, nplc_max=100.0, max_samples=10)
    base.update(limits)
    sim = load_profile(f"sim-{role}")
    return dataclasses.replace(sim, name=f"fake-{role}", sha256="0" * 64, accuracy=(), limits=Limits(**base))


def _setpoint(role: "_Role", name: str, value: float, limit: float | None) -> float:
    """The profile's limits, kept as the bench contract says: refused before anything changes."""
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) or value < 0:
        raise SafetyLimit(f"{name} {value!r} refused", resource=role.resource, name=name, value=value)
    if limit is not None and value > limit:
        raise SafetyLimit(f"{name} {value:g} refused: above {limit:g}", resource=role.resource, name=name, value=value)
    return float(value)


class Element:
    """V = v0 + r·I, or a diode law; `rise_c_per_w` heats it a little (only for realism, not used in asserts)."""

    def __init__(self, r_ohm=0.05, v0_v=0.0, diode=False):
        self.r_ohm, self.v0_v, self.diode = r_ohm, v0_v, diode

    def drop(self, current_a: float) -> float:
        if current_a <= 0:
            return 0.0
        if self.diode:
            return 2 * 0.02585 * math.log(current_a / 1e-9 + 1) + 0.05 * current_a
        return self.v0_v + self.r_ohm * current_a


class Bench:
    """Shared state of the fake instruments: who is on, what current flows, the settling transient."""

    def __init__(self, clock: FakeClock, element: Element, *, tau_s=0.0, force="supply", read_s=0.02):
        self.clock, self.element, self.tau_s, self.force, self.read_s = clock, element, tau_s, force, read_s
        self.changed_at = clock.now
        self.log: list[str] = []

    def current(self) -> float:
        s = self.supply
        if not s.output_on:
            return 0.0
        if self.force == "supply":
            wanted = s.limit_a
            return wanted if self.element.drop(wanted) <= s.voltage_v else self._max_at(s.voltage_v)
        return self.load.current_a if self.load.input_on else 0.0

    def _max_at(self, volts):
        lo, hi = 0.0, 100.0
        for _ in range(60):
            mid = (lo + hi) / 2
            lo, hi = (mid, hi) if self.element.drop(mid) <= volts else (lo, mid)
        return lo

    def touch(self, what):
        self.changed_at = self.clock.now
        self.log.append(what)


class _Role:
    def __init__(self, bench, name, profile: Profile | None = None):
        self.bench, self.resource = bench, f"FAKE::{name}"
        self.idn = Idn("FAKE", name.upper(), "0", "1")
        self.profile = profile if profile is not None else fake_profile(name)
        self.safe_calls = 0
        self.fail_after: int | None = None  # raise ConnectionLost after this many calls
        self.calls = 0
        self.closed = False

    def _tick(self):
        self.calls += 1
        if self.fail_after is not None and self.calls > self.fail_after:
            raise ConnectionLost("connection reset by peer", resource=self.resource)

    def check_errors(self, after: str | None = None) -> None:
        pass

    def check_new_errors(self, after: str | None = None) -> None:
        self.check_errors(after)

    def sync(self) -> None:
        self.bench.log.append(f"sync {self.resource}")

    def close(self) -> None:
        self.closed = True


class FakeSupply(_Role):
    def __init__(self, bench, *, readback_gain=1.0, can_reverse=True, reverse_leak_a=1e-6, profile=None):
        super().__init__(bench, "supply", profile)
        self.output_on, self.voltage_v, self.limit_a, self.reversed = False, 0.0, 0.0, False
        self.readback_gain, self.can_reverse, self.reverse_leak_a = readback_gain, can_reverse, reverse_leak_a
        self.can_report_mode = True  # mode() always answers CV, CC or OFF
        self.can_detect_trip = True
        self.trip = False

    def set_voltage(self, voltage_v: float) -> None:
        self._tick()
        self.voltage_v = _setpoint(self, "voltage_v", voltage_v, self.profile.limits.max_voltage_v)
        self.bench.touch(f"V={voltage_v}")

    def set_current_limit(self, current_a: float) -> None:
        self._tick()
        self.limit_a = _setpoint(self, "current_a", current_a, self.profile.limits.max_current_a)
        self.bench.touch(f"I={current_a}")

    def set_output(self, on: bool) -> None:
        self._tick()
        self.output_on = bool(on)
        self.bench.touch(f"out={on}")

    def set_reversed(self, on: bool) -> None:
        if self.output_on:
            raise SafetyLimit("polarity change refused: switch the output off first", resource=self.resource)
        self.reversed = bool(on)

    def measure_current(self) -> float:
        self._tick()
        if self.reversed:
            return self.reverse_leak_a if self.output_on else 0.0
        return self.bench.current() * self.readback_gain

    def measure_voltage(self) -> float:
        self._tick()
        return self.voltage_v if self.output_on else 0.0

    def mode(self) -> str:
        self._tick()
        if self.trip:
            self.output_on = False
        if not self.output_on:
            return "OFF"
        if self.reversed:  # only leakage flows: CV unless the leak reaches the current limit
            return "CC" if self.reverse_leak_a >= self.limit_a else "CV"
        if self.bench.force == "supply":
            return "CC" if self.bench.element.drop(self.limit_a) <= self.voltage_v else "CV"
        return "CV"

    def read_back(self, *, current: bool = False, voltage: bool = False) -> tuple[str, float | None, float | None]:
        # the real role's order: mode, then the read-backs asked for
        mode = self.mode()
        return mode, (self.measure_current() if current else None), (self.measure_voltage() if voltage else None)

    def tripped(self) -> bool:
        return self.trip

    def safe_state(self) -> None:
        self.safe_calls += 1
        self.output_on = False
        self.voltage_v = self.limit_a = 0.0


class FakeLoad(_Role):
    def __init__(self, bench, *, profile=None):
        super().__init__(bench, "load", profile)
        self.input_on, self.current_a = False, 0.0

    def set_current(self, current_a: float) -> None:
        self._tick()
        self.current_a = _setpoint(self, "current_a", current_a, self.profile.limits.max_current_a)
        self.bench.touch(f"load={current_a}")

    def set_input(self, on: bool) -> None:
        self._tick()
        self.input_on = bool(on)
        self.bench.touch(f"in={on}")

    def measure_current(self) -> float:
        return self.bench.current()

    def measure_voltage(self) -> float:
        s = self.bench.supply
        return s.voltage_v if s.output_on and self.input_on else 0.0

    def safe_state(self) -> None:
        self.safe_calls += 1
        self.input_on = False
        self.current_a = 0.0


class FakeMeter(_Role):
    """Reads the element drop; after a change it relaxes with time constant tau_s (exponential)."""

    def __init__(self, bench, samples_overload_above=None, *, profile=None):
        super().__init__(bench, "meter", profile)
        self.reads = 0
        self.samples = 1
        self.nplc: float | None = None
        self.overload_above = samples_overload_above

    def _range(self, value: float, ranges: tuple[float, ...], name: str) -> float:
        if value not in ranges:
            raise SafetyLimit(f"{name} {value!r} refused: not a range of {self.profile.name}",
                              resource=self.resource, name=name, value=value)
        return value

    def _nplc(self, nplc: float) -> float:
        lim = self.profile.limits
        if not (lim.nplc_min or 0.0) <= nplc <= (lim.nplc_max or math.inf):
            raise SafetyLimit(f"nplc {nplc:g} refused", resource=self.resource, name="nplc", value=nplc)
        return nplc

    def configure_voltage(self, range_v: float, nplc: float) -> None:
        self.range_v = self._range(range_v, self.profile.limits.voltage_ranges_v, "range_v")
        self.nplc = self._nplc(nplc)

    def configure_current(self, range_a: float, nplc: float) -> None:
        self.range_a = self._range(range_a, self.profile.limits.current_ranges_a, "range_a")
        self.nplc = self._nplc(nplc)

    def set_samples(self, count: int) -> None:
        if isinstance(count, bool) or not isinstance(count, int) or not 1 <= count <= self.profile.limits.max_samples:
            raise SafetyLimit(f"sample count {count!r} refused", resource=self.resource, name="count", value=count)
        self.samples = count

    def read(self) -> tuple[float | None, ...]:
        self._tick()
        b = self.bench
        b.clock.now += b.read_s
        self.reads += 1
        final = b.element.drop(b.current())
        if b.tau_s > 0:
            final += 0.01 * math.exp(-(b.clock.now - b.changed_at) / b.tau_s)
        if self.overload_above is not None and final > self.overload_above:
            return (None,) * self.samples
        return (final,) * self.samples

    def safe_state(self) -> None:
        self.safe_calls += 1


def fake_rig(clock, *, element=None, force="supply", tau_s=0.0, **supply_kw):
    bench = Bench(clock, element or Element(), tau_s=tau_s, force=force)
    bench.supply = FakeSupply(bench, **supply_kw)
    bench.load = FakeLoad(bench)
    meter = FakeMeter(bench)
    wiring = Wiring(force=force, current_from="supply", input_v=12.0 if force == "load" else None)
    roles = {n: RoleSpec(n, f"FAKE::{n}", f"fake-{n}") for n in ("supply", "load", "meter")}
    setup = BenchSetup(roles=roles, wiring=wiring, source="fake-bench.toml")
    rig = Rig(setup, meter=meter, supply=bench.supply, load=bench.load)
    return rig, bench


class ListWriter:
    def __init__(self):
        self.events = []

    def write(self, event):
        self.events.append(event)
