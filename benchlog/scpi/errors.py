"""Errors raised by the SCPI text layer.

    ScpiError (ValueError)
     +-- ScpiValueError    a value that cannot be put into a command (NaN, out of range, a string ...)
     +-- ScpiReplyError    a reply that is not what was asked for (not a number, wrong field count ...)
     +-- ScpiSyntaxError   a program message that cannot be split (unterminated string, bad header);
                           carries the SCPI error `code` a device reports for it
"""

from __future__ import annotations


class ScpiError(ValueError):
    """Any fault in SCPI text, built or parsed."""


class ScpiValueError(ScpiError):
    """A value that must not go into a command as given."""


class ScpiReplyError(ScpiError):
    """A reply that does not have the form the query promised."""

    def __init__(self, message: str, reply: str = "") -> None:
        self.reply = reply
        super().__init__(message)


class ScpiSyntaxError(ScpiError):
    """A program message a device would reject while parsing; `code` is the SCPI error number."""

    def __init__(self, message: str, code: int = -102) -> None:
        self.code = code
        super().__init__(message)
