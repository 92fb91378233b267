"""What the simulated instruments promise: ranges, accuracy ±(% of reading + % of range), limits, noise.

These are generic, invented figures of the size a bench supply, an electronic
load and a 6½-digit meter commonly have. The sim draws each instrument's fixed
gain and offset error uniformly within exactly these specs (seeded), so the sim
instrument profiles must copy these numbers for a GUM type-B budget to be
honest against the sim.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class RangeSpec:
    """Accuracy on one range: ±(reading_pct % of reading + range_pct % of range)."""

    function: str  # "dc_voltage", "dc_current", "readback_voltage", "readback_current"
    range: float  # volts or amperes, full scale
    reading_pct: float
    range_pct: float

    def limit(self, value: float) -> float:
        """Half-width a of the accuracy band at `value` (GUM 4.3.7 treats it as rectangular)."""
        return self.reading_pct / 100.0 * abs(value) + self.range_pct / 100.0 * self.range


# -- meter (the Kelvin-sensed drop, and the optional series current meter) ---------------
METER_DCV: tuple[RangeSpec, ...] = (
    RangeSpec("dc_voltage", 0.1, 0.0060, 0.0040),
    RangeSpec("dc_voltage", 1.0, 0.0050, 0.0010),
    RangeSpec("dc_voltage", 10.0, 0.0040, 0.0008),
    RangeSpec("dc_voltage", 100.0, 0.0050, 0.0010),
)
METER_DCI: tuple[RangeSpec, ...] = (
    RangeSpec("dc_current", 0.01, 0.050, 0.020),
    RangeSpec("dc_current", 0.1, 0.050, 0.010),
    RangeSpec("dc_current", 1.0, 0.100, 0.010),
    RangeSpec("dc_current", 3.0, 0.120, 0.020),
    RangeSpec("dc_current", 10.0, 0.150, 0.050),
)
METER_OVERLOAD_FRACTION = 1.2  # a reading beyond 120 % of range is an overload (+/-9.9E37)
METER_NPLC_MIN = 0.02
METER_NPLC_MAX = 100.0
METER_SAMPLE_COUNT_MAX = 1000
METER_DEFAULT_NPLC = 1.0

# Noise of one reading (see meter.reading_noise_v): relative to range at 1 PLC of 50 Hz (20 ms).
METER_NOISE_RANGE_FRACTION_1PLC = 3.0e-6
METER_NOISE_FLOOR_V = 30e-9
METER_NOISE_FLOOR_A = 3e-9
METER_NOISE_REFERENCE_S = 0.020
# Thermal EMF of the Kelvin leads and relay contacts: a fixed offset drawn within ±this.
THERMAL_EMF_MAX_V = 3e-6

# -- supply ---------------------------------------------------------------------------------
SUPPLY_MAX_VOLTAGE_V = 30.0
SUPPLY_MAX_CURRENT_A = 10.0
SUPPLY_READBACK: tuple[RangeSpec, ...] = (
    RangeSpec("readback_voltage", SUPPLY_MAX_VOLTAGE_V, 0.05, 0.05),
    RangeSpec("readback_current", SUPPLY_MAX_CURRENT_A, 0.10, 0.05),
)
# How far the output differs from the programmed value (programming accuracy).
SUPPLY_PROGRAMMING: tuple[RangeSpec, ...] = (
    RangeSpec("program_voltage", SUPPLY_MAX_VOLTAGE_V, 0.03, 0.02),
    RangeSpec("program_current", SUPPLY_MAX_CURRENT_A, 0.10, 0.05),
)
SUPPLY_READBACK_NOISE_V = 0.2e-3
SUPPLY_READBACK_NOISE_A = 0.1e-3
# With real timing (sim/timing.py) a new voltage or current setting, or the output switched on, is reached
# along a first-order step response with this time constant: within 1 % after 4.6 τ = 9.2 ms.
SUPPLY_SETTLE_TAU_S = 2.0e-3

# -- electronic load ------------------------------------------------------------------------
LOAD_MAX_VOLTAGE_V = 60.0
LOAD_MAX_CURRENT_A = 30.0
LOAD_MIN_RESISTANCE_OHM = 0.05  # below its CC headroom the load saturates to this resistance
LOAD_READBACK: tuple[RangeSpec, ...] = (
    RangeSpec("readback_voltage", LOAD_MAX_VOLTAGE_V, 0.05, 0.05),
    RangeSpec("readback_current", LOAD_MAX_CURRENT_A, 0.10, 0.10),
)
LOAD_PROGRAMMING: tuple[RangeSpec, ...] = (RangeSpec("program_current", LOAD_MAX_CURRENT_A, 0.10, 0.05),)
LOAD_READBACK_NOISE_V = 0.5e-3
LOAD_READBACK_NOISE_A = 0.5e-3
# With real timing a new current setting, or the input switched on, settles with this time constant.
LOAD_SETTLE_TAU_S = 0.5e-3

# -- wiring -----------------------------------------------------------------------------------
LEAD_RESISTANCE_OHM = 0.020  # closes the loop when the load input is off
ERROR_QUEUE_DEPTH = 20


def range_for(specs: tuple[RangeSpec, ...], value: float) -> RangeSpec:
    """The smallest range whose full scale holds |value| (the largest one if none does)."""
    for spec in specs:
        if abs(value) <= spec.range * (1 + 1e-12):
            return spec
    return specs[-1]


def spec_for(specs: tuple[RangeSpec, ...], function: str) -> RangeSpec:
    return next(s for s in specs if s.function == function)


def draw_fixed_error(rng, spec: RangeSpec) -> tuple[float, float]:
    """A seeded (gain, offset) pair drawn uniformly within ±(reading_pct % of reading + range_pct % of range).

    Uniform, so that the rectangular type-B treatment of the spec (GUM 4.3.7) is honest against the sim.
    """
    return rng.uniform(-1, 1) * spec.reading_pct / 100.0, rng.uniform(-1, 1) * spec.range_pct / 100.0 * spec.range


# -- case-temperature sensor (a meter's temperature function on the element's case) -------------
#: Junction-to-case thermal resistance of the invented demo parts (K/W): a small fraction of
#: RθJA, as for through-hole and power-SMD packages (order of magnitude, common practice).
CASE_RTH_JC_K_PER_W = {"rectifier": 15.0, "schottky": 15.0, "pmos": 5.0, "nmos": 5.0, "resistor": 10.0}
CASE_RTH_JC_DEFAULT_K_PER_W = 10.0
#: The probe's fixed error (a thermocouple of standard tolerance and its cold junction): drawn
#: once, uniform within ±this; the reading noise is Gaussian with this standard deviation.
CASE_SENSOR_OFFSET_MAX_C = 0.5
CASE_SENSOR_NOISE_C = 0.03
