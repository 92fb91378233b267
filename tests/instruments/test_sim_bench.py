"""The roles against the simulated bench through real pyvisa-py over real loopback sockets.

Each injected fault must raise its own error type, and the guard must leave the sim's
outputs off (checked on the sim's in-process state, `running.bench`).
"""

from __future__ import annotations

import math

import pytest

from benchlog.instruments import (
    ConnectionLost,
    InstrumentError,
    InstrumentTimeout,
    NonsenseReply,
    SafetyLimit,
    WrongInstrument,
    open_role,
    probe,
    safe_state_guard,
)
from benchlog.sim.faults import FaultPlan

FAST = 0.5  # reply timeout for fault tests (s); the sim answers in well under a millisecond


@pytest.fixture
def bench(sim_bench):
    """The default simulated bench (P-MOSFET element, seed 1)."""
    return sim_bench()


@pytest.fixture
def bench_with(sim_bench):
    """Start a simulated bench with SimConfig overrides, e.g. faults=FaultPlan(...)."""
    return lambda **config: sim_bench(**config)


def _open_all(bench, meter_profile="sim-meter", timeout_s=None):
    r = bench.resources
    return (
        open_role("supply", r["supply"], "sim-supply", timeout_s=timeout_s),
        open_role("load", r["load"], "sim-load", timeout_s=timeout_s),
        open_role("meter", r["meter"], meter_profile, timeout_s=timeout_s),
    )


def _close(*roles):
    for role in roles:
        role.close()


def _power_on(supply, load):
    supply.set_voltage(12.0)
    supply.set_current_limit(2.0)
    load.set_current(0.5)
    load.set_input(True)
    supply.set_output(True)


def _assert_all_off(bench):
    state = bench.bench
    assert state.supply.output_on is False
    assert state.load.input_on is False
    assert state.supply.voltage_set_v == 0.0
    assert state.load.current_set_a == 0.0


# -- identity and profiles ------------------------------------------------------------


@pytest.mark.parametrize(
    "role, profile, model",
    [("supply", "sim-supply", "SIM-SUPPLY"), ("load", "sim-load", "SIM-LOAD"), ("meter", "sim-meter", "SIM-METER")],
)
def test_probe_matches_each_sim_profile(bench, role, profile, model):
    result = probe(bench.resources[role])
    assert result.idn.manufacturer == "BENCHLOG" and result.idn.model == model
    specific = [p for p in result.matches if not p.generic]
    assert profile in [p.name for p in specific] and {p.role for p in specific} == {role}
    assert result.matches[: len(specific)] == tuple(specific)  # specific profiles are listed first


def test_wrong_profile_for_resource_is_refused(bench):
    with pytest.raises(WrongInstrument):
        open_role("meter", bench.resources["supply"], "sim-meter")
    with pytest.raises(Exception) as info:
        open_role("meter", bench.resources["meter"], "sim-supply")
    assert "role" in str(info.value)


def test_generic_profiles_drive_the_sim(bench):
    # The generic profiles use the SCPI-99 forms the sim serves, so they work unchanged.
    r = bench.resources
    supply = open_role("supply", r["supply"], "generic-dc-supply")
    load = open_role("load", r["load"], "generic-electronic-load")
    meter = open_role("meter", r["meter"], "generic-dmm")
    try:
        with safe_state_guard(supply, load, meter):
            supply.set_voltage(5.0)
            supply.set_current_limit(1.0)
            supply.set_output(True)
            meter.configure_voltage(10.0, 1)
            (reading,) = meter.read()
            assert reading is not None and 0.0 <= reading < 5.0
        _assert_all_off(bench)
    finally:
        _close(supply, load, meter)


# -- set and read back ---------------------------------------------------------------


def test_set_and_read_back(bench):
    supply, load, meter = _open_all(bench)
    try:
        with safe_state_guard(supply, load, meter):
            supply.set_voltage(12.0)
            supply.set_current_limit(2.0)
            supply.check_errors()  # one round trip: the sim has handled every command before it
            assert bench.bench.supply.voltage_set_v == 12.0
            assert bench.bench.supply.current_set_a == 2.0
            load.set_current(0.75)
            load.set_input(True)
            supply.set_output(True)  # ends with an error-queue read on the supply
            load.check_errors()
            assert bench.bench.supply.output_on and bench.bench.load.input_on
            # the load carries its CC setpoint; readbacks within their profile specs (+ a small noise allowance)
            i = supply.measure_current()
            spec = supply.profile.accuracy_for("readback_current", 10.0)
            assert abs(i - 0.75) <= spec.half_width(0.75) + 0.01
            assert supply.mode() == "CV"
            v = supply.measure_voltage()
            assert abs(v - 12.0) <= supply.profile.accuracy_for("readback_voltage", 30.0).half_width(12.0) + 0.01
            assert load.measure_current() == pytest.approx(0.75, abs=0.05)
            meter.configure_voltage(1.0, 1)
            meter.set_samples(4)
            readings = meter.read()
            assert len(readings) == 4 and all(r is not None and 0.0 < r < 1.0 for r in readings)
        _assert_all_off(bench)
    finally:
        _close(supply, load, meter)


