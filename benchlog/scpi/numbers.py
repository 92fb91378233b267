"""Putting numbers into SCPI commands so that a value can never carry other text with it.

A setpoint comes from a plan file, a profile or a person typing in the UI. If
it were pasted into a command as text, `"1;*RST"` or a newline would become a
second command. Here a value is only ever a finite `int` or `float`, rendered
by us as SCPI decimal numeric data (IEEE 488.2 section 7.7.2, <NRf>): digits,
one decimal point, an `E` exponent — nothing else can come out.
"""

from __future__ import annotations

import math
import numbers
import re
import string

from .errors import ScpiValueError

NUMBER_FORM = re.compile(r"^[+-]?\d+(\.\d+)?(E[+-]?\d+)?$")

# The largest magnitude we send. 9.9E37 is the SCPI "overload / not a number"
# value in replies; a command never needs a number that large.
MAX_MAGNITUDE = 9.9e37

_FIELD = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")


def _is_plain_number(value: object) -> bool:
    if isinstance(value, bool):
        return False
    type_name = type(value).__name__
    if type_name in ("bool_", "bool"):  # numpy.bool_ is not a number here either
        return False
    return isinstance(value, numbers.Real) and not isinstance(value, str)


def format_number(value: object, *, lo: float | None = None, hi: float | None = None, name: str = "value") -> str:
    """Render a finite real number as SCPI numeric text, checked against [lo, hi].

    Floats are written with Python's shortest round-trip digits (`repr`), so
    the instrument receives exactly the value asked for; integers as digits.
    Anything else (bool, str, NaN, infinity, out of range) raises ScpiValueError.
    """
    if not _is_plain_number(value):
        raise ScpiValueError(f"{name} must be a number, got {type(value).__name__} {value!r:.40}")
    if isinstance(value, numbers.Integral):
        number = int(value)
        if abs(number) >= MAX_MAGNITUDE:
            raise ScpiValueError(f"{name} {number} is too large for an instrument")
        _check_range(float(number), lo, hi, name)
        text = str(number)
    else:
        number_f = float(value)  # type: ignore[arg-type]
        if not math.isfinite(number_f):
            raise ScpiValueError(f"{name} must be finite, got {number_f}")
        if abs(number_f) >= MAX_MAGNITUDE:
            raise ScpiValueError(f"{name} {number_f!r} is too large for an instrument")
        _check_range(number_f, lo, hi, name)
        text = _float_text(number_f)
    if not NUMBER_FORM.match(text):  # guard: the rendering above can only produce this form
        raise ScpiValueError(f"{name} rendered as {text!r}, which is not SCPI numeric data")
    return text


def _check_range(number: float, lo: float | None, hi: float | None, name: str) -> None:
    if lo is not None and number < lo:
        raise ScpiValueError(f"{name} {number:g} is below the lowest allowed {lo:g}")
    if hi is not None and number > hi:
        raise ScpiValueError(f"{name} {number:g} is above the highest allowed {hi:g}")


def _float_text(number: float) -> str:
    text = repr(number)  # shortest digits that read back to the same float, e.g. '1e-05', '12.5'
    mantissa, _, exponent = text.lower().partition("e")
    if "." not in mantissa:
        mantissa += ".0"
    if exponent:
        sign = "-" if exponent.startswith("-") else "+"
        return f"{mantissa}E{sign}{exponent.lstrip('+-')}"
    return mantissa


def fill_template(template: str, **values: float) -> str:
    """Fill a command template such as ``"VOLT {voltage_v}"`` with numbers only.

    Each `{name}` placeholder is replaced by `format_number(values[name])`. A
    placeholder without a value, a format spec or conversion (`{v:.3f}`,
    `{v!r}`), attribute or index access, or a non-number value raises
    ScpiValueError. Values the template does not use are ignored, so one call
    site can serve profiles whose command takes fewer parameters. The result
    contains `;` or a newline only if the template itself does.
    """
    if not isinstance(template, str):
        raise ScpiValueError(f"command template must be text, got {type(template).__name__}")
    pieces: list[str] = []
    try:
        parsed = list(string.Formatter().parse(template))
    except ValueError as exc:
        raise ScpiValueError(f"command template {template!r} is malformed: {exc}") from None
    for literal, field, spec, conversion in parsed:
        pieces.append(literal)
        if field is None:
            continue
        if not _FIELD.match(field):
            raise ScpiValueError(f"command template {template!r}: placeholder {{{field}}} is not a plain name")
        if spec or conversion:
            raise ScpiValueError(
                f"command template {template!r}: placeholder {{{field}}} must not carry a format; "
                "numbers are always written in full"
            )
        if field not in values:
            raise ScpiValueError(f"command template {template!r}: no value for placeholder {{{field}}}")
        pieces.append(format_number(values[field], name=field))
    return "".join(pieces)
