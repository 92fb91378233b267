"""The simulated instruments over real sockets through real pyvisa-py: SCPI-99 forms, IEEE 488.2, error queue."""

from __future__ import annotations

import time

import pytest
from pyvisa.errors import VisaIOError

from benchlog.scpi.codes import STANDARD_ERRORS
from benchlog.scpi.replies import parse_bool, parse_error_entry, parse_idn, parse_int, parse_number, parse_numbers

from .visa_helpers import errors


def test_idn_and_common_commands(bench3):
    running, supply, load, meter = bench3
    idn = parse_idn(supply.query("*IDN?"))
    assert (idn.manufacturer, idn.model, idn.serial) == ("BENCHLOG", "SIM-SUPPLY", "S000001")
    assert parse_idn(load.query("*IDN?")).model == "SIM-LOAD"
    assert parse_idn(meter.query("*IDN?")).model == "SIM-METER"
    assert supply.query("*OPC?") == "1" and supply.query("*TST?") == "0"
    assert parse_int(supply.query("*ESR?")) & 128  # power-on bit after start (IEEE 488.2 11.5.1.1.2)
    assert parse_int(supply.query("*ESR?")) == 0  # reading clears it
    supply.write("*OPC")
    assert parse_int(supply.query("*ESR?")) == 1
    supply.write("*WAI")
    assert errors(supply) == []


def test_scpi99_long_short_and_optional_forms(bench3):
    _, supply, _, _ = bench3
    supply.write("SOURce:VOLTage:LEVel:IMMediate:AMPLitude 5.5")
    assert parse_number(supply.query("VOLT?")) == 5.5
    supply.write("volt 6")
    assert parse_number(supply.query("SOUR:VOLT:LEV?")) == 6.0
    supply.write("SOUR:VOLT 7;CURR 1.5")  # compound: CURR continues SOUR:
    # response message units are separated by ';' (IEEE 488.2 8.4.1)
    assert [parse_number(x) for x in supply.query("VOLT?;CURR?").split(";")] == [7.0, 1.5]
    supply.write("OUTPut1:STATe ON")
    assert parse_bool(supply.query("OUTP?"))
    supply.write("OUTP OFF")
    assert errors(supply) == []


@pytest.mark.parametrize(
    "message, code",
    [
        ("VOLT 1;;CURR 1", -100),  # empty program unit
        ('VOLT "12', -102),  # unterminated string
        ("*RST 1", -108),  # parameter not allowed
        ("VOLT", -109),  # missing parameter
        ("VOLTA 1", -113),  # not a header (neither short nor long form)
        ("OUTP ON;:OUTP:POL INV", -221),  # polarity change with the output on
        ("VOLT 31", -222),  # above the 30 V rating
        ("OUTP MAYBE", -224),  # not ON/OFF/1/0
    ],
)
def test_standard_error_codes_on_the_supply(bench3, message, code):
    _, supply, _, _ = bench3
    supply.write(message)
    codes = errors(supply)
    assert code in codes
    supply.write("OUTP OFF")


def test_execution_error_when_switching_on_a_tripped_supply(sim_bench, clients):
    from benchlog.sim.faults import FaultPlan

    running = sim_bench("pmos", faults=FaultPlan(supply_trip_after=0))
    supply = clients.open(running.resources["supply"])
    supply.write("OUTP ON")
    assert parse_bool(supply.query("OUTP:PROT:TRIP?"))
    entry = parse_error_entry(supply.query("SYST:ERR?"))
    assert entry.code == -200 and entry.text.startswith(STANDARD_ERRORS[-200])
    supply.write("OUTP:PROT:CLE")
    supply.write("OUTP ON")
    assert parse_bool(supply.query("OUTP?")) and not parse_bool(supply.query("OUTP:PROT:TRIP?"))
    supply.write("OUTP OFF")


def test_error_entry_texts_are_the_standard_ones(bench3):
    _, supply, _, _ = bench3
    supply.write("NOPE")
    entry = parse_error_entry(supply.query("SYST:ERR?"))
    assert entry.code == -113 and entry.text.split(";")[0] == "Undefined header"
    assert supply.query("SYST:ERR?") == '+0,"No error"'


def test_queue_overflow_replaces_the_newest_entry_with_350(bench3):
    _, supply, _, _ = bench3
    for _ in range(25):
        supply.write("NOPE")
    codes = errors(supply)
    # SCPI-99 vol. 2 21.8: a full queue keeps its entries and the last one becomes -350
    assert len(codes) == 20 and codes[:19] == [-113] * 19 and codes[-1] == -350


