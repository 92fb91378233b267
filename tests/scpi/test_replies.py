"""Reply parsing: numbers, overload values, booleans, *IDN? and SYSTem:ERRor? entries."""

from __future__ import annotations

import pytest
from hypothesis import given, strategies as st

from benchlog.scpi.errors import ScpiReplyError
from benchlog.scpi.replies import (
    OVERLOAD,
    ErrorEntry,
    Idn,
    parse_bool,
    parse_error_entry,
    parse_idn,
    parse_int,
    parse_number,
    parse_numbers,
)


@pytest.mark.parametrize(
    "text, value",
    [("+1.23456789E-01\n", 0.123456789), ("12", 12.0), ("-0.5", -0.5), (".5", 0.5), ("1e3", 1000.0), (" 3.0 ", 3.0)],
)
def test_parse_number(text, value):
    assert parse_number(text) == value


# SCPI-99 vol. 1 7.2.1: +9.9E37 overload/+infinity, -9.9E37 -infinity, 9.91E37 not-a-number;
# 9.9099995E37 is 9.91E37 after a 32-bit float round trip. All mean "no reading".
@pytest.mark.parametrize("text", ["+9.9E37", "-9.9E37", "9.91E37", "9.9099995E37", "+9.90000000E+37", "1E400", "NAN"])
def test_overload_values_are_no_reading(text):
    assert parse_number(text) is None


def test_just_below_overload_is_a_reading():
    assert parse_number("9.8E37") == 9.8e37
    assert OVERLOAD == 9.9e37


@pytest.mark.parametrize("text", ["", "abc", "1.2.3", "1;*RST", "0x10", "1_000", "12 V", "nan1", "--1", "1e", "inf1"])
def test_parse_number_rejects_nonsense(text):
    with pytest.raises(ScpiReplyError):
        parse_number(text)


def test_parse_numbers_comma_list_with_overload():
    assert parse_numbers("+1.0E-01,+2.0E-01,+9.9E37") == (0.1, 0.2, None)
    assert parse_numbers("5") == (5.0,)
    with pytest.raises(ScpiReplyError, match="item 2"):
        parse_numbers("1,x,3")
    with pytest.raises(ScpiReplyError):
        parse_numbers("")


def test_parse_bool_and_int():
    assert parse_bool("1") and parse_bool("ON\n") and parse_bool("+1")
    assert not parse_bool("0") and not parse_bool("off")
    with pytest.raises(ScpiReplyError):
        parse_bool("2")
    assert parse_int("+256") == 256 and parse_int("+1.024E+03") == 1024
    with pytest.raises(ScpiReplyError):
        parse_int("1.5")


def test_parse_idn_four_fields():
    # IEEE 488.2 10.14: manufacturer, model, serial ("0" if none), firmware.
    assert parse_idn("ACME,X1,0,1.2") == Idn("ACME", "X1", "0", "1.2")
    assert parse_idn("BENCHLOG,SIM-SUPPLY,S000001,0.1.0\n").model == "SIM-SUPPLY"


@pytest.mark.parametrize("text", ["ACME,X1,0", "ACME,X1,0,1.2,extra", "", ",X1,0,1", "ACME,X1,0,1\x07"])
def test_parse_idn_rejects_wrong_shapes(text):
    with pytest.raises(ScpiReplyError):
        parse_idn(text)


def test_parse_error_entry():
    assert parse_error_entry('+0,"No error"') == ErrorEntry(0, "No error")
    entry = parse_error_entry('-113,"Undefined header"\n')
    assert entry == ErrorEntry(-113, "Undefined header") and entry.is_error
    assert parse_error_entry('-222,"Data out of range; VOLT 99 above 30"').text.startswith("Data out of range")
    assert parse_error_entry('-100,"say ""hi"""').text == 'say "hi"'
    assert parse_error_entry("-350,Queue overflow").code == -350  # unquoted text, as some devices send
    assert not parse_error_entry('0,"No error"').is_error


@pytest.mark.parametrize("text", ["", "No error", '"x",1', '-113,"Undefined', '99999,"x"', '-1,"a"b"'])
def test_parse_error_entry_rejects_nonsense(text):
    with pytest.raises(ScpiReplyError):
        parse_error_entry(text)


@given(st.text())
def test_reply_parsers_raise_only_scpi_reply_error(text):
    # Fuzzing (issue 7): any reply text gives a value or ScpiReplyError, never another exception.
    for parse in (parse_number, parse_numbers, parse_idn, parse_error_entry, parse_bool, parse_int):
        try:
            parse(text)
        except ScpiReplyError:
            pass


@given(st.lists(st.one_of(st.floats(allow_nan=False), st.integers(min_value=-10**6, max_value=10**6)), min_size=1, max_size=8))
def test_parse_numbers_reads_what_an_instrument_writes(values):
    text = ",".join(f"{v:+.9E}" for v in values)
    parsed = parse_numbers(text)
    for v, p in zip(values, parsed):
        if abs(float(f"{v:+.9E}")) >= OVERLOAD:
            assert p is None
        else:
            assert p == pytest.approx(float(v), rel=1e-9, abs=0)
