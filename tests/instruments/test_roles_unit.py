"""Roles over a scripted transport: limits, injection refusal, error queue, mode decoding, safe state order."""

from __future__ import annotations

import math

import pytest

from benchlog.instruments.errors import (
    InstrumentError,
    NonsenseReply,
    ProfileError,
    SafeStateFailed,
    SafetyLimit,
    WrongInstrument,
)
from dataclasses import replace

from benchlog.instruments.profile import load_profile as _load_profile, parse_profile
from benchlog.instruments.roles import MAX_ERROR_READS, Load, Meter, Supply

from .scripted import ScriptedTransport
from .test_profile import SUPPLY

SUPPLY_IDN = "BENCHLOG,SIM-SUPPLY,7,1.0"


def load_profile(name, compound=False):
    """The sim's profile, by default as an instrument that takes one program unit per message
    (these tests pin the message-by-message exchanges; the compound ones are tested below)."""
    return replace(_load_profile(name), compound_queries=compound)


def _supply(replies=None) -> tuple[Supply, ScriptedTransport]:
    t = ScriptedTransport(SUPPLY_IDN, replies)
    s = Supply(t, load_profile("sim-supply"))
    t.sent.clear()
    return s, t


def test_connect_reads_idn_sends_connect_commands_and_checks_queue():
    t = ScriptedTransport(SUPPLY_IDN)
    s = Supply(t, load_profile("sim-supply"))
    assert s.idn.model == "SIM-SUPPLY" and s.idn.serial == "7"
    assert t.sent[0] == "*IDN?"
    assert t.sent[-1] == "SYSTem:ERRor:NEXT?"
    assert "OUTPut:POLarity NORMal" in t.sent


def test_errors_from_before_connect_are_kept_not_blamed():
    t = ScriptedTransport(SUPPLY_IDN)
    t.errors = ['-113,"Undefined header"']
    s = Supply(t, load_profile("sim-supply"))
    assert [e.code for e in s.earlier_errors] == [-113]


def test_wrong_idn_is_refused():
    t = ScriptedTransport("BENCHLOG,SIM-METER,1,1.0")
    with pytest.raises(WrongInstrument) as info:
        Supply(t, load_profile("sim-supply"))
    assert "sim-supply" in info.value.line()


def test_idn_with_wrong_field_count_is_nonsense():
    with pytest.raises(NonsenseReply):
        Supply(ScriptedTransport("just one field"), load_profile("sim-supply"))


def test_profile_of_other_role_is_refused():
    with pytest.raises(ProfileError):
        Load(ScriptedTransport(SUPPLY_IDN), load_profile("sim-supply"))


# Values that must never reach the wire: text (injection), non-finite, out of the profile's range.
BAD_SETPOINTS = ["1;*RST", "1\n*RST", "5", None, True, math.nan, math.inf, -math.inf, 1e300, 30.000001, -0.1, 2**70]


@pytest.mark.parametrize("value", BAD_SETPOINTS, ids=repr)
def test_bad_voltage_refused_before_sending(value):
    s, t = _supply()
    with pytest.raises(SafetyLimit):
        s.set_voltage(value)
    assert t.sent == []


@pytest.mark.parametrize("value", BAD_SETPOINTS[:-3] + [10.5, 1e9], ids=repr)
def test_bad_current_limit_refused_before_sending(value):
    s, t = _supply()
    with pytest.raises(SafetyLimit):
        s.set_current_limit(value)
    assert t.sent == []


def test_good_setpoints_are_sent_exactly():
    s, t = _supply()
    s.set_voltage(12)
    s.set_current_limit(0.125)
    s.set_voltage(30.0)  # the limit itself is allowed
    assert t.sent == ["SOURce:VOLTage 12.0", "SOURce:CURRent 0.125", "SOURce:VOLTage 30.0"]