def test_query_interrupted_by_a_new_message_gives_410(sim_bench, clients):
    running = sim_bench("resistor", latency_s=0.3)
    meter = clients.open(running.resources["meter"])
    meter.write("READ?")  # reply now waits 0.3 s ...
    meter.write("SAMP:COUN 1")  # ... and a new message arrives before it was read
    time.sleep(0.4)
    meter.timeout = 3000
    assert parse_error_entry(meter.query("SYST:ERR?")).code == -410
    assert parse_error_entry(meter.query("SYST:ERR?")).code == 0  # and the stale reading never arrives


def test_a_read_with_no_query_pending_times_out_instead_of_420(bench3):
    # -420 "Query UNTERMINATED" needs a read request, which a raw socket does not carry: the sim
    # cannot see the read, so the client's read times out and nothing is queued.
    _, supply, _, _ = bench3
    supply.timeout = 200
    with pytest.raises(VisaIOError):
        supply.read()
    supply.timeout = 2000
    assert errors(supply) == []
    assert STANDARD_ERRORS[-420] == "Query UNTERMINATED"


def test_load_settings_and_errors(bench3):
    _, _, load, _ = bench3
    load.write("FUNC CURR;CURR 2.5;INP ON")
    assert load.query("FUNC?") == "CURR" and parse_number(load.query("CURR?")) == 2.5
    assert parse_bool(load.query("INP?"))
    load.write("FUNC RES")
    load.write("CURR 31")
    assert errors(load) == [-221, -222]
    load.write("INP OFF")


def test_meter_subsystems_and_errors(bench3):
    _, _, _, meter = bench3
    meter.write("CONF:VOLT:DC 0.1;:SENS:VOLT:DC:NPLC 10;:SAMP:COUN 4;:TRIG:SOUR IMM")
    assert parse_number(meter.query("VOLT:RANG?")) == 0.1
    assert parse_number(meter.query("VOLT:NPLC?")) == 10
    readings = parse_numbers(meter.query("READ?"))
    assert len(readings) == 4 and all(abs(r) < 1e-4 for r in readings)  # output off: only EMF + noise
    meter.write("INIT")
    assert len(parse_numbers(meter.query("FETC?"))) == 4
    meter.write("CONF:CURR")  # a new configuration clears the readings
    meter.write("SAMP:COUN 0;:TRIG:SOUR BUS;:VOLT:NPLC 1000")
    assert errors(meter) == [-222, -221, -222]
    meter.timeout = 300
    with pytest.raises(VisaIOError):
        meter.query("FETC?")  # no readings since CONFigure: -230 and no reply
    meter.timeout = 2000
    assert errors(meter) == [-230]


def test_supply_cv_cc_status_and_readback(bench3):
    running, supply, load, meter = bench3
    supply.write("VOLT 12;CURR 5;OUTP ON")  # load off: the lead short, the current limit binds
    supply.query("*OPC?")  # a write on one socket is not ordered with a query on another
    assert parse_int(supply.query("STAT:OPER:COND?")) == 1024
    assert parse_number(supply.query("MEAS:CURR?")) == pytest.approx(5.0, rel=0.003)
    assert parse_number(supply.query("MEAS:VOLT?")) < 1.5  # only drop + lead drop
    assert running.bench.operating_point().conduction == "body_diode"
    supply.write("OUTP OFF;CURR 8")
    load.write("CURR 5;INP ON")
    load.query("*OPC?")
    supply.write("OUTP ON")
    assert parse_int(supply.query("STAT:OPER:COND?")) == 256
    assert parse_number(supply.query("MEAS:VOLT?")) == pytest.approx(12.0, rel=0.002)
    assert parse_number(load.query("MEAS:CURR?")) == pytest.approx(5.0, rel=0.005)
    drop = parse_number(meter.query("MEAS:VOLT? 0.1"))
    r_on = running.truth()["r_on_ohm"]
    assert drop == pytest.approx(5.0 * r_on, rel=0.01)
    supply.write("OUTP OFF")
    assert parse_int(supply.query("STAT:OPER:COND?")) == 0
    supply.query("*OPC?")
    load.write("INP OFF")


