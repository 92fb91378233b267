"""The simulator's real timing: integration on every read path, settling of a new setpoint, and the instant setting.

On an injected clock the instruments wait with the injected sleep, so each test
checks the exact time a message took on the bench clock, not wall time. One
test measures wall time on the real clock, only as a lower bound: a reading
cannot come back faster than its integration.
"""

from __future__ import annotations

import math
import time

import pytest

from benchlog.scpi.replies import parse_number, parse_numbers
from benchlog.sim import specs
from benchlog.sim.timing import FirstOrder, integration_time_s


def _timed(clock, ask):
    before = clock()
    answer = ask()
    return answer, clock() - before


@pytest.fixture
def timed_bench(clocked_sim_bench, clients):
    def start(element="resistor", **overrides):
        clock, running = clocked_sim_bench(element, 4, start_s=100.0, **overrides)
        meter = clients.open(running.resources["meter"])
        supply = clients.open(running.resources["supply"])
        return clock, running, supply, meter
    return start


def test_integration_time_is_samples_times_nplc_over_line_frequency():
    # 1 PLC is one period of the mains: 20 ms at 50 Hz, 16.667 ms at 60 Hz (definition of NPLC, common practice)
    assert integration_time_s(1, 50) == pytest.approx(0.020)
    assert integration_time_s(10, 60, samples=5) == pytest.approx(5 * 10 / 60)


@pytest.mark.parametrize("line_hz, nplc, count", [(50.0, 1.0, 1), (60.0, 10.0, 5), (50.0, 0.02, 100)])
def test_read_takes_its_integration_time(timed_bench, line_hz, nplc, count):
    clock, _, _, meter = timed_bench(line_frequency_hz=line_hz)
    meter.write(f"CONF:VOLT:DC 1;:VOLT:NPLC {nplc:g};:SAMP:COUN {count}")
    meter.query("*OPC?")
    readings, took = _timed(clock, lambda: parse_numbers(meter.query("READ?")))
    assert len(readings) == count
    assert took == pytest.approx(count * nplc / line_hz, rel=1e-9)  # t = N·NPLC/f_line (common practice)


def test_measure_takes_its_integration_time(timed_bench):
    clock, _, _, meter = timed_bench()
    meter.write("VOLT:NPLC 10")
    _, took = _timed(clock, lambda: meter.query("MEAS:VOLT:DC? 1"))
    assert took == pytest.approx(10 / 50.0, rel=1e-9)


def test_initiate_returns_at_once_and_fetch_waits_for_the_integration(timed_bench):
    clock, _, _, meter = timed_bench()
    meter.write("CONF:VOLT:DC 1;:VOLT:NPLC 5;:SAMP:COUN 2")
    meter.query("*OPC?")
    _, took = _timed(clock, lambda: (meter.write("INIT"), meter.query("*STB?")))
    assert took == 0.0  # INITiate starts the reading and the meter goes on answering
    _, took = _timed(clock, lambda: meter.query("FETC?"))
    assert took == pytest.approx(2 * 5 / 50.0, rel=1e-9)
    # a fetch after the integration has ended does not wait again
    _, took = _timed(clock, lambda: meter.query("FETC?"))
    assert took == 0.0


def test_fetch_waits_only_for_what_is_left_of_the_integration(timed_bench):
    clock, _, _, meter = timed_bench()
    meter.write("CONF:VOLT:DC 1;:VOLT:NPLC 10")  # 200 ms
    meter.query("*OPC?")
    meter.write("INIT")
    meter.query("*STB?")  # the INIT has been handled
    clock.sleep(0.150)
    _, took = _timed(clock, lambda: meter.query("FETC?"))
    assert took == pytest.approx(0.050, rel=1e-9)


def test_opc_query_waits_for_a_reading_in_progress(timed_bench):
    clock, _, _, meter = timed_bench()
    meter.write("CONF:VOLT:DC 1;:VOLT:NPLC 2")
    meter.query("*OPC?")
    meter.write("INIT")
    # IEEE 488.2 10.19: *OPC? answers once every pending operation has completed
    _, took = _timed(clock, lambda: meter.query("*OPC?"))
    assert took == pytest.approx(2 / 50.0, rel=1e-9)


