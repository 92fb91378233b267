"""The sweep runner: step the current, let the drop settle, record it, and stop safely on any limit, fault or cancel.

Events (`benchlog.runs.events`) go out in time order: RunStarted (the header),
Offset, Point..., Note, ReverseResult, RunFinished. Each is handed to the
`RunWriter` first (it returns at once; its thread makes the record durable),
then to the consumer. The outputs are off and read back before the final Note and
RunFinished are emitted, whatever ended the run; RunFinished carries what the
instruments said (`safe_state`). Before the first output-on the instruments' own
protection is programmed from the plan's limits where the profiles can.

Per point the runner makes only the exchanges the plan needs: one setpoint
write and a sync with that instrument (its profile's `*OPC?`, so the dwell and the
settle reads start from the new setpoint, not the old one), the settle reads, one
current read-back, the supply mode (the only way to see compliance) and, if
`[record].supply_v`, the supply voltage. Error queues are drained at checkpoints
(after configuration, every `CHECKPOINT_S`, at the end).
"""

from __future__ import annotations

import dataclasses
import math
import socket
import threading
import time
from datetime import datetime, timezone
from typing import Any, Callable, Iterator

from benchlog import __version__
from benchlog.instruments.contract import Idn
from benchlog.kinds import kind as element_kind
from benchlog.runs.events import (
    COOL_STARTED,
    FLAG_COMPLIANCE,
    FLAG_COOL,
    FLAG_SOAK,
    FLAG_UNSETTLED,
    SOAK_STARTED,
    Event,
    Note,
    Offset,
    Point,
    ReverseResult,
    RunFinished,
    RunStarted,
)
from benchlog.runs.record import (
    BenchRecord,
    ElementRecord,
    InstrumentRecord,
    MeterSettings,
    PlanRecord,
    RunHeader,
    TemperatureRecord,
    freeze,
    new_run_id,
)

from .plan import Plan
from .protection import program_protection
from .rig import Rig, drop_range_v, measurement_accuracy, reverse_limit_a
from .settle import Interrupted, Overload, Settled, mean_of, settle
from .steps import FixedSteps, Step, StepSource, schedule
from benchlog.runs.series import SERIES_STARTED, series_flag

#: The reverse step counts only if the supply really held this fraction of its voltage.
REVERSE_APPLIED_FRACTION = 0.9
#: Drain the instruments' error queues at least this often during a long sweep.
CHECKPOINT_S = 5.0
#: A read-back current may exceed max_current_a by this fraction before it counts as a
#: limit hit: the read-back's own accuracy (a few 0.1 % plus counts) must not stop a
#: sweep whose setpoints are all within the limit.
CURRENT_READBACK_MARGIN = 0.02
#: In the load wiring a current read below this fraction of the setpoint makes the runner ask the
#: load whether its own protection switched its input off.
LOAD_TRIP_FRACTION = 0.5


def step_source(plan: Plan) -> StepSource:
    """The step source a plan asks for (adaptive and inspection stepping live above the fixed schedules, so they are chosen here)."""
    if plan.inspection is not None:
        from .sequential import SequentialSteps  # imports the fits only when they are used

        return SequentialSteps(plan)
    if plan.steps.mode == "adaptive":
        from .adaptive import AdaptiveSteps  # imports the fits only when they are used

        return AdaptiveSteps(plan)
    return FixedSteps(schedule(plan.steps))


class _Stop(Exception):
    """Ends the measurement loop with an outcome and the note that explains it."""

    def __init__(self, outcome: str, kind: str, message: str) -> None:
        super().__init__(message)
        self.outcome = outcome
        self.kind = kind
        self.message = message


def idn_text(idn: Idn) -> str:
    """`*IDN?` as the instrument sent it (the four fields joined back with commas)."""
    return ",".join((idn.manufacturer, idn.model, idn.serial, idn.firmware))


def _default_guard():
    from benchlog.instruments.guard import safe_state_guard

    return safe_state_guard


