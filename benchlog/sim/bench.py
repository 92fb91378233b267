"""The whole simulated bench in one process: instruments, element, wiring and junction temperature.

All instruments share one lock, because they share one circuit. The junction
temperature advances with the clock (real, or injected by tests) each time an
instrument is spoken to, using the power at the operating point that held
since the last message.
"""

from __future__ import annotations

import math
import random
import threading
import time
from typing import Callable

from . import specs
from .circuit import Drive, OperatingPoint, solve
from .config import SimConfig
from .elements import build_element, thermal_truth, T0_C
from .load import LoadSim
from .meter import MeterSim
from .supply import SupplySim

SERIAL_PREFIX = {"supply": "S", "load": "L", "meter": "M", "current_meter": "C", "sensor": "T"}


class SimBench:
    def __init__(self, config: SimConfig, clock: Callable[[], float] = time.monotonic,
                 sleep: Callable[[float], None] | None = None) -> None:
        self.config = config
        self.clock = clock
        #: how the instruments wait out their timing on an injected clock (None: the server waits in real time)
        self.sleep = sleep
        self.lock = threading.RLock()
        self.element = build_element(config.element, self.stream("element"), config.element_params)
        #: the element's network with the sim's thermal time scale applied (what the bench really does)
        self.thermal = self.element.thermal.scaled(config.thermal_time_scale)
        self.junction_c = float(config.ambient_c)
        self.case_node_c = float(config.ambient_c)
        self._last_t = clock()
        self._op: OperatingPoint | None = None
        self._op_key: tuple | None = None
        self.supply = SupplySim(self, "supply", self._serial("supply"))
        self.load = LoadSim(self, "load", self._serial("load"))
        self.meter = MeterSim(self, "meter", self._serial("meter"), wiring="element",
                              has_measure=config.meter_has_measure, shunt_ohm=config.shunt_ohm)
        self.current_meter = (
            MeterSim(self, "current_meter", self._serial("current_meter"), wiring="series",
                     has_measure=config.meter_has_measure, shunt_ohm=config.shunt_ohm)
            if config.current_meter else None
        )
        self.sensor = (
            MeterSim(self, "sensor", self._serial("sensor"), wiring="case",
                     has_measure=True, shunt_ohm=config.shunt_ohm)
            if config.case_sensor else None
        )

    def _serial(self, role: str) -> str:
        return f"{SERIAL_PREFIX[role]}{self.config.seed:06d}"

    def stream(self, name: str) -> random.Random:
        """An independent, seeded random stream, so one instrument's use never shifts another's."""
        return random.Random(f"benchlog-sim/{self.config.seed}/{name}")

    def devices(self) -> dict:
        found = {"supply": self.supply, "load": self.load, "meter": self.meter}
        if self.current_meter is not None:
            found["current_meter"] = self.current_meter
        if self.sensor is not None:
            found["sensor"] = self.sensor
        return found

    @property
    def rth_jc_k_per_w(self) -> float:
        return specs.CASE_RTH_JC_K_PER_W.get(self.element.kind, specs.CASE_RTH_JC_DEFAULT_K_PER_W)

    def case_c(self) -> float:
        """The element's case temperature on the path junction -> case -> ambient.

        The one thermal capacitance sits at the junction, so the heat leaving it is
        q = (Tj − Ta)/RθJA, and the case sits RθJC·q below the junction:
        Tc = Tj − (Tj − Ta)·RθJC/RθJA. In steady state q = P, so Tj − Tc = P·RθJC, the
        definition of junction-to-case thermal resistance (JESD51 series); while heating
        the case lies between ambient and junction, never below the ambient.
        """
        with self.lock:
            self.advance()
            ta, tj = self.config.ambient_c, self.junction_c
            share = min(1.0, self.rth_jc_k_per_w / self.element.thermal.rth_ja_k_per_w)
            return tj - (tj - ta) * share

    # -- circuit ----------------------------------------------------------------------------------
    def drive(self, at_s: float | None = None) -> Drive:
        """What the instruments impose at `at_s` on the bench clock (default now), settling included."""
        s, l = self.supply, self.load
        at_s = self.clock() if at_s is None else at_s
        return Drive(
            output_on=s.output_on, inverted=s.inverted, voltage_v=s.actual_voltage_v(at_s),
            current_limit_a=s.actual_current_limit_a(at_s), load_on=l.input_on,
            load_current_a=l.actual_current_a(at_s),
            lead_ohm=self.config.lead_resistance_ohm, load_min_ohm=specs.LOAD_MIN_RESISTANCE_OHM,
        )

    def changed(self) -> None:
        """A setting is about to change: bring the temperature up to now under the old operating point."""
        self.advance()
        self._op_key = None

    def operating_point(self, at_s: float | None = None) -> OperatingPoint:
        """The circuit solved for the drive at `at_s` (default now) and the present junction temperature."""
        with self.lock:
            drive = self.drive(at_s)
            key = (drive, self.junction_c)
            if self._op_key != key:
                self._op = solve(self.element, drive, self.junction_c)
                self._op_key = key
            return self._op  # type: ignore[return-value]

    # -- heat ---------------------------------------------------------------------------------------
    def advance(self, now: float | None = None) -> None:
        """Integrate Tj from the last update to `now` (sub-stepped so P(Tj) is followed)."""
        with self.lock:
            now = self.clock() if now is None else now
            dt = now - self._last_t
            tau = max(self.thermal.tau_s)  # sub-steps follow P(Tj); each step is exact at constant P
            if dt <= 0 or dt < min(self.thermal.tau_s) * 1e-4:
                # far below the time constant: let time accumulate (Tj would move by < 0.01 % of its
                # rise), so back-to-back messages reuse one solved operating point
                return
            self._last_t = now
            steps = min(400, max(1, math.ceil(dt / (tau / 20.0))))
            h = dt / steps
            for _ in range(steps):
                power = self.operating_point().power_w
                if power == 0.0 and abs(self.junction_c - self.config.ambient_c) < 1e-9 \
                        and abs(self.case_node_c - self.config.ambient_c) < 1e-9:
                    self.junction_c = self.case_node_c = float(self.config.ambient_c)
                    break
                self.junction_c, self.case_node_c = self.thermal.advance(
                    self.junction_c, self.case_node_c, self.config.ambient_c, power, h)
            if steps == 400 and dt > 400 * tau / 20.0:
                # a very long jump: the remaining transient has died out; settle on the fixed point
                for _ in range(50):
                    power = self.operating_point().power_w
                    target = self.config.ambient_c + power * self.thermal.rth_ja_k_per_w
                    self.case_node_c = self.config.ambient_c + power * self.thermal.rth_ca_k_per_w
                    if abs(target - self.junction_c) < 1e-9:
                        break
                    self.junction_c = target

    # -- truth ------------------------------------------------------------------------------------
    def truth(self) -> dict:
        """The element's true parameters (at 25 °C and full enhancement) and the bench's wiring."""
        data = dict(self.element.truth())
        data.update(thermal_truth(self.thermal))  # with the thermal time scale applied
        data.update({
            "thermal_time_scale": self.config.thermal_time_scale,
            "at_c": T0_C,
            "ambient_c": self.config.ambient_c,
            "seed": self.config.seed,
            "lead_resistance_ohm": self.config.lead_resistance_ohm,
            "meter_thermal_emf_v": self.meter.emf_v,
            "line_frequency_hz": self.config.line_frequency_hz,
        })
        if self.current_meter is not None:
            data["shunt_ohm"] = self.config.shunt_ohm
        if self.sensor is not None:
            data["rth_jc_k_per_w"] = self.rth_jc_k_per_w
            data["case_sensor_offset_c"] = self.sensor.temp_offset_c
        return data