def test_meter_overload_value(bench3):
    _, supply, _, meter = bench3
    supply.write("VOLT 12;CURR 5;OUTP ON")  # body diode ≈ 0.9 V on the fixed 0.1 V range
    supply.query("*OPC?")
    reply = meter.query("MEAS:VOLT? 0.1")
    assert parse_number(reply) is None and float(reply) == pytest.approx(9.9e37)
    assert parse_number(meter.query("MEAS:VOLT? 1")) == pytest.approx(0.9, abs=0.15)
    supply.write("OUTP OFF")


def test_reversed_polarity_blocks(bench3):
    _, supply, _, meter = bench3
    supply.write("OUTP:POL INV;:VOLT 12;CURR 1;OUTP ON")
    supply.query("*OPC?")
    assert supply.query("OUTP:POL?") == "INV"
    assert parse_number(meter.query("MEAS:VOLT? 100")) == pytest.approx(-12.0, rel=0.002)
    assert parse_number(supply.query("MEAS:CURR?")) < 0.005
    supply.write("OUTP OFF;:OUTP:POL NORM")
    assert errors(supply) == []


def test_rst_switches_off_and_keeps_the_queue(bench3):
    running, supply, _, _ = bench3
    supply.write("VOLT 5;OUTP ON;NOPE")
    supply.write("*RST")
    supply.query("*OPC?")
    assert not running.bench.supply.output_on and parse_number(supply.query("VOLT?")) == 0.0
    assert errors(supply) == [-113]
    supply.write("NOPE;*CLS")  # the command error ends the message: *CLS does not run
    assert errors(supply) == [-113]
    supply.write("NOPE")
    supply.write("*CLS")
    assert errors(supply) == []


def test_reconnect_keeps_instrument_state(sim_bench, clients):
    running = sim_bench("resistor")
    first = clients.open(running.resources["supply"])
    first.write("VOLT 3.5")
    first.query("*OPC?")  # applied before the link closes: writes on separate links are not ordered
    first.close()
    second = clients.open(running.resources["supply"])
    assert parse_number(second.query("VOLT?")) == 3.5
    third = clients.open(running.resources["supply"])  # two connections side by side
    assert parse_number(third.query("VOLT?")) == 3.5


def test_meter_without_measure_needs_configure_and_read(sim_bench, clients):
    running = sim_bench("schottky", meter_has_measure=False)
    meter = clients.open(running.resources["meter"], timeout_ms=300)
    with pytest.raises(VisaIOError):
        meter.query("MEAS:VOLT?")
    assert errors(meter) == [-113]
    meter.write("CONF:VOLT 1")
    assert len(parse_numbers(meter.query("READ?"))) == 1


def test_current_meter_in_series(sim_bench, clients):
    running = sim_bench("resistor", current_meter=True, shunt_ohm=0.01)
    assert set(running.resources) == {"supply", "load", "meter", "current_meter"}
    supply = clients.open(running.resources["supply"])
    ammeter = clients.open(running.resources["current_meter"])
    supply.write("VOLT 12;CURR 2;OUTP ON")
    supply.query("*OPC?")
    assert parse_number(ammeter.query("MEAS:CURR? 3")) == pytest.approx(2.0, rel=0.005)
    assert parse_number(ammeter.query("MEAS:VOLT? 0.1")) == pytest.approx(0.02, rel=0.005)
    supply.write("OUTP OFF")


def test_stop_leaves_outputs_off(sim_bench, clients):
    running = sim_bench("pmos")
    supply = clients.open(running.resources["supply"])
    load = clients.open(running.resources["load"])
    supply.write("VOLT 12;OUTP ON")
    load.write("INP ON")
    assert supply.query("OUTP?") == "1" and load.query("INP?") == "1"
    running.stop()
    assert not running.bench.supply.output_on and not running.bench.load.input_on


def test_errors_set_their_event_status_bits(bench3):
    # IEEE 488.2 11.5.1: CME (32) for -1xx, EXE (16) for -2xx; the queue bit (4) of *STB? per SCPI-99
    _, supply, _, _ = bench3
    supply.query("*ESR?")
    supply.write("NOPE")
    assert parse_int(supply.query("*STB?")) & 4
    assert parse_int(supply.query("*ESR?")) == 32
    supply.write("VOLT 40")
    supply.write("*ESE 16")
    assert parse_int(supply.query("*STB?")) & 32  # event summary: EXE is enabled and set
    assert parse_int(supply.query("*ESR?")) == 16
    supply.write("*CLS")
    assert parse_int(supply.query("*STB?")) == 0
