"""The simulated multimeter: DC volts across the element (Kelvin), or DC current in series.

Noise model (used by the estimator-efficiency benchmark for the Cramér–Rao
bound). One reading is the true value plus:
- a fixed gain error g and offset o per range, drawn once (seeded) uniformly
  within the accuracy spec: |g| <= reading_pct/100, |o| <= range_pct/100·range;
- a fixed thermal EMF (DCV only), uniform within ±THERMAL_EMF_MAX_V;
- independent Gaussian noise with standard deviation `reading_noise_v`.

Integration time t = NPLC / line frequency (1 PLC = 20 ms at 50 Hz, 16.667 ms
at 60 Hz). White noise averaged over t falls as 1/sqrt(t), so

    σ(range, NPLC, f) = sqrt( (k·range)^2 · t_ref/t + σ_floor^2 ),
    k = METER_NOISE_RANGE_FRACTION_1PLC, t_ref = 20 ms, t = NPLC/f.

A reading beyond METER_OVERLOAD_FRACTION of its range is the overload value
±9.9E37 (SCPI-99 vol. 1 7.2.1).

Timing (with `SimConfig.timing = "real"`, see sim/timing.py): a reading of N
samples takes N·t. `READ?` and `MEASure?` answer after it; `INITiate` returns at
once and starts it, `FETCh?` and `*OPC?` wait until it has ended. Sample k sees
the circuit at the middle of its own integration window, t0 + (k + ½)·t, so a
setpoint still settling shows in the readings. The readings of an `INITiate`
are taken from the settings as they stand when it is sent.

A meter wired "case" has its temperature probe on the element's case and offers the
temperature function (SCPI-99 style `CONFigure:TEMPerature`, `MEASure:TEMPerature?`,
`FUNCtion "TEMP"`): the case temperature Tc = Tj − P·RθJC plus the probe's fixed
error (uniform within ±CASE_SENSOR_OFFSET_MAX_C, drawn once from its own seeded
stream) and Gaussian noise CASE_SENSOR_NOISE_C, in °C.
"""

from __future__ import annotations

import math

from benchlog.scpi.replies import OVERLOAD
from benchlog.scpi.tree import CommandError, CommandTree, bool_param, choice_param, number_param

from . import specs
from .device import ScpiDevice, fmt
from .specs import RangeSpec, draw_fixed_error, range_for
from .timing import integration_time_s


def _noise(range_value: float, nplc: float, line_frequency_hz: float, floor: float) -> float:
    t = integration_time_s(nplc, line_frequency_hz)
    white = specs.METER_NOISE_RANGE_FRACTION_1PLC * range_value
    return math.sqrt(white * white * specs.METER_NOISE_REFERENCE_S / t + floor * floor)


def reading_noise_v(range_v: float, nplc: float, line_frequency_hz: float) -> float:
    """Standard deviation of one DC-volts reading on `range_v` at `nplc` (see module docstring)."""
    return _noise(range_v, nplc, line_frequency_hz, specs.METER_NOISE_FLOOR_V)


def reading_noise_a(range_a: float, nplc: float, line_frequency_hz: float) -> float:
    """Standard deviation of one DC-current reading, same law with the current floor."""
    return _noise(range_a, nplc, line_frequency_hz, specs.METER_NOISE_FLOOR_A)


FUNCTIONS = {"VOLT": specs.METER_DCV, "CURR": specs.METER_DCI}


