"""The meter's optional temperature function: profile validation and the role's reading checks."""

from __future__ import annotations

import pytest

from benchlog.instruments.errors import NonsenseReply, ProfileError
from benchlog.instruments.profile import load_profile, parse_profile
from benchlog.instruments.roles import Meter

from .scripted import ScriptedTransport
from .test_profile import METER, _edit

IDN = "BENCHLOG,SIM-CASE-METER,T1,1.0"


def test_temperature_operations_are_optional_and_checked():
    plain = parse_profile(METER, "meter.toml")
    assert not plain.has("measure_temperature")
    with_probe = parse_profile(_edit(METER, 'read = "READ?"', 'read = "READ?"\nmeasure_temperature = "MEAS:TEMP?"\n'
                                            'configure_temperature = "CONF:TEMP FRTD"'), "meter.toml")
    assert with_probe.commands["measure_temperature"] == "MEAS:TEMP?"
    with pytest.raises(ProfileError) as info:  # a measurement that asks nothing
        parse_profile(_edit(METER, 'read = "READ?"', 'read = "READ?"\nmeasure_temperature = "MEAS:TEMP"'), "m.toml")
    assert info.value.where == "[commands].measure_temperature" and "asks nothing" in info.value.line()
    with pytest.raises(ProfileError) as info:  # no placeholders are defined for it
        parse_profile(_edit(METER, 'read = "READ?"', 'read = "READ?"\nconfigure_temperature = "CONF:TEMP {kind}"'),
                      "m.toml")
    assert info.value.where == "[commands].configure_temperature" and "unknown placeholder" in info.value.line()


def _probe(reply: str) -> tuple[Meter, ScriptedTransport]:
    t = ScriptedTransport(IDN, {"MEASure:TEMPerature?": reply})
    return Meter(t, load_profile("sim-case-meter")), t


def test_meter_reads_a_temperature_and_refuses_nonsense():
    m, t = _probe("+2.345E+01")
    m.configure_temperature()
    assert "CONFigure:TEMPerature TCouple,K" in t.sent
    assert m.measure_temperature() == pytest.approx(23.45)
    m, _ = _probe("+9.9E+37")  # the SCPI overload value: no reading
    assert m.measure_temperature() is None
    for nonsense in ("-400", "5.0E+03", "hot"):
        m, _ = _probe(nonsense)
        with pytest.raises(NonsenseReply):
            m.measure_temperature()
