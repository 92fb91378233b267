"""Safe numbers in commands: only finite numbers, in range, rendered as SCPI numeric data."""

from __future__ import annotations

import math
import re

import pytest
from hypothesis import given, strategies as st

from benchlog.scpi.errors import ScpiValueError
from benchlog.scpi.numbers import NUMBER_FORM, fill_template, format_number

# The form a command parameter must take (IEEE 488.2 7.7.2 decimal numeric program data, our subset).
FORM = re.compile(r"^[+-]?\d+(\.\d+)?(E[+-]?\d+)?$")


@pytest.mark.parametrize(
    "value, text",
    [(12, "12"), (12.5, "12.5"), (-0.25, "-0.25"), (1e-05, "1.0E-05"), (1.5e20, "1.5E+20"), (0.1, "0.1")],
)
def test_format_number_renders_scpi_numeric_data(value, text):
    assert format_number(value) == text


@given(st.floats(allow_nan=False, allow_infinity=False, min_value=-9.8e37, max_value=9.8e37))
def test_format_number_round_trips_exactly_and_keeps_the_form(value):
    text = format_number(value)
    assert FORM.match(text) and NUMBER_FORM.match(text)
    assert float(text) == value  # repr digits: the instrument receives exactly the value asked for


@pytest.mark.parametrize("bad", [math.nan, math.inf, -math.inf, True, False, "1", "1;*RST", None, 1e38, [1.0]])
def test_format_number_refuses_what_is_not_a_finite_number(bad):
    with pytest.raises(ScpiValueError):
        format_number(bad)


def test_format_number_enforces_bounds():
    assert format_number(30.0, lo=0, hi=30) == "30.0"
    with pytest.raises(ScpiValueError, match="above"):
        format_number(30.001, lo=0, hi=30, name="voltage_v")
    with pytest.raises(ScpiValueError, match="below"):
        format_number(-1, lo=0)


def test_fill_template_fills_only_numbers():
    assert fill_template("VOLT {voltage_v}", voltage_v=12.0) == "VOLT 12.0"
    assert fill_template("CONF:VOLT:DC {range_v};:VOLT:NPLC {nplc}", range_v=0.1, nplc=10) == (
        "CONF:VOLT:DC 0.1;:VOLT:NPLC 10"
    )
    assert fill_template("OUTP ON") == "OUTP ON"
    # a value the template does not use is ignored (a meter whose CONFigure takes no NPLC)
    assert fill_template("CONF:VOLT {range_v}", range_v=1, nplc=10) == "CONF:VOLT 1"


@pytest.mark.parametrize(
    "template, values",
    [
        ("VOLT {voltage_v}", {}),  # missing value
        ("VOLT {voltage_v}", {"voltage_v": "1;*RST"}),  # text smuggled in
        ("VOLT {voltage_v}", {"voltage_v": "1\nOUTP ON"}),
        ("VOLT {voltage_v:.3f}", {"voltage_v": 1.0}),  # format spec
        ("VOLT {voltage_v!r}", {"voltage_v": 1.0}),  # conversion
        ("VOLT {voltage_v.real}", {"voltage_v": 1.0}),  # attribute access
        ("VOLT {0}", {"voltage_v": 1.0}),  # positional
        ("VOLT {voltage_v", {"voltage_v": 1.0}),  # malformed
        ("VOLT {voltage_v}", {"voltage_v": math.nan}),
    ],
)
def test_fill_template_refuses(template, values):
    with pytest.raises(ScpiValueError):
        fill_template(template, **values)


@given(st.one_of(st.floats(), st.integers(), st.text(), st.booleans(), st.none()))
def test_fill_template_output_never_gains_a_separator(value):
    # Security (issue 7): whatever a plan, profile or UI hands in, the command stays one command.
    try:
        text = fill_template("VOLT {voltage_v}", voltage_v=value)
    except ScpiValueError:
        return
    assert ";" not in text and "\n" not in text and "\r" not in text
    assert FORM.match(text[len("VOLT "):])


@given(st.text())
def test_fill_template_on_any_template_raises_only_scpi_value_error(template):
    try:
        text = fill_template(template, x=1.0)
    except ScpiValueError:
        return
    # whatever came through has no separator that the template did not already hold
    assert text.count(";") <= template.count(";") and text.count("\n") <= template.count("\n")
