"""Reading instrument replies: numbers, comma lists, booleans, `*IDN?` and `SYSTem:ERRor?` entries.

A reply that does not have the promised form raises ScpiReplyError, never a
bare ValueError or IndexError, so the instrument layer can name the command
and the reply in one clear message.

Overload: SCPI-99 vol. 1 ch. 7.2.1 uses +9.9E37 for "infinity" / overload,
-9.9E37 for negative infinity and 9.91E37 for "not a number". Any |x| >= 9.9E37
means "no reading" (None); the threshold also catches 9.9099995E37, the value a
32-bit float round trip makes of 9.91E37.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from .errors import ScpiReplyError

OVERLOAD = 9.9e37

# IEEE 488.2 <NR1>/<NR2>/<NR3> numeric response data (section 8.7), leniently
# with a lower-case e and leading/trailing blanks.
_NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$")
_INTEGER = re.compile(r"^[+-]?\d+$")
# Some devices answer the special values as words (SCPI-99 INFinity / NINFinity / NAN).
_SPECIAL_WORDS = {"NAN", "INF", "+INF", "-INF", "INFINITY", "NINF", "NINFINITY", "-INFINITY", "+INFINITY"}


def _short(text: str) -> str:
    return text if len(text) <= 60 else text[:57] + "..."


def parse_number(text: str) -> float | None:
    """One numeric reply as a float, or None for an overload / not-a-number value."""
    if not isinstance(text, str):
        raise ScpiReplyError(f"reply is {type(text).__name__}, not text", repr(text))
    body = text.strip()
    if body.upper() in _SPECIAL_WORDS:
        return None
    if not _NUMBER.match(body):
        raise ScpiReplyError(f"reply {_short(body)!r} is not a number", text)
    value = float(body)
    if not math.isfinite(value) or abs(value) >= OVERLOAD:
        return None
    return value


def parse_numbers(text: str) -> tuple[float | None, ...]:
    """A comma-separated list of numbers (several readings), each as in `parse_number`."""
    if not isinstance(text, str):
        raise ScpiReplyError(f"reply is {type(text).__name__}, not text", repr(text))
    body = text.strip()
    if not body:
        raise ScpiReplyError("reply is empty, expected one or more numbers", text)
    values = []
    for index, item in enumerate(body.split(",")):
        try:
            values.append(parse_number(item))
        except ScpiReplyError:
            raise ScpiReplyError(f"item {index + 1} of reply {_short(body)!r} is not a number", text) from None
    return tuple(values)


def parse_int(text: str) -> int:
    """An integer reply (a status register, a count); `+2.56E+02` is accepted if it is whole."""
    if not isinstance(text, str):
        raise ScpiReplyError(f"reply is {type(text).__name__}, not text", repr(text))
    body = text.strip()
    if _INTEGER.match(body):
        return int(body)
    value = parse_number(body)
    if value is None or value != int(value):
        raise ScpiReplyError(f"reply {_short(body)!r} is not a whole number", text)
    return int(value)


def parse_bool(text: str) -> bool:
    """A boolean reply: 1/0 (also +1/+0) or ON/OFF."""
    if not isinstance(text, str):
        raise ScpiReplyError(f"reply is {type(text).__name__}, not text", repr(text))
    body = text.strip().upper()
    if body in ("1", "+1", "ON"):
        return True
    if body in ("0", "+0", "-0", "OFF"):
        return False
    raise ScpiReplyError(f"reply {_short(text.strip())!r} is not 1, 0, ON or OFF", text)


@dataclass(frozen=True)
class Idn:
    """The four `*IDN?` fields (IEEE 488.2 section 10.14)."""

    manufacturer: str
    model: str
    serial: str
    firmware: str

    def __str__(self) -> str:
        return f"{self.manufacturer},{self.model},{self.serial},{self.firmware}"


def parse_idn(text: str) -> Idn:
    """Split an `*IDN?` reply into its four comma-separated fields ("0" = no serial)."""
    if not isinstance(text, str):
        raise ScpiReplyError(f"reply is {type(text).__name__}, not text", repr(text))
    body = text.strip()
    fields = [f.strip() for f in body.split(",")]
    if len(fields) != 4:
        raise ScpiReplyError(
            f"*IDN? reply {_short(body)!r} has {len(fields)} fields, expected 4 "
            "(manufacturer,model,serial,firmware)",
            text,
        )
    if not fields[0] or not fields[1]:
        raise ScpiReplyError(f"*IDN? reply {_short(body)!r} has an empty manufacturer or model field", text)
    if any(not ch.isprintable() for ch in body):
        raise ScpiReplyError(f"*IDN? reply {_short(body)!r} contains control characters", text)
    return Idn(*fields)


@dataclass(frozen=True)
class ErrorEntry:
    """One `SYSTem:ERRor?` entry: the SCPI code and its text (with any device detail)."""

    code: int
    text: str

    @property
    def is_error(self) -> bool:
        return self.code != 0

    def __str__(self) -> str:
        return f"{self.code:+d},\"{self.text}\""


_ERROR_ENTRY = re.compile(r'^([+-]?\d+)\s*,\s*(.*)$', re.DOTALL)


def parse_error_entry(text: str) -> ErrorEntry:
    """Parse `+0,"No error"` or `-113,"Undefined header"` (SCPI-99 vol. 2 21.8).

    The text is normally a quoted string with doubled inner quotes; an unquoted
    text is accepted as it stands, since some devices send it that way.
    """
    if not isinstance(text, str):
        raise ScpiReplyError(f"reply is {type(text).__name__}, not text", repr(text))
    body = text.strip()
    match = _ERROR_ENTRY.match(body)
    if not match:
        raise ScpiReplyError(f"error-queue reply {_short(body)!r} is not <code>,\"<text>\"", text)
    code = int(match.group(1))
    if not -32768 <= code <= 32767:  # SCPI-99 21.8.2: error numbers are 16-bit signed integers
        raise ScpiReplyError(f"error-queue reply {_short(body)!r} has code {code} outside -32768..32767", text)
    raw = match.group(2).strip()
    if raw.startswith('"'):
        if len(raw) < 2 or not raw.endswith('"'):
            raise ScpiReplyError(f"error-queue reply {_short(body)!r} has an unterminated quoted text", text)
        inner = raw[1:-1]
        if '"' in inner.replace('""', ""):
            raise ScpiReplyError(f"error-queue reply {_short(body)!r} has a stray quote in its text", text)
        message = inner.replace('""', '"')
    else:
        message = raw
    return ErrorEntry(code, message)
