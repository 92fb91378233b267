"""The simulated case-temperature channel, read as any client would: real pyvisa-py on loopback sockets."""

from __future__ import annotations

import math

import numpy as np
import pytest

from benchlog.instruments.connect import open_role
from benchlog.sim import specs

from .visa_helpers import Clients, errors


@pytest.fixture
def clients():
    c = Clients()
    yield c
    c.close()


class FakeClock:
    def __init__(self) -> None:
        self.t = 1000.0

    def __call__(self) -> float:
        return self.t


def test_case_sits_p_rthjc_below_the_junction_in_steady_state(sim_bench, clients):
    # RθJC is defined by Tj − Tc = P·RθJC (JESD51 series, common practice). Hold 1 A through the
    # rectifier until the junction settles (injected clock), then compare the probe with the truth.
    clock = FakeClock()
    bench = sim_bench("rectifier", seed=4, clock=clock, case_sensor=True)
    sensor, supply = clients.open(bench.resources["sensor"]), clients.open(bench.resources["supply"])
    assert sensor.query("*IDN?").startswith("BENCHLOG,SIM-CASE-METER,")
    supply.write("VOLT 5;:CURR 1;:OUTP ON")
    supply.query("*OPC?")
    clock.t += 3600.0  # many thermal time constants: steady state
    readings = np.array([float(sensor.query("MEAS:TEMP?")) for _ in range(400)])
    sim = bench.bench
    op = sim.operating_point()
    rth_jc = specs.CASE_RTH_JC_K_PER_W["rectifier"]
    assert op.power_w > 0.5 and sim.junction_c > 40.0  # a real difference to see
    want_case = sim.junction_c - op.power_w * rth_jc
    offset = bench.truth()["case_sensor_offset_c"]
    assert abs(offset) <= specs.CASE_SENSOR_OFFSET_MAX_C
    # mean of 400 readings: standard error 0.03/√400 = 0.0015 K; 6σ band
    assert readings.mean() == pytest.approx(want_case + offset, abs=0.01)
    assert readings.std(ddof=1) == pytest.approx(specs.CASE_SENSOR_NOISE_C, rel=0.15)  # numpy sample σ
    assert sim.junction_c - (readings.mean() - offset) == pytest.approx(op.power_w * rth_jc, abs=0.01)
    assert errors(sensor) == []


def test_without_power_the_case_reads_the_ambient_and_other_meters_have_no_probe(sim_bench, clients):
    bench = sim_bench("pmos", seed=2, ambient_c=40.0, case_sensor=True)
    sensor = clients.open(bench.resources["sensor"])
    sensor.write("CONF:TEMP TC,K")
    values = [float(v) for v in sensor.query("READ?").split(",")]
    assert values[0] == pytest.approx(40.0 + bench.truth()["case_sensor_offset_c"], abs=0.2)
    meter = clients.open(bench.resources["meter"])
    meter.write("MEAS:TEMP?")
    assert errors(meter) == [-113]  # undefined header: the drop meter has no probe


def test_a_case_sensor_shifts_no_other_draw(sim_bench):
    # Its own seeded streams: the drop meter's fixed errors are the same with and without the probe.
    plain = sim_bench("pmos", seed=9).truth()
    with_probe = sim_bench("pmos", seed=9, case_sensor=True).truth()
    assert plain["meter_thermal_emf_v"] == with_probe["meter_thermal_emf_v"]
    assert plain["r_on_ohm"] == with_probe["r_on_ohm"]


def test_meter_role_reads_the_probe_and_refuses_nonsense(sim_bench):
    bench = sim_bench("resistor", seed=1, ambient_c=30.0, case_sensor=True)
    meter = open_role("meter", bench.resources["sensor"], "sim-case-meter")
    try:
        assert meter.can_measure_temperature
        meter.configure_temperature()
        t = meter.measure_temperature()
        assert math.isfinite(t) and abs(t - 30.0) < 1.0
    finally:
        meter.close()