def test_supply_in_cc_reports_cc(bench):
    supply, load, meter = _open_all(bench)
    try:
        with safe_state_guard(supply, load, meter):
            supply.set_voltage(5.0)
            supply.set_current_limit(0.5)  # load input off: the leads nearly short the supply
            supply.set_output(True)
            assert supply.mode() == "CC"
        assert supply.mode() == "OFF"
    finally:
        _close(supply, load, meter)


def test_meter_without_measure_subsystem(bench_with):
    bench = bench_with(meter_has_measure=False)
    meter = open_role("meter", bench.resources["meter"], "sim-meter-no-measure")
    try:
        meter.configure_voltage(10.0, 0.2)
        meter.set_samples(3)
        assert len(meter.read()) == 3
    finally:
        meter.close()
    # a profile that relies on MEASure gets no reply, and the error queue names the command
    meter = open_role("meter", bench.resources["meter"], "sim-meter", timeout_s=FAST)
    try:
        with pytest.raises(InstrumentTimeout):
            meter.measure_voltage()
        with pytest.raises(InstrumentError) as info:
            meter.check_errors()
        assert info.value.code == -113 and info.value.command.startswith("MEASure:VOLTage:DC? 100.0")
    finally:
        meter.close()


def test_overload_reading_is_none(bench):
    supply, load, meter = _open_all(bench)
    try:
        with safe_state_guard(supply, load, meter):
            supply.set_voltage(12.0)
            supply.set_current_limit(5.0)
            load.set_current(5.0)
            load.set_input(True)
            supply.set_output(True)
            meter.configure_voltage(0.1, 1)  # the element's drop at 5 A is far above 120 % of 0.1 V
            assert meter.read() == (None,)
    finally:
        _close(supply, load, meter)


def test_error_queue_names_the_command(bench):
    supply, load, meter = _open_all(bench)
    try:
        supply.transport.write("VOLTage:BOGus 1")  # a header the sim does not know
        with pytest.raises(InstrumentError) as info:
            supply.check_errors(after="VOLTage:BOGus 1")
        assert info.value.code == -113 and info.value.command == "VOLTage:BOGus 1"
        supply.set_voltage(1.0)
        supply.check_errors()  # queue drained; a good command leaves it empty
    finally:
        _close(supply, load, meter)


# -- injection: refused before anything is sent ---------------------------------------


@pytest.mark.parametrize("value", ["1;*RST", "1\nOUTP ON", math.nan, math.inf, 1e300, -5.0, True])
def test_injection_attempts_never_reach_the_sim(bench, value):
    supply, load, meter = _open_all(bench)
    try:
        supply.set_voltage(3.0)
        supply.check_errors()
        before = bench.bench.supply.voltage_set_v
        with pytest.raises(SafetyLimit):
            supply.set_voltage(value)
        with pytest.raises(SafetyLimit):
            load.set_current(value)
        with pytest.raises(SafetyLimit):
            meter.configure_voltage(value, 1)
        assert bench.bench.supply.voltage_set_v == before == 3.0
        supply.check_errors()  # the sim saw no malformed command
        assert supply.transport.query("*IDN?").startswith("BENCHLOG,SIM-SUPPLY")
    finally:
        _close(supply, load, meter)


# -- each fault: right error type, outputs off afterwards ------------------------------


def _run_until_fault(supply, load, meter, action, *, limit=40):
    """Repeat `action` until the fault fires (it raises); fails the test if it never does."""
    for _ in range(limit):
        action()
    pytest.fail("the injected fault never fired")


def test_dropped_connection(bench_with):
    bench = bench_with(faults=FaultPlan(drop_after_commands=12, role="supply"))
    supply, load, meter = _open_all(bench, timeout_s=FAST)
    try:
        with pytest.raises(ConnectionLost):
            with safe_state_guard(supply, load, meter, report=lambda text: None):
                _power_on(supply, load)
                _run_until_fault(supply, load, meter, supply.measure_voltage)
        _assert_all_off(bench)  # the guard reopened the supply link to switch it off
    finally:
        _close(supply, load, meter)


