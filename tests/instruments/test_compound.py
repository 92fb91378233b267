"""Compound messages (a profile's [link].compound_queries) over a scripted transport.

References: IEEE 488.2 7.3 / 8.4.1 (program message units joined by ';', one response
message with ';'-separated units) and SCPI-99 vol. 1 6.2.4 (a header after ';' without a
leading ':' continues the previous path), checked with our own message splitter.
"""

from __future__ import annotations

import pytest

from benchlog.instruments.errors import NonsenseReply
from benchlog.instruments.profile import load_profile
from benchlog.instruments.roles import Load, Meter, Supply
from benchlog.scpi.errors import ScpiSyntaxError
from benchlog.scpi.messages import join_units, split_message, split_response

from .scripted import ScriptedTransport


def test_joined_units_keep_their_absolute_paths():
    message = join_units(["SOURce:CURRent 1.5", "*OPC?", "MEASure:VOLTage:DC?"])
    assert message == "SOURce:CURRent 1.5;*OPC?;:MEASure:VOLTage:DC?"
    assert [u.header.upper() for u in split_message(message)] == ["SOURCE:CURRENT", "*OPC", "MEASURE:VOLTAGE:DC"]


def test_response_units_split_outside_quotes_and_count_checked():
    assert split_response('+256;+1.2E+01;"a;b"', 3) == ["+256", "+1.2E+01", '"a;b"']
    with pytest.raises(ScpiSyntaxError):
        split_response("+256", 2)


def _supply(replies):
    t = ScriptedTransport("BENCHLOG,SIM-SUPPLY,7,1.0", replies)
    s = Supply(t, load_profile("sim-supply"))
    assert s.profile.compound_queries
    t.sent.clear()
    return s, t


def test_setpoint_rides_with_the_sync_in_one_message():
    s, t = _supply({"SOURce:CURRent 0.5;*OPC?": "1"})
    s.set_current_limit(0.5)
    assert t.sent == []  # held until the next message
    s.sync()
    assert t.sent == ["SOURce:CURRent 0.5;*OPC?"]


def test_read_back_is_one_query_and_parsed_in_order():
    s, t = _supply({"STATus:OPERation:CONDition?;:MEASure:CURRent:DC?;:MEASure:VOLTage:DC?": "1024;+1.5E+00;+3.0E-01"})
    s.output_on = True
    assert s.read_back(current=True, voltage=True) == ("CC", 1.5, 0.3)  # bit 10 = CC in the sim profile
    assert len(t.sent) == 1


def test_a_short_compound_reply_is_nonsense_not_a_guess():
    s, t = _supply({"STATus:OPERation:CONDition?;:MEASure:VOLTage:DC?": "256"})
    with pytest.raises(NonsenseReply):
        s.read_back(voltage=True)


def test_a_held_setpoint_is_dropped_when_the_safe_state_begins():
    s, t = _supply({})
    s.set_current_limit(2.0)
    s.safe_prepare()
    s.safe_off()
    assert not any("SOURce:CURRent 2" in m for m in t.sent)
    assert "OUTPut:STATe OFF" in t.sent


def test_output_on_sends_a_held_setpoint_with_the_error_check_first():
    s, t = _supply({"SOURce:CURRent 1.0;:SYSTem:ERRor:NEXT?": '+0,"No error"'})
    s.set_current_limit(1.0)
    s.set_output(True)
    assert t.sent[0] == "SOURce:CURRent 1.0;:SYSTem:ERRor:NEXT?"
    assert t.sent.index("OUTPut:STATe ON") > 0


def test_triggered_read_is_one_message():
    t = ScriptedTransport("BENCHLOG,SIM-METER,3,1.0", {"INITiate;:FETCh?": "+1.0E-02"})
    m = Meter(t, load_profile("sim-meter"))
    t.sent.clear()
    assert m.read() == (0.01,)
    assert t.sent == ["INITiate;:FETCh?"]


def test_load_setpoint_and_sync():
    t = ScriptedTransport("BENCHLOG,SIM-LOAD,3,1.0", {"CURR 0.25;*OPC?": "1"})
    load = Load(t, load_profile("sim-load"))
    t.sent.clear()
    load.set_current(0.25)
    load.sync()
    assert t.sent == ["CURR 0.25;*OPC?"]
