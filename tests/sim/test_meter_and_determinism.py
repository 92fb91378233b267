"""Meter noise and accuracy against the documented model, seeded determinism, self-heating over time."""

from __future__ import annotations

import statistics

import pytest

from benchlog.scpi.replies import parse_number, parse_numbers
from benchlog.sim import specs
from benchlog.sim.meter import integration_time_s, reading_noise_v
from benchlog.sim.specs import range_for


def test_integration_time_is_nplc_over_line_frequency():
    # 1 PLC = 20 ms at 50 Hz and 16.667 ms at 60 Hz (the definition of NPLC, common practice)
    assert integration_time_s(1, 50) == pytest.approx(0.020)
    assert integration_time_s(1, 60) == pytest.approx(0.016667, abs=1e-6)
    assert integration_time_s(10, 50) == pytest.approx(0.200)


def test_noise_falls_as_one_over_root_integration_time():
    base = reading_noise_v(10.0, 1, 50)
    assert reading_noise_v(10.0, 100, 50) == pytest.approx(base / 10, rel=0.01)  # white noise: 1/sqrt(t)
    assert reading_noise_v(10.0, 1, 60) > base  # a shorter integration at 60 Hz
    assert reading_noise_v(0.1, 100, 50) >= specs.METER_NOISE_FLOOR_V


def test_reading_spread_matches_the_documented_sigma(sim_bench, clients):
    running = sim_bench("resistor", seed=4, element_params={"r_on_ohm": 0.05})
    supply = clients.open(running.resources["supply"])
    meter = clients.open(running.resources["meter"])
    supply.write("VOLT 5;CURR 1;OUTP ON")
    supply.query("*OPC?")
    meter.write("CONF:VOLT:DC 0.1;:VOLT:NPLC 0.02;:SAMP:COUN 1000")
    readings = parse_numbers(meter.query("READ?"))
    sigma = reading_noise_v(0.1, 0.02, 50)
    # sample standard deviation of 1000 Gaussian readings: relative standard error 1/sqrt(2(n-1)) ≈ 2.2 %
    assert statistics.stdev(readings) == pytest.approx(sigma, rel=0.12)
    supply.write("OUTP OFF")


@pytest.mark.parametrize("seed", [1, 2, 3, 4, 5])
def test_fixed_meter_error_stays_within_the_accuracy_spec(sim_bench, clients, seed):
    running = sim_bench("resistor", seed=seed, element_params={"r_on_ohm": 0.05})
    supply = clients.open(running.resources["supply"])
    meter = clients.open(running.resources["meter"])
    supply.write("VOLT 5;CURR 1.5;OUTP ON")
    supply.query("*OPC?")
    meter.write("CONF:VOLT:DC 0.1;:VOLT:NPLC 100;:SAMP:COUN 20")
    mean = statistics.fmean(parse_numbers(meter.query("READ?")))
    true = running.bench.operating_point().element_v
    spec = range_for(specs.METER_DCV, 0.1)
    limit = spec.limit(true) + specs.THERMAL_EMF_MAX_V + 4 * reading_noise_v(0.1, 100, 50) / 20**0.5
    assert abs(mean - true) <= limit
    supply.write("OUTP OFF")


def _trace(running, clients, count=30):
    supply = clients.open(running.resources["supply"])
    meter = clients.open(running.resources["meter"])
    supply.write("VOLT 12;CURR 2;OUTP ON")
    supply.query("*OPC?")
    values = [meter.query("MEAS:VOLT? 1") for _ in range(count)]
    values.append(supply.query("MEAS:CURR?"))
    supply.write("OUTP OFF")
    return values


def test_same_seed_same_replies(sim_bench, clients):
    clock = lambda: 0.0  # noqa: E731 - a frozen clock keeps the junction temperature out of it
    first = _trace(sim_bench("schottky", seed=11, clock=clock), clients)
    second = _trace(sim_bench("schottky", seed=11, clock=clock), clients)
    other = _trace(sim_bench("schottky", seed=12, clock=clock), clients)
    assert first == second and first != other
    assert sim_bench("pmos", seed=3).truth() == sim_bench("pmos", seed=3).truth()
    assert sim_bench("pmos", seed=3).truth() != sim_bench("pmos", seed=4).truth()


def test_truth_keys_are_si_suffixed(sim_bench):
    pmos = sim_bench("pmos", seed=1).truth()
    assert {"r_on_ohm", "vgs_th_v", "rth_ja_k_per_w", "cth_j_per_k", "tempco_per_k", "at_c"} <= set(pmos)
    assert pmos["at_c"] == 25.0
    diode = sim_bench("rectifier", seed=1).truth()
    assert {"ideality", "i_s_a", "r_s_ohm", "tempco_v_per_k", "rth_ja_k_per_w"} <= set(diode)
    fixed = sim_bench("pmos", seed=1, element_params={"r_on_ohm": 0.012, "zener_v": 10.0}).truth()
    assert fixed["r_on_ohm"] == 0.012 and fixed["zener_v"] == 10.0


def test_self_heating_follows_the_injected_clock_to_jesd51_steady_state(sim_bench, clients):
    # 2 A through a 10 mΩ element with RθJA = 62.5 K/W at 25 °C: Tj = Ta + P·RθJA = 27.5 °C (JESD51-2).
    # No case capacity: the network's single-pole special case, τ = RθJA·Cth.
    now = [0.0]
    running = sim_bench("resistor", seed=1, clock=lambda: now[0],
                        element_params={"r_on_ohm": 0.010, "tempco_per_k": 0.0, "rth_ja_k_per_w": 62.5,
                                        "cth_j_per_k": 0.2, "cth_case_j_per_k": 0.0})
    supply = clients.open(running.resources["supply"])
    supply.write("VOLT 12;CURR 2;OUTP ON")
    supply.query("*OPC?")
    assert running.bench.junction_c == pytest.approx(25.0)
    now[0] = 12.5  # one time constant (62.5 K/W × 0.2 J/K)
    supply.query("*OPC?")
    current = running.bench.operating_point().current_a
    rise = current**2 * 0.010 * 62.5
    assert running.bench.junction_c == pytest.approx(25.0 + rise * (1 - 2.718281828459045**-1), rel=1e-3)
    now[0] = 1000.0
    supply.query("*OPC?")
    assert running.bench.junction_c == pytest.approx(25.0 + rise, rel=1e-6)
    assert running.bench.junction_c == pytest.approx(27.5, abs=0.02)  # current within the supply's spec


def test_self_heating_shows_in_the_channel_drop(sim_bench, clients):
    now = [0.0]
    running = sim_bench("pmos", seed=1, clock=lambda: now[0], element_params={"r_on_ohm": 0.010})
    supply, load, meter = (clients.open(running.resources[r]) for r in ("supply", "load", "meter"))
    supply.write("VOLT 12;CURR 8")
    load.write("CURR 5;INP ON")
    load.query("*OPC?")
    supply.write("OUTP ON")
    supply.query("*OPC?")
    cold = parse_number(meter.query("MEAS:VOLT? 0.1"))
    now[0] = 120.0  # ten time constants later
    hot = parse_number(meter.query("MEAS:VOLT? 0.1"))
    tj = running.bench.junction_c
    assert tj > 35.0  # 0.25 W × 62.5 K/W, rising further as R_DS(on) rises
    assert hot / cold == pytest.approx(1 + 0.005 * (tj - 25.0), rel=0.01)  # R_DS(on)·(1 + α ΔT)
    supply.write("OUTP OFF")