def test_output_on_drains_queue_first_and_refuses_over_a_rejected_setpoint():
    s, t = _supply()
    s.set_voltage(5.0)
    t.errors = ['-222,"Data out of range"']
    with pytest.raises(InstrumentError) as info:
        s.set_output(True)
    assert info.value.code == -222 and info.value.command == "SOURce:VOLTage 5.0"
    assert "OUTPut:STATe ON" not in t.sent and not s.output_on


def test_check_errors_reports_first_and_counts_the_rest():
    s, t = _supply()
    t.errors = ['-113,"Undefined header"', '-222,"Data out of range"']
    with pytest.raises(InstrumentError) as info:
        s.check_errors(after="VOLT:BOGUS 1")
    e = info.value
    assert (e.code, e.text, e.command, e.more) == (-113, "Undefined header", "VOLT:BOGUS 1", 1)
    s.check_errors()  # the queue is empty now


def test_check_errors_is_bounded_when_queue_never_empties():
    s, t = _supply()
    t.errors = ['-350,"Queue overflow"'] * 1000
    with pytest.raises(InstrumentError):
        s.check_errors()
    assert t.sent.count("SYSTem:ERRor:NEXT?") == MAX_ERROR_READS


def test_nonsense_error_entry():
    s, t = _supply()
    t.errors = ["garbage"]
    with pytest.raises(NonsenseReply):
        s.check_errors()


@pytest.mark.parametrize(
    "register, output_on, expected",
    [("256", True, "CV"), ("1024", True, "CC"), ("+1280", True, "UNKNOWN"), ("0", False, "OFF"),
     ("0", True, "UNKNOWN"), ("257", True, "CV"), ("1.024E+03", True, "CC")],
)
def test_mode_from_status_register_bits(register, output_on, expected):
    # sim-supply: bit 8 (256) = CV, bit 10 (1024) = CC, as in the contract for the simulated bench.
    s, t = _supply({"STATus:OPERation:CONDition?": register})
    s.output_on = output_on
    assert s.mode() == expected


@pytest.mark.parametrize("reply", ["-1", "65536", "abc", "9.9E37", "2.5"])
def test_mode_register_nonsense(reply):
    s, _ = _supply({"STATus:OPERation:CONDition?": reply})
    with pytest.raises(NonsenseReply):
        s.mode()


def test_mode_from_reply_text():
    text_mode = SUPPLY.replace('cv_bit = 8\ncc_bit = 10', 'cv_text = "CV"\ncc_text = "CC"\noff_text = "OFF"')
    profile = parse_profile(text_mode, "text-mode.toml")
    for reply, expected in (('"CV"', "CV"), ("cc", "CC"), ("OFF", "OFF")):
        t = ScriptedTransport("TEST,PSU,1,1", {"STAT:OPER:COND?": reply})
        assert Supply(t, profile).mode() == expected
    t = ScriptedTransport("TEST,PSU,1,1", {"STAT:OPER:COND?": "XX"})
    with pytest.raises(NonsenseReply):
        Supply(t, profile).mode()


def test_readback_nonsense_and_overload():
    s, _ = _supply({"MEASure:VOLTage:DC?": "1.2.3", "MEASure:CURRent:DC?": "9.9E37"})
    with pytest.raises(NonsenseReply) as info:
        s.measure_voltage()
    assert info.value.command == "MEASure:VOLTage:DC?" and info.value.reply == "1.2.3"
    with pytest.raises(NonsenseReply):
        s.measure_current()


def test_polarity_change_refused_while_output_on():
    s, t = _supply()
    s.output_on = True
    with pytest.raises(SafetyLimit):
        s.set_reversed(True)
    assert t.sent == []


def test_safe_state_order_off_first_then_zero():
    s, t = _supply()
    s.safe_state()
    assert t.sent[:3] == ["OUTPut:STATe OFF", "SOURce:VOLTage 0.0", "SOURce:CURRent 0.0"]


def test_safe_state_reopens_a_lost_link_and_still_switches_off():
    s, t = _supply()
    t.fail_writes = {"OUTPut:STATe OFF"}
    s.safe_state()
    assert t.reopened == 1 and "OUTPut:STATe OFF" in t.sent


