"""Header matching per SCPI-99 vol. 1 ch. 6: short form = upper-case part, optional [nodes], suffix 1."""

from __future__ import annotations

import pytest
from hypothesis import given, strategies as st

from benchlog.scpi.errors import ScpiError
from benchlog.scpi.headers import HeaderPattern, keyword_matches, matches

VOLTAGE = "[SOURce:]VOLTage[:LEVel][:IMMediate][:AMPLitude]"


@pytest.mark.parametrize(
    "header",
    ["VOLT", "VOLTAGE", "volt", "Voltage", "SOUR:VOLT", "SOURCE:VOLTAGE", ":SOUR:VOLT", "VOLT:LEV",
     "VOLT:LEV:IMM:AMPL", "SOUR:VOLT:LEVEL:IMMEDIATE:AMPLITUDE", "VOLT:AMPL", "SOUR1:VOLT", "VOLT?"],
)
def test_voltage_pattern_accepts_short_long_and_optional_nodes(header):
    # SCPI-99 6.2.1: a mnemonic is accepted in its short or its long form only.
    assert matches(VOLTAGE, header)


@pytest.mark.parametrize(
    "header",
    ["VOL", "VOLTA", "VOLTAG", "VOLTAGES", "SOU:VOLT", "VOLT:IMM:LEV", "LEV", "SOUR", "VOLT:", "SOUR2:VOLT", ""],
)
def test_voltage_pattern_refuses_partial_forms_and_wrong_order(header):
    assert not matches(VOLTAGE, header)


def test_query_only_pattern_needs_the_question_mark():
    pattern = "MEASure[:SCALar]:VOLTage[:DC]?"
    assert matches(pattern, "MEAS:VOLT?") and matches(pattern, "measure:scalar:voltage:dc?")
    assert matches(pattern, "MEAS:VOLT:DC?") and not matches(pattern, "MEAS:VOLT")
    assert not matches(pattern, "MEAS:DC?")


def test_leading_optional_nodes_and_common_commands():
    assert matches("[SENSe:][VOLTage:]NPLCycles", "NPLC")
    assert matches("[SENSe:]VOLTage[:DC]:NPLCycles", "SENS:VOLT:DC:NPLC")
    assert matches("*IDN?", "*idn?") and not matches("*IDN?", "*IDNX?")
    assert matches("OUTPut[:STATe]", "OUTP1:STAT") and not matches("OUTPut[:STATe]", "OUTP2")


def test_parse_exposes_nodes():
    pattern = HeaderPattern.parse(VOLTAGE)
    assert [(n.long, n.short, n.optional) for n in pattern.nodes][:2] == [("SOURce", "SOUR", True), ("VOLTage", "VOLT", False)]
    assert not pattern.query_only


@pytest.mark.parametrize("bad", ["", "[SOURce:]", "VOLT[age", "voltAGE", "[A:B]C", "VOLT$"])
def test_bad_patterns_are_refused(bad):
    with pytest.raises(ScpiError):
        HeaderPattern.parse(bad)


def test_keyword_matches_character_data():
    assert keyword_matches("INVerted", "inv") and keyword_matches("INVerted", "INVERTED")
    assert not keyword_matches("INVerted", "INVE")


@given(st.text(max_size=40))
def test_matching_any_text_is_a_plain_answer(header):
    assert matches(VOLTAGE, header) in (True, False)