def test_hung_query_times_out_and_next_reply_is_right(bench_with):
    bench = bench_with(faults=FaultPlan(hang_after=12, role="supply"))
    supply, load, meter = _open_all(bench, timeout_s=FAST)
    try:
        with pytest.raises(InstrumentTimeout):
            with safe_state_guard(supply, load, meter, report=lambda text: None):
                _power_on(supply, load)
                _run_until_fault(supply, load, meter, supply.measure_voltage)
        _assert_all_off(bench)
        # the reply to the next query belongs to that query
        assert supply.transport.query("*IDN?").startswith("BENCHLOG,SIM-SUPPLY,")
        assert float(supply.transport.query("SOURce:VOLTage?")) == 0.0
        assert supply.transport.query("OUTPut:STATe?") == "0"
    finally:
        _close(supply, load, meter)


def test_garbage_reply_is_nonsense(bench_with):
    bench = bench_with(faults=FaultPlan(garbage_after=14, role="meter"))
    supply, load, meter = _open_all(bench, timeout_s=FAST)
    try:
        with pytest.raises(NonsenseReply) as info:
            with safe_state_guard(supply, load, meter, report=lambda text: None):
                _power_on(supply, load)
                meter.configure_voltage(10.0, 1)
                _run_until_fault(supply, load, meter, meter.read)
        assert "GARBLED" in info.value.reply
        _assert_all_off(bench)
    finally:
        _close(supply, load, meter)


def test_queue_error_is_instrument_error(bench_with):
    bench = bench_with(faults=FaultPlan(queue_error_after=14, role="supply"))
    supply, load, meter = _open_all(bench, timeout_s=FAST)
    try:
        with pytest.raises(InstrumentError) as info:
            with safe_state_guard(supply, load, meter, report=lambda text: None):
                _power_on(supply, load)

                def step():
                    supply.set_voltage(12.0)
                    supply.check_errors()

                _run_until_fault(supply, load, meter, step)
        assert info.value.code == -300 and info.value.command
        _assert_all_off(bench)
    finally:
        _close(supply, load, meter)


def test_supply_trip_is_detected(bench_with):
    bench = bench_with(faults=FaultPlan(supply_trip_after=14, role="supply"))
    supply, load, meter = _open_all(bench, timeout_s=FAST)
    try:
        with safe_state_guard(supply, load, meter, report=lambda text: None):
            _power_on(supply, load)
            for _ in range(40):
                if supply.tripped():
                    break
            else:
                pytest.fail("the trip never showed")
            assert bench.bench.supply.output_on is False
            with pytest.raises(InstrumentError):
                supply.set_output(True)  # refused by the instrument until the protection is cleared
            supply.clear_protection()
            assert supply.tripped() is False
        _assert_all_off(bench)
    finally:
        _close(supply, load, meter)


def test_reply_latency_past_the_timeout(bench_with):
    bench = bench_with(faults=FaultPlan(extra_latency_s=0.4, role="supply"))
    # connect with a patient timeout, then shorten it: every supply reply now comes after the timeout
    supply = open_role("supply", bench.resources["supply"], "sim-supply", timeout_s=2.0)
    load = open_role("load", bench.resources["load"], "sim-load", timeout_s=FAST)
    try:
        _power_on(supply, load)
        supply.transport.timeout_s = 0.2
        with pytest.raises(InstrumentTimeout) as info:
            with safe_state_guard(supply, load, report=lambda text: None):
                supply.measure_voltage()
        assert "MEASure:VOLTage:DC?" in str(info.value)
        load.check_errors()
        assert bench.bench.supply.output_on is False and bench.bench.load.input_on is False
    finally:
        _close(supply, load)


def test_cli_probe_against_the_sim(bench):
    import subprocess
    import sys
    from pathlib import Path

    repo = Path(__file__).resolve().parents[2]
    out = subprocess.run([sys.executable, "-m", "benchlog", "profiles", "probe", bench.resources["load"]],
                         capture_output=True, text=True, cwd=repo, timeout=60)
    assert out.returncode == 0, out.stderr
    fields = dict(line.split(None, 1) for line in out.stdout.splitlines())
    assert fields["manufacturer"] == "BENCHLOG" and fields["model"] == "SIM-LOAD"
    assert fields["matches"] == "sim-load (load)"
    assert "generic-electronic-load (load)" in fields["generic"]