def test_safe_state_reports_every_failed_step():
    s, t = _supply()
    t.lost = True
    t.reopen = lambda: (_ for _ in ()).throw(ConnectionError("still down"))  # type: ignore[method-assign]
    with pytest.raises(SafeStateFailed) as info:
        s.safe_state()
    steps = [step for _, step, _ in info.value.failures]
    assert steps == ["output off", "voltage to 0", "current limit to 0", "error queue after safe state"]


METER_IDN = "BENCHLOG,SIM-METER,3,1.0"


def _meter(replies=None, profile="sim-meter-no-measure") -> tuple[Meter, ScriptedTransport]:
    t = ScriptedTransport(METER_IDN, replies)
    m = Meter(t, load_profile(profile))
    t.sent.clear()
    return m, t


def test_meter_configure_checks_range_and_nplc():
    m, t = _meter()
    with pytest.raises(SafetyLimit):
        m.configure_voltage(3.0, 1)  # 3 V is not a range of the sim meter
    with pytest.raises(SafetyLimit):
        m.configure_voltage(1.0, 0.001)  # below the NPLC span
    with pytest.raises(SafetyLimit):
        m.configure_voltage("1;*RST", 1)
    assert t.sent == []
    m.configure_voltage(1.0, 10)
    assert t.sent[0] == "CONF:VOLT:DC 1.0;:VOLT:DC:NPLC 10.0"


def test_meter_reads_several_values_with_overload_as_none():
    m, t = _meter({"READ?": "+1.0E-01,+9.9E37,-2.5E-03"})
    m.set_samples(3)
    assert m.read() == (0.1, None, -0.0025)
    m.set_samples(2)
    with pytest.raises(NonsenseReply):
        m.read()  # 3 readings when 2 were asked for


@pytest.mark.parametrize("count", [0, -1, 1001, 2.0, "3", True])
def test_meter_sample_count_refused(count):
    m, t = _meter()
    with pytest.raises(SafetyLimit):
        m.set_samples(count)
    assert t.sent == []


def test_meter_configure_sends_sample_count_again():
    m, t = _meter()
    m.set_samples(5)
    t.sent.clear()
    m.configure_voltage(0.1, 1)
    assert t.sent[:3] == ["CONF:VOLT:DC 0.1;:VOLT:DC:NPLC 1.0", "SYST:ERR?", "SAMP:COUN 5"]


def test_meter_without_measure_form_says_so():
    m, _ = _meter()
    with pytest.raises(ProfileError) as info:
        m.measure_voltage()
    assert "[commands].measure_voltage" in info.value.line()


def test_meter_accuracy_and_range_choice():
    m, _ = _meter()
    assert m.accuracy("dc_voltage", 1.0).reading_pct > 0
    assert m.range_for("dc_voltage", 0.35) == 1.0 and m.range_for("dc_voltage", 500) == 100.0
    with pytest.raises(ProfileError):
        m.accuracy("dc_voltage", 3.0)


def test_load_connect_sets_cc_and_safe_state():
    t = ScriptedTransport("BENCHLOG,SIM-LOAD,1,1.0")
    load = Load(t, load_profile("sim-load"))
    assert "FUNCtion CURRent" in t.sent
    with pytest.raises(SafetyLimit):
        load.set_current(30.5)
    t.sent.clear()
    load.safe_state()
    assert t.sent[:2] == ["INPut OFF", "CURR 0.0"]


def test_sync_asks_the_profile_query_and_wants_one():
    # IEEE 488.2 10.18: *OPC? puts "1" in the output queue once pending operations are complete.
    s, t = _supply({"*OPC?": "1"})
    s.set_current_limit(1.5)
    s.sync()
    assert t.sent[-2:] == ["SOURce:CURRent 1.5", "*OPC?"]
    t.replies["*OPC?"] = "+1"
    s.sync()
    for reply in ("0", "", "ON", "1,1"):
        t.replies["*OPC?"] = reply
        with pytest.raises(NonsenseReply):
            s.sync()