class SweepRunner:
    """One sweep of one plan on one rig.

    `before_power_on()` is called once, just before the first output is switched
    on (the CLI prints its caution there); returning False cancels the run with
    the outputs never on. `warnings` are recorded as notes after the header.
    """

    def __init__(
        self,
        plan: Plan,
        roles: Rig,
        *,
        clock: Callable[[], float] = time.monotonic,
        sleep: Callable[[float], None] = time.sleep,
        writer: Any = None,
        before_power_on: Callable[[], bool | None] | None = None,
        warnings: tuple[str, ...] | list[str] = (),
        guard: Callable[..., Any] | None = None,
        steps: StepSource | None = None,
    ) -> None:
        self.plan = plan
        self.rig = roles
        self.writer = writer
        self._clock = clock
        self._sleep = sleep
        self._before_power_on = before_power_on
        self._warnings = tuple(warnings)
        self._guard = guard
        self._cancel = threading.Event()
        self.steps = steps if steps is not None else step_source(plan)
        self.points: list[Point] = []
        self.outcome: str | None = None
        self.fault: BaseException | None = None
        self.message = ""
        self.power_applied = False
        #: "verified" | "unverified" | "unknown": what the instruments said about their outputs at the end
        self.safe_state = "unknown"
        self.safe_report: Any = None  # the guard's SafeStateReport, when it gives one
        self.run_file = None  # set by whoever records the run (session.run_sweep)
        self._header: RunHeader | None = None
        self._t0 = 0.0
        self._last_checkpoint = 0.0

    # -- public --------------------------------------------------------------
    @property
    def planned(self) -> int:
        """Points to expect (an upper bound for adaptive stepping): the steps of each series, and the heat-soak's readings."""
        series = len(self.plan.input.voltages_v) if self.plan.input is not None else 1
        soak = self.plan.soak
        extra = 0 if soak is None else int((soak.duration_s + soak.cool_s) / soak.interval_s + 1e-9)
        return self.steps.planned * series + extra

    def cancel(self) -> None:
        """Ask the sweep to stop; safe from any thread. The safe state follows within one step."""
        self._cancel.set()

    @property
    def cancelled(self) -> bool:
        return self._cancel.is_set()

    @property
    def header(self) -> RunHeader:
        if self._header is None:
            self._header = self._build_header()
        return self._header

    @header.setter
    def header(self, header: RunHeader) -> None:
        """Replace the header before the run starts (a recording with fixed times and ids)."""
        if self._t0:
            raise RuntimeError("the header is written when the run starts; it cannot change after")
        self._header = header

    def run(self, on_event: Callable[[Event], None] | None = None) -> str:
        """Run to the end, handing each event to `on_event`; returns the outcome.

        Ctrl-C inside `on_event` is passed into the sweep, which records the
        cancel with the outputs off and then lets the KeyboardInterrupt go on.
        """
        gen = self.events()
        pending: BaseException | None = None
        try:
            while True:
                try:
                    event = gen.throw(pending) if pending is not None else next(gen)
                except StopIteration:
                    break
                pending = None
                if on_event is not None:
                    try:
                        on_event(event)
                    except KeyboardInterrupt as exc:
                        pending = exc
        finally:
            # Any other failure of `on_event` (a closed pipe, a UI error) must not leave the
            # sweep suspended inside the safe-state guard: closing it switches off now.
            gen.close()
        return self.outcome or "fault"

    def events(self) -> Iterator[Event]:
        """The sweep as an event stream; closing the iterator early cancels the sweep safely."""
        guard = self._guard or _default_guard()
        self._t0 = self._clock()
        self._last_checkpoint = self._t0
        yield self._emit(RunStarted(self.header))
        use_accuracy = getattr(self.steps, "use_accuracy", None)
        if use_accuracy is not None:  # adaptive stepping budgets its fits with the readings' accuracy
            use_accuracy(self.header.accuracy)
        for text in self._warnings:
            yield self._emit(Note(self._t(), "warning", text))
        stop: _Stop
        reraise: BaseException | None = None
        guarding = guard(*self.rig.roles())
        try:
            with guarding:
                yield from self._measure()
                stop = _Stop("complete", "", "")
        except _Stop as exc:
            stop = exc
        except GeneratorExit:
            self._take_safe_state(guarding)
            self._finish_unyielded("cancel", "cancelled: the event stream was closed")
            raise
        except (KeyboardInterrupt, SystemExit) as exc:
            stop = _Stop("cancelled", "cancel", "cancelled by interrupt")
            reraise = exc
        except Exception as exc:  # noqa: BLE001 -- every failure must end with outputs off and a record
            stop = self._classify(exc)
            self.fault = exc
            if not self._is_bench_error(exc) and not isinstance(exc, _safety_limit_type()):
                reraise = exc
        report = self._take_safe_state(guarding)
        for text in getattr(report, "earlier_errors", ()):
            yield self._emit(Note(self._t(), "warning", text))
        self.outcome = stop.outcome
        self.message = stop.message
        if stop.kind:
            yield self._emit(Note(self._t(), stop.kind, stop.message))
        yield self._emit(RunFinished(self._t(), stop.outcome, len(self.points), stop.message, self.safe_state))
        if reraise is not None:
            raise reraise

    # -- the measurement -----------------------------------------------------
    def _measure(self) -> Iterator[Event]:
        plan, rig = self.plan, self.rig
        first = self.steps.next_step(self.points)
        if first is None:
            return
        rig.configure(plan, first.setpoint_a)
        rig.check_errors("configuration")
        if plan.offset.enabled:
            yield from self._offset()
        self._check_cancel()
        if self._before_power_on is not None and self._before_power_on() is False:
            raise _Stop("cancelled", "cancel", "cancelled before power was applied")
        self._check_cancel()
        for text in program_protection(rig, plan):
            yield self._emit(Note(self._t(), "info", text))
        self._check_cancel()
        inputs: tuple[float | None, ...] = plan.input.voltages_v if plan.input is not None else (None,)
        index = 0
        for k, input_v in enumerate(inputs):
            if input_v is not None:
                if k > 0:  # a new series: current off while the supply moves to the next input
                    self._check_cancel()
                    rig.element_off()
                    self.steps = step_source(plan)
                    first = self.steps.next_step([])
                    if first is None:
                        break
                    rig.set_current(first.setpoint_a)
                rig.supply.set_voltage(input_v)
                yield self._emit(Note(self._t(), "info", f"{SERIES_STARTED} {k}: input {input_v:g} V"))
            if k == 0:
                rig.power_on()
                self.power_applied = True
            else:
                rig.element_on()
            index = yield from self._series(first, index, series_flag(k) if input_v is not None else None)
        state = getattr(self.steps, "state", None)
        if state is not None:
            label = getattr(self.steps, "label", "adaptive stepping")
            yield self._emit(Note(self._t(), "info", f"{label}: {state.reason}"))
        rig.check_errors("sweep")
        if plan.soak is not None:
            yield from self._soak()
            rig.check_errors("heat-soak")
        if plan.reverse is not None:
            yield from self._reverse()
            rig.check_errors("reverse step")

    def _series(self, first, index: int, flag: str | None) -> Iterator[Event]:
        """Step the current through one series (the whole sweep, or one input voltage of an input sweep)."""
        plan, rig = self.plan, self.rig
        series: list[Point] = []
        step = first
        start = index
        while step is not None:
            if index > start:
                self._check_cancel()
                self._check_time()
                rig.set_current(step.setpoint_a)
                if plan.cooldown.off_s > 0:
                    rig.element_on()
            self._pause(plan.settle.dwell_s)
            self._check_cancel()
            point, stop = self._read_point(index, step)
            if point is not None:
                if flag is not None:
                    point = dataclasses.replace(point, flags=point.flags + (flag,))
                self.points.append(point)
                series.append(point)
                yield self._emit(point)
            if stop is not None:
                raise stop
            self._checkpoint()
            index += 1
            step = self.steps.next_step(series if flag is not None else self.points)
            if plan.cooldown.off_s > 0:
                rig.element_off()
                self._pause(plan.cooldown.off_s)
        return index

    def _offset(self) -> Iterator[Event]:
        try:
            reading = settle(self.rig.read_drop, self.plan.settle, self._clock, self._cancel.is_set)
        except Overload:
            yield self._emit(Note(self._t(), "warning", "zero-current offset: meter overload, no offset recorded"))
            return
        except Interrupted:
            raise _Stop("cancelled", "cancel", "cancelled by the operator before power was applied") from None
        yield self._emit(Offset(self._t(), reading.value))

    def _soak(self) -> Iterator[Event]:
        """Hold the soak current and read the drop at a fixed rate; then follow the cooling at the sense current.

        One reading per point, no settle rule: the drift is the measurement. The info note
        before each phase carries, as its t_s, the instant the current step was applied (the
        middle of the command that applied it), from which the analysis counts time.
        """
        soak, rig = self.plan.soak, self.rig
        assert soak is not None
        rig.element_off()
        if rig.wiring.force == "load":
            # with the load's input off, the supply would still drive its leads: all off for the rest
            rig.supply.set_output(False)
        self._pause(soak.rest_s)
        self._check_cancel()
        phases = [(SOAK_STARTED, soak.current_a, soak.duration_s, FLAG_SOAK)]
        if soak.cool_s > 0:
            phases.append((COOL_STARTED, soak.sense_current_a, soak.cool_s, FLAG_COOL))
        for title, current_a, length_s, flag in phases:
            self._check_cancel()
            if flag == FLAG_SOAK:
                rig.set_current(current_a)
                before = self._t()
                rig.power_on()
            else:
                before = self._t()
                rig.set_current(current_a)  # the element stays on: the step down is the cooling's start
            after = self._t()
            start = (before + after) / 2.0
            yield self._emit(Note(start, "info", f"{title}: {current_a:g} A applied (step instant known "
                                  f"within ±{(after - before) / 2.0 * 1e3:.1f} ms); a reading every "
                                  f"{self.plan.soak.interval_s:g} s for {length_s:g} s"))
            count = int(math.floor(length_s / soak.interval_s + 1e-9))
            for k in range(1, count + 1):
                self._pause(start + k * soak.interval_s - self._t())
                self._check_cancel()
                self._check_time()
                t_before = self._t()
                try:
                    value = mean_of(rig.read_drop())
                except Overload:
                    rig.element_off()
                    rng = rig.ranges.get("meter", 0.0)
                    raise _Stop("limit", "limit", f"meter overload during the {flag} phase at {current_a:g} A: "
                                f"the drop is beyond the {rng:g} V range (no reading)") from None
                t_read = (t_before + self._t()) / 2.0
                point, stop = self._read_point(len(self.points), Step(current_a), reading=Settled(value, 1, True),
                                               t_s=t_read, flags=(flag,))
                if point is not None:
                    self.points.append(point)
                    yield self._emit(point)
                if stop is not None:
                    raise stop
                self._checkpoint()
        rig.element_off()

    def _read_point(self, index: int, step, *, reading: Settled | None = None, t_s: float | None = None,
                    flags: tuple[str, ...] = ()) -> tuple[Point | None, _Stop | None]:
        plan, rig, lim = self.plan, self.rig, self.plan.limits
        try:
            if reading is None:
                reading = settle(rig.read_drop, plan.settle, self._clock, self._cancel.is_set)
        except Overload:
            rig.element_off()
            if self._load_tripped(step.setpoint_a, None):  # an open load leaves the drop undefined: say why
                return None, _load_trip_stop(step.setpoint_a)
            rng = rig.ranges.get("meter", 0.0)
            return None, _Stop("limit", "limit", f"meter overload at {step.setpoint_a:g} A: the drop is beyond "
                               f"the {rng:g} V range (no reading)")
        except Interrupted:
            raise self._cancel_stop() from None
        current, mode, supply_v = rig.read_back(plan.record.supply_v)
        t_s = self._t() if t_s is None else t_s
        flags: list[str] = list(flags)
        if not reading.settled:
            flags.append(FLAG_UNSETTLED)
        # Neither CV nor CC while the output should be on: the supply switched itself off.
        if mode == "OFF" or (mode == "UNKNOWN" and rig.supply.can_report_mode):
            rig.element_off()
            tripped = _safe_call(rig.supply.tripped)
            cause = "its protection tripped" if tripped else f"status {mode}: neither CV nor CC"
            return None, _Stop("fault", "fault", f"supply output went off during the sweep ({cause}) at "
                               f"{step.setpoint_a:g} A; point not recorded")
        if self._load_tripped(step.setpoint_a, current):
            rig.element_off()
            return None, _load_trip_stop(step.setpoint_a)
        stop: _Stop | None = None
        expected = rig.expected_mode()
        if mode in ("CV", "CC") and mode != expected:
            if self._load_tripped(step.setpoint_a, None):
                # the load's protection opened the loop: that, not the supply's limit, is why its mode moved
                rig.element_off()
                return None, _load_trip_stop(step.setpoint_a)
            flags.append(FLAG_COMPLIANCE)
            if expected == "CC":
                stop = _Stop("limit", "limit", f"compliance_v: the supply left CC at {step.setpoint_a:g} A "
                             f"(CV at {lim.compliance_v:g} V limit; drop {reading.value:.6g} V)")
            else:
                stop = _Stop("limit", "limit", f"max_current_a: the supply reached its current limit "
                             f"{lim.max_current_a:g} A and left CV at {step.setpoint_a:g} A")
        if current is None or not math.isfinite(current):
            rig.element_off()
            return None, _Stop("limit", "limit", f"current reading overload at {step.setpoint_a:g} A (no reading)")
        if stop is None and current > lim.max_current_a * (1 + CURRENT_READBACK_MARGIN):
            stop = _Stop("limit", "limit", f"max_current_a: measured {current:.6g} A, above the "
                         f"{lim.max_current_a:g} A limit")
        if stop is None and lim.max_drop_v is not None and reading.value > lim.max_drop_v:
            stop = _Stop("limit", "limit", f"max_drop_v: element drop {reading.value:.6g} V at {current:.6g} A, "
                         f"above the {lim.max_drop_v:g} V limit")
        power_w = current * reading.value
        if stop is None and lim.max_power_w is not None and power_w > lim.max_power_w:
            stop = _Stop("limit", "limit", f"max_power_w: element power {power_w:.6g} W "
                         f"({current:.6g} A x {reading.value:.6g} V), above the {lim.max_power_w:g} W limit")
        if stop is not None:
            rig.element_off()
        # the case (or tab) temperature right after the drop, when the bench has a probe on the element
        temperature_c = rig.read_case_temperature()
        point = Point(
            index=index,
            t_s=t_s,
            setpoint_a=step.setpoint_a,
            current_a=current,
            drop_v=reading.value,
            supply_v=supply_v,
            supply_mode=mode,
            temperature_c=temperature_c,
            settle_reads=reading.reads,
            direction=step.direction,
            flags=tuple(flags),
        )
        return point, stop

    def _load_tripped(self, setpoint_a: float, current_a: float | None) -> bool:
        """In the load wiring, a current far below the setpoint may be the load's protection: ask it then.

        Asked only on such a reading, so a sweep that runs as planned sends no extra query.
        """
        load = getattr(self.rig, "load", None)
        if self.rig.wiring.force != "load" or load is None or not getattr(load, "can_detect_trip", False):
            return False
        if current_a is not None and math.isfinite(current_a) and current_a >= LOAD_TRIP_FRACTION * setpoint_a:
            return False
        return bool(_safe_call(load.tripped))

    def _reverse(self) -> Iterator[Event]:
        """Reverse the supply across the element at each reverse voltage for duration_s and read the reverse current.

        One voltage is the reverse-polarity step; several are a leakage sweep, one ReverseResult each, in the
        plan's order. The sweep stops at the first voltage the supply could not hold (the element conducts) or
        whose current is above the pass limit: a higher voltage would only drive more current.
        """
        rev, rig, supply = self.plan.reverse, self.rig, self.rig.supply
        rig.element_off()
        if rig.wiring.force == "load":
            supply.set_output(False)
        limit_a = reverse_limit_a(self.plan, supply.profile)
        read_reverse = rig.reverse_current_reader(limit_a)
        supply.set_voltage(0.0)
        supply.set_reversed(True)
        readings: list[tuple[float, float, float, float]] = []  # (t_s, voltage_v, current_a, applied_v)
        try:
            supply.set_current_limit(limit_a)
            for voltage_v in rev.steps_v:
                supply.set_voltage(voltage_v)
                supply.set_output(True)
                self._pause(rev.duration_s)
                self._check_cancel()
                current = read_reverse()
                applied_v = abs(supply.measure_voltage())
                readings.append((self._t(), voltage_v, current, applied_v))
                if current > rev.max_current_a or applied_v < REVERSE_APPLIED_FRACTION * voltage_v:
                    break
            supply.set_output(False)
        finally:
            _safe_call(lambda: supply.set_output(False))
            _safe_call(lambda: supply.set_voltage(0.0))
            _safe_call(lambda: supply.set_reversed(False))
        for t_s, voltage_v, current, applied_v in readings:
            # A supply held at its current limit cannot hold the reverse voltage: the element conducts
            # in reverse (or the limit is too low to drive the leads); either way the test did not pass.
            applied = applied_v >= REVERSE_APPLIED_FRACTION * voltage_v
            passed = current <= rev.max_current_a and applied
            if not applied:
                yield self._emit(Note(self._t(), "warning", f"reverse step: only {applied_v:.4g} V of the "
                                      f"{voltage_v:g} V reached the element (supply current limit "
                                      f"{limit_a:g} A): the element conducts in reverse"))
            yield self._emit(ReverseResult(t_s, voltage_v, rev.duration_s, current, rev.max_current_a, passed))
        if len(readings) < len(rev.steps_v):
            yield self._emit(Note(self._t(), "info", f"leakage sweep stopped after {len(readings)} of "
                                  f"{len(rev.steps_v)} voltages: the last one did not pass"))

    # -- helpers -------------------------------------------------------------
    def _take_safe_state(self, guarding: Any) -> Any:
        """The guard's read-back of the outputs (a guard without one leaves the state "unknown")."""
        report = getattr(guarding, "outcome", None)
        self.safe_report = report
        state = getattr(report, "state", None)
        self.safe_state = state if state in ("verified", "unverified", "unknown") else "unknown"
        return report

    def _emit(self, event: Event) -> Event:
        if self.writer is not None:
            self.writer.write(event)
        return event

    def _finish_unyielded(self, kind: str, message: str) -> None:
        self.outcome = "cancelled"
        self.message = message
        self._emit(Note(self._t(), kind, message))
        self._emit(RunFinished(self._t(), "cancelled", len(self.points), message, self.safe_state))

    def _t(self) -> float:
        return self._clock() - self._t0

    def _pause(self, seconds: float) -> None:
        if seconds <= 0:
            return
        if self._sleep is time.sleep:
            self._cancel.wait(seconds)  # wakes at once on cancel
        else:
            self._sleep(seconds)

    def _cancel_stop(self) -> _Stop:
        return _Stop("cancelled", "cancel", f"cancelled by the operator after {len(self.points)} points")

    def _check_cancel(self) -> None:
        if self._cancel.is_set():
            raise self._cancel_stop()

    def _check_time(self) -> None:
        limit = self.plan.limits.max_time_s
        if limit is not None and self._t() > limit:
            raise _Stop("limit", "limit", f"max_time_s: the sweep ran {self._t():.3g} s, past the {limit:g} s "
                        f"limit, after {len(self.points)} points")

    def _checkpoint(self) -> None:
        now = self._clock()
        if now - self._last_checkpoint >= CHECKPOINT_S:
            self._last_checkpoint = now
            self.rig.check_errors(f"point {len(self.points) - 1}")

    @staticmethod
    def _is_bench_error(exc: BaseException) -> bool:
        try:
            from benchlog.instruments.errors import BenchError
        except ImportError:  # pragma: no cover - the instrument layer is part of the package
            return False
        return isinstance(exc, BenchError)

    def _classify(self, exc: BaseException) -> _Stop:
        report = getattr(exc, "report", None)
        if report is not None and hasattr(report, "statement"):  # the guard could not confirm the outputs off
            return _Stop("fault", "fault", report.statement())
        if isinstance(exc, _safety_limit_type()):
            return _Stop("limit", "limit", f"setpoint refused by the instrument profile: {exc}")
        if self._is_bench_error(exc):
            line = exc.line() if hasattr(exc, "line") else str(exc)
            return _Stop("fault", "fault", f"instrument fault: {line}")
        return _Stop("fault", "fault", f"internal error: {type(exc).__name__}: {exc}")

    # -- header --------------------------------------------------------------
    def _build_header(self) -> RunHeader:
        plan, rig = self.plan, self.rig
        instruments = tuple(
            InstrumentRecord(
                role=name,
                resource=role.resource,
                idn=idn_text(role.idn),
                profile=role.profile.name,
                profile_sha256=role.profile.sha256,
            )
            for name, role in rig.named_roles().items()
        )
        e = plan.element
        element = {
            "id": e.id, "kind": e.kind, "label": e.label, "lot": e.lot, "serial": e.serial,
            "ambient_c": e.ambient_c, "note": e.note, "operating_a": e.operating_a,
        }
        if e.ambient_u_c is not None:
            element["ambient_u_c"] = e.ambient_u_c
        if element_kind(e.kind).has_gate:
            element.update({"gate": e.gate, "zener_v": e.zener_v, "measure": e.measure})
            if e.gate_v is not None:
                element["gate_v"] = e.gate_v
        plan_table = freeze(plan.to_dict())
        now = datetime.now(timezone.utc)
        return RunHeader(
            tool_version=__version__,
            started_utc=now.strftime("%Y-%m-%dT%H:%M:%S.") + f"{now.microsecond // 1000:03d}Z",
            run_id=new_run_id(),
            host=socket.gethostname(),
            instruments=instruments,
            bench=BenchRecord.from_table(rig.setup.to_dict()),
            plan=PlanRecord(plan_table),
            element=ElementRecord.from_table(element, plan_table.get("element") or {}),
            accuracy=measurement_accuracy(rig, plan),
            # NPLC is recorded only when the meter was told it (a profile without an NPLC command keeps its own)
            meter=MeterSettings(plan.meter.nplc if getattr(rig.meter.profile, "sets_nplc", True) else None,
                                plan.meter.samples, drop_range_v(plan, rig.meter.profile)),
            line_frequency_hz=rig.setup.line_frequency_hz,
            temperature=self._temperature_record(),
        )

    def _temperature_record(self) -> TemperatureRecord | None:
        """Which probe filled the points' temperature_c, where it sits and how good it is (None: no probe)."""
        rig = self.rig
        where = rig.setup.sensor
        if rig.sensor is None or where is None:
            return None
        spec = rig.setup.role("sensor")
        return TemperatureRecord(
            attached_to=where.attached_to, transducer=where.transducer, accuracy_c=where.accuracy_c,
            resource=spec.resource if spec is not None else rig.sensor.resource,
            profile=rig.sensor.profile.name, idn=idn_text(rig.sensor.idn))


def _safety_limit_type() -> type:
    try:
        from benchlog.instruments.errors import SafetyLimit
    except ImportError:  # pragma: no cover
        return type("NoSafetyLimit", (Exception,), {})
    return SafetyLimit


def _load_trip_stop(setpoint_a: float) -> "_Stop":
    return _Stop("fault", "fault", f"load input went off during the sweep (its protection tripped) "
                 f"at {setpoint_a:g} A; point not recorded")


def _safe_call(fn: Callable[[], Any] | None) -> Any:
    if fn is None:
        return None
    try:
        return fn()
    except Exception:  # noqa: BLE001 -- best effort on the way to the safe state
        return None