class MeterSim(ScpiDevice):
    """A DMM. `wiring` is "element" (senses across the element) or "series" (carries the loop current)."""

    model = "SIM-METER"

    def __init__(self, bench, role: str, serial: str, *, wiring: str, has_measure: bool, shunt_ohm: float) -> None:
        self.wiring = wiring
        if wiring == "case":
            self.model = "SIM-CASE-METER"
            # its own streams, so adding a case sensor shifts no other instrument's draws
            self.temp_offset_c = bench.stream(f"{role}/temperature").uniform(-1, 1) * specs.CASE_SENSOR_OFFSET_MAX_C
            self.temp_noise = bench.stream(f"{role}/temperature-noise")
        self.has_measure = has_measure
        self.shunt_ohm = shunt_ohm
        rng = bench.stream(f"{role}/errors")
        self.gain = {}
        self.offset = {}
        for function, table in FUNCTIONS.items():
            for spec in table:
                self.gain[(function, spec.range)], self.offset[(function, spec.range)] = draw_fixed_error(rng, spec)
        self.emf_v = rng.uniform(-1, 1) * specs.THERMAL_EMF_MAX_V
        self.noise = bench.stream(f"{role}/noise")
        super().__init__(bench, role, serial)

    def reset(self) -> None:
        self.function = "VOLT"
        self.range = {"VOLT": 10.0, "CURR": 1.0}
        self.auto = {"VOLT": True, "CURR": True}
        self.nplc = {"VOLT": specs.METER_DEFAULT_NPLC, "CURR": specs.METER_DEFAULT_NPLC}
        self.sample_count = 1
        self.trigger_source = "IMMediate"
        self.readings: list[float] | None = None

    # -- physics -----------------------------------------------------------------------------------
    def true_value(self, at_s: float | None = None) -> float:
        op = self.bench.operating_point(at_s)
        if self.wiring == "element":
            return op.element_v + self.emf_v if self.function == "VOLT" else 0.0
        if self.function == "VOLT":
            return op.current_a * self.shunt_ohm + self.emf_v
        return op.current_a

    def _range_spec(self, value: float) -> RangeSpec:
        table = FUNCTIONS[self.function]
        if self.auto[self.function]:
            return range_for(table, value)
        return next(s for s in table if s.range == self.range[self.function])

    def take_readings(self) -> list[float]:
        """Start a reading of `sample_count` samples now; it ends `busy_until_s` on the bench clock."""
        if self.function == "TEMP":
            centre = self.bench.case_c() + self.temp_offset_c
            self.busy_until_s = self.bench.clock()  # a probe's reading: no integration modelled
            return [centre + self.temp_noise.gauss(0.0, specs.CASE_SENSOR_NOISE_C) for _ in range(self.sample_count)]
        line = self.bench.config.line_frequency_hz
        nplc = self.nplc[self.function]
        real = self.bench.config.timing == "real"
        start = self.bench.clock()
        each_s = integration_time_s(nplc, line)
        value = self.true_value(start + 0.5 * each_s if real else None)
        spec = self._range_spec(value)  # the range is chosen once, before the samples
        key = (self.function, spec.range)
        sigma = (reading_noise_v if self.function == "VOLT" else reading_noise_a)(spec.range, nplc, line)
        gain, offset = 1.0 + self.gain[key], self.offset[key]
        out = []
        for k in range(self.sample_count):
            if real and k:
                value = self.true_value(start + (k + 0.5) * each_s)
            reading = value * gain + offset + self.noise.gauss(0.0, sigma)
            if abs(reading) > specs.METER_OVERLOAD_FRACTION * spec.range:
                reading = math.copysign(OVERLOAD, reading)
            out.append(reading)
        self.busy_until_s = start + self.sample_count * each_s if real else start
        return out

    # -- SCPI --------------------------------------------------------------------------------------
    def build(self, tree: CommandTree) -> None:
        for function, name in (("VOLT", "VOLTage"), ("CURR", "CURRent")):
            tree.command(f"CONFigure[:SCALar]:{name}[:DC]", self._configure(function), (0, 2))
            tree.command(f"[SENSe:]{name}[:DC]:RANGe[:UPPer]", self._set_range(function), 1)
            tree.query(f"[SENSe:]{name}[:DC]:RANGe[:UPPer]?", self._get_range(function))
            tree.command(f"[SENSe:]{name}[:DC]:RANGe:AUTO", self._set_auto(function), 1)
            tree.query(f"[SENSe:]{name}[:DC]:RANGe:AUTO?", lambda f=function: "1" if self.auto[f] else "0")
            tree.command(f"[SENSe:]{name}[:DC]:NPLCycles", self._set_nplc(function), 1)
            tree.query(f"[SENSe:]{name}[:DC]:NPLCycles?", lambda f=function: fmt(self.nplc[f]))
            if self.has_measure:
                tree.query(f"MEASure[:SCALar]:{name}[:DC]?", self._measure(function), (0, 2))
        if self.wiring == "case":
            tree.command("CONFigure[:SCALar]:TEMPerature", self._configure_temperature, (0, 2))
            tree.query("MEASure[:SCALar]:TEMPerature?", self._measure_temperature, (0, 2))
        tree.query("CONFigure?", lambda: "\"TEMP\"" if self.function == "TEMP"
                   else f"\"{self.function} {fmt(self.range[self.function])}\"")
        tree.command("[SENSe:]FUNCtion[:ON]", self._set_function, 1)
        tree.query("[SENSe:]FUNCtion[:ON]?", lambda: f"\"{self.function}\"")
        tree.command("SAMPle:COUNt", self._set_count, 1)
        tree.query("SAMPle:COUNt?", lambda: str(self.sample_count))
        tree.command("TRIGger[:SEQuence]:SOURce", self._set_trigger, 1)
        tree.query("TRIGger[:SEQuence]:SOURce?", lambda: self.trigger_source[:3].upper())
        tree.command("INITiate[:IMMediate]", self._initiate)
        tree.query("FETCh?", self._fetch)
        tree.query("READ?", self._read)

    def _pick_range(self, function: str, text: str) -> None:
        table = FUNCTIONS[function]
        word = text.strip().upper()
        if word in ("AUTO",):
            self.auto[function] = True
            return
        top = table[-1].range
        value = number_param(text, lo=0.0, hi=top, default=top if function == "VOLT" else table[2].range,
                             name="range")
        self.auto[function] = False
        self.range[function] = range_for(table, value).range

    def _configure(self, function: str):
        def handler(range_text: str = "AUTO", _resolution: str | None = None) -> None:
            self._pick_range(function, range_text)
            self.function = function
            self.readings = None
        return handler

    def _set_range(self, function: str):
        return lambda text: self._pick_range(function, text)

    def _get_range(self, function: str):
        def handler() -> str:
            if self.auto[function]:
                value = self.true_value() if function == self.function else 0.0
                return fmt(range_for(FUNCTIONS[function], value).range)
            return fmt(self.range[function])
        return handler

    def _set_auto(self, function: str):
        def handler(text: str) -> None:
            self.auto[function] = bool_param(text, "autorange")
        return handler

    def _set_nplc(self, function: str):
        def handler(text: str) -> None:
            self.nplc[function] = number_param(text, lo=specs.METER_NPLC_MIN, hi=specs.METER_NPLC_MAX,
                                               default=specs.METER_DEFAULT_NPLC, name="NPLC")
        return handler

    def _measure(self, function: str):
        def handler(range_text: str = "AUTO", _resolution: str | None = None) -> str:
            self._configure(function)(range_text)
            return self._read()
        return handler

    def _configure_temperature(self, _transducer: str | None = None, _type: str | None = None) -> None:
        # the probe is what it is: the transducer words are accepted and not checked
        self.function = "TEMP"
        self.readings = None

    def _measure_temperature(self, _transducer: str | None = None, _type: str | None = None) -> str:
        self._configure_temperature()
        return self._read()

    def _set_function(self, text: str) -> None:
        word = text.strip().strip("\"'").upper()
        if self.wiring == "case" and word in ("TEMP", "TEMPERATURE"):
            self._configure_temperature()
            return
        for function, name in (("VOLT", "VOLTage"), ("CURR", "CURRent")):
            if word in (function, name.upper(), f"{function}:DC", f"{name.upper()}:DC"):
                self.function = function
                self.readings = None
                return
        raise CommandError(-224, f"function {text.strip()!r} is not VOLT or CURR")

    def _set_count(self, text: str) -> None:
        self.sample_count = int(round(number_param(text, lo=1, hi=specs.METER_SAMPLE_COUNT_MAX, default=1,
                                                   name="sample count")))

    def _set_trigger(self, text: str) -> None:
        source = choice_param(text, ("IMMediate", "BUS", "EXTernal"), "trigger source")
        if source != "IMMediate":
            raise CommandError(-221, f"trigger source {source} is not wired on this bench; use IMMediate")
        self.trigger_source = source

    def _initiate(self) -> None:
        self.readings = self.take_readings()

    def _fetch(self) -> str:
        if self.readings is None:
            raise CommandError(-230, "no readings; send INITiate first")
        self.wait_until_idle()
        return ",".join(fmt(r, 9) for r in self.readings)

    def _read(self) -> str:
        self._initiate()
        return self._fetch()