def test_instant_timing_takes_no_time(timed_bench):
    clock, _, _, meter = timed_bench(timing="instant")
    meter.write("VOLT:NPLC 100;:SAMP:COUN 10")
    for ask in (lambda: meter.query("READ?"), lambda: meter.query("MEAS:VOLT:DC?"),
                lambda: (meter.write("INIT"), meter.query("FETC?"))):
        _, took = _timed(clock, ask)
        assert took == 0.0


def test_first_order_follows_the_step_response():
    # x(t) = x1 + (x0 - x1)·e^(-t/τ): step response of a first-order system (control handbooks, common practice)
    x = FirstOrder(0.002, 0.0, now_s=10.0)
    x.aim(1.0, 10.0)
    for t in (0.0, 0.001, 0.002, 0.010):
        assert x.value(10.0 + t) == pytest.approx(1.0 - math.exp(-t / 0.002), abs=1e-12)
    x.aim(3.0, 10.004)  # a new target part way: starts from where the value is
    start = 1.0 - math.exp(-2.0)
    assert x.value(10.006) == pytest.approx(3.0 + (start - 3.0) * math.exp(-1.0), rel=1e-12)
    assert FirstOrder(0.0).value(0.0) == 0.0
    instant = FirstOrder(0.0)
    instant.aim(2.5, 0.0)
    assert instant.value(0.0) == 2.5


def test_a_new_supply_setpoint_settles_as_a_first_order_response_the_meter_sees(timed_bench):
    """Resistor on the supply in CC: the drop is R·I, and I rises as 1 - e^(-t/τ) after output on."""
    clock, running, supply, meter = timed_bench(element_params={"r_on_ohm": 0.05, "tempco_per_k": 0.0})
    tau = specs.SUPPLY_SETTLE_TAU_S
    nplc = 0.02  # 0.4 ms windows, short against τ
    window = nplc / 50.0
    meter.write(f"CONF:VOLT:DC 0.1;:VOLT:NPLC {nplc}")
    supply.write("VOLT 5;CURR 1")
    zero = statistics_mean([parse_number(meter.query("READ?")) for _ in range(20)])  # thermal EMF and offset
    supply.write("OUTP ON")
    supply.query("*OPC?")  # handled at once: the output is now rising
    rising = [parse_number(meter.query("READ?")) for _ in range(6)]
    clock.sleep(60 * tau)
    settled = statistics_mean([parse_number(meter.query("READ?")) for _ in range(20)])
    sigma = specs.METER_NOISE_RANGE_FRACTION_1PLC * 0.1 * math.sqrt(specs.METER_NOISE_REFERENCE_S / window)
    for k, reading in enumerate(rising):
        mid = (k + 0.5) * window  # each READ? integrates the next window; it sees the middle of it
        expected = zero + (settled - zero) * (1.0 - math.exp(-mid / tau))
        assert reading == pytest.approx(expected, abs=6 * sigma)
    assert rising[0] - zero < 0.2 * (settled - zero)  # visibly unsettled: what a settle rule has to catch
    supply.write("OUTP OFF")


def statistics_mean(values):
    return sum(values) / len(values)


def test_instant_timing_applies_a_setpoint_at_once(timed_bench):
    clock, running, supply, meter = timed_bench(timing="instant", element_params={"r_on_ohm": 0.05})
    supply.write("VOLT 5;CURR 1;OUTP ON")
    supply.query("*OPC?")
    first = parse_number(meter.query("MEAS:VOLT:DC? 0.1"))
    assert first == pytest.approx(running.bench.operating_point().element_v, abs=1e-5)
    supply.write("OUTP OFF")


def test_a_reading_on_the_real_clock_is_no_faster_than_its_integration(sim_bench, clients):
    running = sim_bench("resistor", timing="real")  # real clock, real waiting
    meter = clients.open(running.resources["meter"])
    meter.write("CONF:VOLT:DC 1;:VOLT:NPLC 5;:SAMP:COUN 2")  # 2 · 5/50 = 200 ms
    meter.query("*OPC?")
    start = time.perf_counter()
    meter.query("READ?")
    took = time.perf_counter() - start
    assert took >= 0.200  # a lower bound only: the floor of physics, not a speed goal
    start = time.perf_counter()
    meter.write("INIT")
    meter.query("FETC?")
    assert time.perf_counter() - start >= 0.200
